package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/protobuf/types/known/timestamppb"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
	"github.com/halovet/halovet/store"
)

func init() {
	verbGroups["credentials"] = "issue, list and revoke the credentials callers present"
	verbGroups["audit"] = "read and verify the audit trail"
	addVerb("credentials issue", "issue a credential and print its secret once", credIssueUsage, defineCredIssue)
	addVerb("credentials list", "list the credentials (never their secrets)", credListUsage, defineCredList)
	addVerb("credentials revoke", "revoke a credential", credRevokeUsage, defineCredRevoke)
	addVerb("credentials new-secret", "print a new secret for --bootstrap-credential-file", credNewSecretUsage, defineCredNewSecret)
	addVerb("audit list", "list audit events, filtered", auditListUsage, defineAuditList)
	addVerb("audit verify", "check the audit trail's hash chain", auditVerifyUsage, defineAuditVerify)
}

const credIssueUsage = `issue --role ROLE --name NAME [--company ID] [--expires DATE] [flags]

Issues a credential and prints its secret on standard output, once: only its SHA-256 is
stored, so a lost secret is revoked and issued again. What was issued goes to standard
error. Roles: officer (everything), customs (check and record any company's shipments,
read licences and balances), trader (one company's shipments, licences and balances:
--company), auditor (read everything, the audit trail included; change nothing),
reader (the catalogue and the party settings).

Through the server this needs an officer's --credential-file. With --database-url it
works on the database directly, to bootstrap a fresh install: the first officer's
credential, audited as "local". --secret-file writes the secret to a new file (mode
0600) instead of standard output.

  halovet credentials issue --database-url "$URL" --role officer --name officer.a.ndiaye --secret-file officer.cred
  halovet credentials issue --credential-file officer.cred --role trader --company XA-1001 --name xa1001.erp --expires 2027-06-30`

func defineCredIssue(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	dbURL := fs.String("database-url", "", "issue straight in this database instead of through --server (bootstrap)")
	role := fs.String("role", "", "officer, customs, trader, auditor or reader (required)")
	name := fs.String("name", "", "the person or system the credential is for, as the audit trail will name it (required)")
	company := fs.String("company", "", "the company a trader's credential is bound to (traders only)")
	expires := fs.String("expires", "", "last day the credential is accepted, YYYY-MM-DD (UTC, to the end of the day) or an RFC 3339 time; empty: no expiry")
	secretFile := fs.String("secret-file", "", "write the secret to this new file (mode 0600) instead of standard output")
	secretFrom := fs.String("secret-from-file", "", "with --database-url: store the secret in this file (from 'halovet credentials new-secret') instead of making one, and print nothing of it; running again with the same file changes nothing (a Kubernetes bootstrap Job)")
	output := fs.String("output", "text", "what is printed to standard error about the credential: text or json")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		if *role == "" || *name == "" {
			return usageErr("--role and --name are required (see --help)")
		}
		r, err := access.ParseRole(*role)
		if err != nil {
			return usageErr("--role: %v", err)
		}
		req := &halovetv1.IssueCredentialRequest{Name: *name, Role: wireterms.RoleToWire(r), CompanyId: *company}
		if *expires != "" {
			t, err := parseExpiry(*expires)
			if err != nil {
				return err
			}
			req.ExpiresAt = timestamppb.New(t)
		}
		if *output != "text" && *output != "json" {
			return usageErr("--output %q: use text or json", *output)
		}
		var resp *halovetv1.IssueCredentialResponse
		if *secretFrom != "" {
			if *dbURL == "" || *secretFile != "" {
				return usageErr("--secret-from-file goes with --database-url, and not with --secret-file")
			}
			c, created, err := importDirect(ctx, *dbURL, *secretFrom, req)
			if err != nil {
				return err
			}
			what := "stored"
			if !created {
				what = "already stored"
			}
			fmt.Fprintf(os.Stderr, "credential %s %s for %s (role %s%s)%s\n", c.GetCredentialId(), what, c.GetName(), wireterms.RoleWord(c.GetRole()),
				ifSet(", company ", c.GetCompanyId()), ifSet(", revoked ", tsText(c.GetRevokedAt())))
			return nil
		}
		if *dbURL != "" {
			resp, err = issueDirect(ctx, *dbURL, req)
		} else {
			err = withConn(&cf, func(conn *grpc.ClientConn) error {
				resp, err = halovetv1.NewAccessServiceClient(conn).IssueCredential(ctx, req)
				return err
			})
		}
		if err != nil {
			return err
		}
		if *secretFile != "" {
			f, err := os.OpenFile(*secretFile, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
			if err != nil {
				return fmt.Errorf("--secret-file: %w (the credential %s was issued: revoke it, or keep this run's secret)", err, resp.GetCredential().GetCredentialId())
			}
			if _, err := fmt.Fprintln(f, resp.GetSecret()); err != nil {
				f.Close()
				return err
			}
			if err := f.Close(); err != nil {
				return err
			}
		} else {
			fmt.Println(resp.GetSecret())
		}
		if *output == "json" {
			return wirejson.Doc(os.Stderr, resp.GetCredential())
		}
		c := resp.GetCredential()
		fmt.Fprintf(os.Stderr, "issued credential %s to %s (role %s%s)%s; the secret is shown this once\n",
			c.GetCredentialId(), c.GetName(), wireterms.RoleWord(c.GetRole()), ifSet(", company ", c.GetCompanyId()), ifSet(", expires ", tsText(c.GetExpiresAt())))
		return nil
	}
}

