package main

import (
	"github.com/spf13/pflag"

	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"text/tabwriter"

	"google.golang.org/grpc"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func init() {
	addVerb("load", "load parties, companies and licences from a JSON file", loadUsage, defineLoad)
	addVerb("licences", "list licences with their quota balances", licencesUsage, defineLicences)
}

const loadUsage = `load [flags] FILE

Loads a registry file into the server: party settings of countries, companies, and
licences with quota lines. The file is a JSON object with arrays "parties",
"companies" and "licences" whose items are the API's Party, Company and Licence
messages in protobuf JSON or halovet's JSON dialect (see testdata/demo/scenario.json). Existing parties and
companies are updated; a licence that exists already is amended. A licence whose
status is SUSPENDED or REVOKED is issued active and then set to that status, so the
audit log shows both steps.`

// registryFile is the layout of a load file.
type registryFile struct {
	Parties   []json.RawMessage `json:"parties"`
	Companies []json.RawMessage `json:"companies"`
	Licences  []json.RawMessage `json:"licences"`
}

func defineLoad(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give exactly one FILE (see --help)")
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		n, err := loadRegistry(ctx, conn, args[0])
		if err != nil {
			return err
		}
		fmt.Println(n)
		return nil
	}
}

// loadRegistry sends a registry file's contents and returns a one-line account.
func loadRegistry(ctx context.Context, conn *grpc.ClientConn, path string) (string, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return "", err
	}
	var rf registryFile
	if err := json.Unmarshal(b, &rf); err != nil {
		return "", &exitError{code: 2, err: fmt.Errorf("%s: not a registry file: %w", path, err)}
	}
	lic := halovetv1.NewLicensingServiceClient(conn)
	for i, raw := range rf.Parties {
		p := &halovetv1.Party{}
		if err := unmarshalDialect(raw, p); err != nil {
			return "", &exitError{code: 2, err: fmt.Errorf("%s: parties[%d]: %w", path, i, err)}
		}
		if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: p}); err != nil {
			return "", fmt.Errorf("%s: parties[%d] (%s): %w", path, i, p.GetCountryCode(), err)
		}
	}
	for i, raw := range rf.Companies {
		c := &halovetv1.Company{}
		if err := unmarshalDialect(raw, c); err != nil {
			return "", &exitError{code: 2, err: fmt.Errorf("%s: companies[%d]: %w", path, i, err)}
		}
		if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: c}); err != nil {
			return "", fmt.Errorf("%s: companies[%d] (%s): %w", path, i, c.GetCompanyId(), err)
		}
	}
	for i, raw := range rf.Licences {
		l := &halovetv1.Licence{}
		if err := unmarshalDialect(raw, l); err != nil {
			return "", &exitError{code: 2, err: fmt.Errorf("%s: licences[%d]: %w", path, i, err)}
		}
		want := l.GetStatus()
		if want == halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED || want == halovetv1.LicenceStatus_LICENCE_STATUS_REVOKED {
			l.Status = halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE
		}
		_, err := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: l.GetLicenceNumber()})
		if err == nil {
			_, err = lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Licence: l, Reason: "loaded from " + path})
		} else {
			_, err = lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Licence: l, Reason: "loaded from " + path})
		}
		if err != nil {
			return "", fmt.Errorf("%s: licences[%d] (%s): %w", path, i, l.GetLicenceNumber(), err)
		}
		if want != l.Status && want != halovetv1.LicenceStatus_LICENCE_STATUS_UNSPECIFIED {
			if _, err := lic.SetLicenceStatus(ctx, &halovetv1.SetLicenceStatusRequest{LicenceNumber: l.GetLicenceNumber(),
				Status: want, Reason: "loaded from " + path}); err != nil {
				return "", fmt.Errorf("%s: licences[%d] (%s) status: %w", path, i, l.GetLicenceNumber(), err)
			}
		}
	}
	return fmt.Sprintf("loaded %d parties, %d companies, %d licences from %s",
		len(rf.Parties), len(rf.Companies), len(rf.Licences), path), nil
}

const licencesUsage = `licences [flags]

Lists licences with their quota lines: allocated, drawn and remaining, in each
line's unit (metric t, ODP t or CO2-eq t).`

func defineLicences(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	company := fs.String("company", "", "only this company's licences")
	year := fs.Int("year", 0, "only licences valid on some day of this year")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		return printLicences(ctx, conn, os.Stdout, *company, int32(*year))
	}
}

var unitLabel = map[halovetv1.QuotaUnit]string{
	halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES: "t",
	halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES:    "ODP t",
	halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES:   "CO2-eq t",
}

func printLicences(ctx context.Context, conn *grpc.ClientConn, w io.Writer, company string, year int32) error {
	resp, err := halovetv1.NewLicensingServiceClient(conn).ListLicences(ctx,
		&halovetv1.ListLicencesRequest{CompanyId: company, Year: year})
	if err != nil {
		return err
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight|tabwriter.Debug)
	fmt.Fprintln(tw, "licence\tcompany\tstatus\tline\tscope\tallocated\tdrawn\tremaining\tunit\tused %\t")
	for _, l := range resp.GetLicences() {
		for _, q := range l.GetQuotaLines() {
			scope := q.GetAnnexGroup()
			if scope == "" {
				scope = q.GetSubstance()
			}
			used := 0.0
			if q.GetAllocated() > 0 {
				used = 100 * q.GetDrawn() / q.GetAllocated()
			}
			fmt.Fprintf(tw, "%s\t%s\t%s\t%d\t%s\t%.3f\t%.3f\t%.3f\t%s\t%.1f\t\n", l.GetLicenceNumber(), l.GetCompanyId(),
				statusLabel(l.GetStatus()), q.GetLineNumber(), scope, q.GetAllocated(), q.GetDrawn(), q.GetRemaining(),
				unitLabel[q.GetUnit()], used)
		}
	}
	return tw.Flush()
}

func statusLabel(s halovetv1.LicenceStatus) string {
	switch s {
	case halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE:
		return "active"
	case halovetv1.LicenceStatus_LICENCE_STATUS_DRAFT:
		return "draft"
	case halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED:
		return "suspended"
	case halovetv1.LicenceStatus_LICENCE_STATUS_REVOKED:
		return "revoked"
	}
	return "?"
}