// parseExpiry reads --expires: a day (accepted to its end, UTC) or an RFC 3339 time.
func parseExpiry(s string) (time.Time, error) {
	if d, err := time.Parse("2006-01-02", s); err == nil {
		return d.Add(24*time.Hour - time.Second), nil
	}
	if t, err := time.Parse(time.RFC3339, s); err == nil {
		return t, nil
	}
	return time.Time{}, usageErr("--expires %q: give a day YYYY-MM-DD or an RFC 3339 time", s)
}

func ifSet(prefix, v string) string {
	if v == "" {
		return ""
	}
	return prefix + v
}

func tsText(t *timestamppb.Timestamp) string {
	if t == nil {
		return ""
	}
	return t.AsTime().UTC().Format(time.RFC3339)
}

// withConn dials, runs fn and closes.
func withConn(cf *clientFlags, fn func(*grpc.ClientConn) error) error {
	conn, err := cf.dial()
	if err != nil {
		return err
	}
	defer conn.Close()
	return fn(conn)
}

// openDirect opens the database for a verb working on it directly; its schema must be
// at this binary's.
func openDirect(ctx context.Context, url string) (*store.Store, error) {
	st, err := store.Open(ctx, url)
	if err != nil {
		return nil, fmt.Errorf("--database-url: %w", err)
	}
	ss, err := st.SchemaState(ctx)
	if err != nil {
		st.Close()
		return nil, fmt.Errorf("--database-url: reading the schema version: %w", err)
	}
	if ok, why := ss.Serves(); !ok {
		st.Close()
		return nil, errors.New(why)
	}
	return st, nil
}

func issueDirect(ctx context.Context, url string, req *halovetv1.IssueCredentialRequest) (*halovetv1.IssueCredentialResponse, error) {
	st, err := openDirect(ctx, url)
	if err != nil {
		return nil, err
	}
	defer st.Close()
	nc := store.NewCredential{Name: req.GetName(), Role: roleOf(req.GetRole()), CompanyID: req.GetCompanyId()}
	if req.ExpiresAt != nil {
		nc.ExpiresAt = req.GetExpiresAt().AsTime()
		if !nc.ExpiresAt.After(time.Now()) {
			return nil, usageErr("--expires is not in the future")
		}
	}
	c, secret, err := st.IssueCredential(ctx, nc)
	if errors.Is(err, store.ErrCredentialInput) {
		return nil, usageErr("%v", err)
	}
	if errors.Is(err, store.ErrNotFound) {
		return nil, usageErr("--company %q is not registered", req.GetCompanyId())
	}
	if err != nil {
		return nil, err
	}
	return &halovetv1.IssueCredentialResponse{Credential: storedToProto(c), Secret: secret}, nil
}

// importDirect stores a secret made elsewhere (credentials new-secret) as a credential.
func importDirect(ctx context.Context, url, file string, req *halovetv1.IssueCredentialRequest) (*halovetv1.Credential, bool, error) {
	b, err := os.ReadFile(file)
	if err != nil {
		return nil, false, usageErr("--secret-from-file: %v", err)
	}
	secret := strings.TrimSpace(string(b))
	id, err := access.ParseSecret(secret)
	if err != nil {
		return nil, false, usageErr("--secret-from-file %s: %v", file, err)
	}
	if req.ExpiresAt != nil {
		return nil, false, usageErr("--expires does not go with --secret-from-file; revoke the bootstrap credential once officers have their own")
	}
	st, err := openDirect(ctx, url)
	if err != nil {
		return nil, false, err
	}
	defer st.Close()
	c, created, err := st.EnsureCredential(ctx, id, access.HashSecret(secret),
		store.NewCredential{Name: req.GetName(), Role: roleOf(req.GetRole()), CompanyID: req.GetCompanyId()})
	if errors.Is(err, store.ErrCredentialInput) {
		return nil, false, usageErr("%v", err)
	}
	if err != nil {
		return nil, false, err
	}
	return storedToProto(c), created, nil
}

// roleOf is the role of a wire value; a value no .proto declares reads as no role, which the
// store refuses naming the roles it accepts.
func roleOf(w halovetv1.Role) access.Role {
	r, _ := wireterms.RoleFromWire(w)
	return r
}

func storedToProto(c store.StoredCredential) *halovetv1.Credential {
	p := &halovetv1.Credential{CredentialId: c.ID, Name: c.Name, Role: wireterms.RoleToWire(c.Role), CompanyId: c.CompanyID,
		CreatedAt: timestamppb.New(c.CreatedAt), CreatedBy: c.CreatedBy, RevokedBy: c.RevokedBy}
	if !c.ExpiresAt.IsZero() {
		p.ExpiresAt = timestamppb.New(c.ExpiresAt)
	}
	if !c.RevokedAt.IsZero() {
		p.RevokedAt = timestamppb.New(c.RevokedAt)
	}
	return p
}

const credListUsage = `list [flags]

Lists the credentials, newest first: id, name, role, company, when issued and by whom,
expiry, revocation. Secrets are never shown (only their hashes are stored). Needs an
officer's or an auditor's credential, or --database-url to read the database directly.`

func defineCredList(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	dbURL := fs.String("database-url", "", "read this database directly instead of through --server")
	revoked := fs.Bool("include-revoked", false, "list revoked credentials too")
	output := fs.String("output", "text", "output: text or json")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		if *output != "text" && *output != "json" {
			return usageErr("--output %q: use text or json", *output)
		}
		resp := &halovetv1.ListCredentialsResponse{}
		if *dbURL != "" {
			st, err := openDirect(ctx, *dbURL)
			if err != nil {
				return err
			}
			defer st.Close()
			cs, err := st.ListCredentials(ctx, *revoked)
			if err != nil {
				return err
			}
			for _, c := range cs {
				resp.Credentials = append(resp.Credentials, storedToProto(c))
			}
		} else if err := withConn(&cf, func(conn *grpc.ClientConn) (err error) {
			resp, err = halovetv1.ReadAllPages(ctx, halovetv1.NewAccessServiceClient(conn).ListCredentials,
				&halovetv1.ListCredentialsRequest{IncludeRevoked: *revoked, PageSize: listPageSize}, "credentials")
			return err
		}); err != nil {
			return err
		}
		if *output == "json" {
			return wirejson.Doc(os.Stdout, resp)
		}
		return writeCredentials(os.Stdout, resp.GetCredentials())
	}
}

func writeCredentials(w io.Writer, cs []*halovetv1.Credential) error {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "ID\tNAME\tROLE\tCOMPANY\tISSUED\tBY\tEXPIRES\tREVOKED")
	for _, c := range cs {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", c.GetCredentialId(), c.GetName(), wireterms.RoleWord(c.GetRole()), dash(c.GetCompanyId()),
			tsText(c.GetCreatedAt()), c.GetCreatedBy(), dash(tsText(c.GetExpiresAt())), dash(strings.TrimSpace(tsText(c.GetRevokedAt())+" "+ifSet("by ", c.GetRevokedBy()))))
	}
	fmt.Fprintf(tw, "%d credentials\n", len(cs))
	return tw.Flush()
}

func dash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

const credRevokeUsage = `revoke CREDENTIAL_ID [--reason TEXT] [flags]

Revokes a credential: every server refuses it within 2 s (Unauthenticated, saying it
was revoked). Revoking is for good; issue a new credential to replace it. Needs an
officer's credential, or --database-url to work on the database directly (for a lost
or leaked officer secret).

Rotation: issue the new credential, move the holder to it, then revoke the old one.`

func defineCredRevoke(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	dbURL := fs.String("database-url", "", "revoke straight in this database instead of through --server")
	reason := fs.String("reason", "", "why, for the audit trail")
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give one CREDENTIAL_ID, as 'halovet credentials list' shows it")
		}
		if err := access.ValidCredentialID(args[0]); err != nil {
			return usageErr("CREDENTIAL_ID %q: %v", args[0], err)
		}
		var c *halovetv1.Credential
		if *dbURL != "" {
			st, err := openDirect(ctx, *dbURL)
			if err != nil {
				return err
			}
			defer st.Close()
			got, err := st.RevokeCredential(ctx, args[0], *reason)
			if errors.Is(err, store.ErrNotFound) {
				return usageErr("credential %s is not known", args[0])
			}
			if err != nil {
				return err
			}
			c = storedToProto(got)
		} else if err := withConn(&cf, func(conn *grpc.ClientConn) error {
			resp, err := halovetv1.NewAccessServiceClient(conn).RevokeCredential(ctx, &halovetv1.RevokeCredentialRequest{CredentialId: args[0], Reason: *reason})
			c = resp.GetCredential()
			return err
		}); err != nil {
			return err
		}
		fmt.Printf("credential %s (%s, %s) revoked at %s by %s\n", c.GetCredentialId(), c.GetName(), wireterms.RoleWord(c.GetRole()), tsText(c.GetRevokedAt()), c.GetRevokedBy())
		return nil
	}
}

const credNewSecretUsage = `new-secret [--secret-file FILE]

Prints a new credential secret without storing anything: for serve
--bootstrap-credential-file (a Kubernetes Secret, a Compose secret), which stores it as
the officer "bootstrap-officer" when the server starts. Revoke it once real officer
credentials are issued.`

func defineCredNewSecret(fs *pflag.FlagSet) runFunc {
	secretFile := fs.String("secret-file", "", "write the secret to this new file (mode 0600) instead of standard output")
	return func(_ context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		iss, err := access.IssueSecret()
		if err != nil {
			return err
		}
		if *secretFile == "" {
			fmt.Println(iss.Secret)
			return nil
		}
		f, err := os.OpenFile(*secretFile, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
		if err != nil {
			return usageErr("--secret-file: %v", err)
		}
		if _, err := fmt.Fprintln(f, iss.Secret); err != nil {
			f.Close()
			return err
		}
		return f.Close()
	}
}

const auditListUsage = `list [--actor NAME] [--object-type TYPE [--object-key KEY]] [--from TIME] [--to TIME] [flags]

Lists audit events oldest first: when, who (the identity's name and credential id, as
the server established them), what was done to which object, the reason. Object types:
party, company, licence, substance, national_entry, shipments, credential. Times are
YYYY-MM-DD (UTC) or RFC 3339. Needs an officer's or an auditor's credential.`

func defineAuditList(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	actor := fs.String("actor", "", "only this actor's events (the exact name)")
	objType := fs.String("object-type", "", "only events on this kind of object")
	objKey := fs.String("object-key", "", "only events on this object (with --object-type)")
	from := fs.String("from", "", "only events at or after this time")
	to := fs.String("to", "", "only events before this time")
	limit := fs.Int("limit", 1000, "at most this many events; 0: all")
	output := fs.String("output", "text", "output: text or json")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		if *output != "text" && *output != "json" {
			return usageErr("--output %q: use text or json", *output)
		}
		req := &halovetv1.ListAuditEventsRequest{Actor: *actor, ObjectType: *objType, ObjectKey: *objKey, PageSize: 500}
		for _, t := range []struct {
			flag, v string
			dst     **timestamppb.Timestamp
		}{{"--from", *from, &req.FromTime}, {"--to", *to, &req.ToTime}} {
			if t.v == "" {
				continue
			}
			tm, err := time.Parse("2006-01-02", t.v)
			if err != nil {
				if tm, err = time.Parse(time.RFC3339, t.v); err != nil {
					return usageErr("%s %q: give YYYY-MM-DD or an RFC 3339 time", t.flag, t.v)
				}
			}
			*t.dst = timestamppb.New(tm)
		}
		all := &halovetv1.ListAuditEventsResponse{}
		err := withConn(&cf, func(conn *grpc.ClientConn) error {
			c := halovetv1.NewAccessServiceClient(conn)
			for {
				page, err := c.ListAuditEvents(ctx, req)
				if err != nil {
					return err
				}
				all.Events = append(all.Events, page.GetEvents()...)
				if *limit > 0 && len(all.Events) >= *limit {
					all.Events = all.Events[:*limit]
					return nil
				}
				if req.PageToken = page.GetNextPageToken(); req.PageToken == "" {
					return nil
				}
			}
		})
		if err != nil {
			return err
		}
		if *output == "json" {
			return wirejson.Doc(os.Stdout, all)
		}
		return writeAuditEvents(os.Stdout, all.GetEvents())
	}
}

func writeAuditEvents(w io.Writer, es []*halovetv1.AuditEvent) error {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "SEQ\tAT\tACTOR\tCREDENTIAL\tACTION\tOBJECT\tREASON")
	for _, e := range es {
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t%s %s\t%s\n", e.GetSeq(), tsText(e.GetAt()), e.GetActor(), dash(e.GetCredentialId()),
			e.GetAction(), e.GetObjectType(), e.GetObjectKey(), e.GetReason())
	}
	fmt.Fprintf(tw, "%d events\n", len(es))
	return tw.Flush()
}

const auditVerifyUsage = `verify [flags]

Recomputes the audit trail's hash chain (each event's hash covers the previous event's
hash and its own content) and reports every event altered or removed behind the
server's back. Exit code 1 when the chain is broken. Needs an officer's or an auditor's
credential.`

func defineAuditVerify(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		var resp *halovetv1.VerifyAuditChainResponse
		if err := withConn(&cf, func(conn *grpc.ClientConn) (err error) {
			resp, err = halovetv1.NewAccessServiceClient(conn).VerifyAuditChain(ctx, &halovetv1.VerifyAuditChainRequest{})
			return err
		}); err != nil {
			return err
		}
		if resp.GetIntact() {
			fmt.Printf("audit chain intact: %d events\n", resp.GetEventsChecked())
			return nil
		}
		for _, b := range resp.GetBreaks() {
			fmt.Printf("event %d: %s\n", b.GetSeq(), b.GetReason())
		}
		return rejectedErr("audit chain broken: %d problems in %d events", len(resp.GetBreaks()), resp.GetEventsChecked())
	}
}
