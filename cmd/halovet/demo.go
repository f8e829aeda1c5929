package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	reflectionpb "google.golang.org/grpc/reflection/grpc_reflection_v1"

	"github.com/halovet/halovet/access"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/validate"
)

func init() {
	addVerb("demo", "run the invented demo scenario end to end on a private PostgreSQL cluster", demoUsage, defineDemo)
}

const demoUsage = `demo [flags]

Runs the main job end to end on the invented demo scenario in --scenario-dir:
starts a private PostgreSQL cluster in a temporary directory (or uses
--database-url), starts the server on a free loopback port, shows its health and
the services it offers, loads the party settings, companies and licences, checks the
shipments file, records it, shows the licence balances, and reports consumption,
baselines and compliance. Everything it started is stopped at the end.

All companies, licences, shipments and the countries' party settings in the scenario
are invented, on user-assigned country codes (XA-XZ, QM-QZ).`

func defineDemo(fs *pflag.FlagSet) runFunc {
	var d dbFlags
	fs.StringVar(&d.url, "database-url", envOr("HALOVET_DATABASE_URL", ""), "use this database instead of a private cluster (it must be empty or hold only earlier demo data)")
	dir := fs.String("scenario-dir", "testdata/demo", "directory holding scenario.json and shipments.csv")
	verbose := fs.Bool("verbose", false, "show the server's log lines")
	chartDir := fs.String("chart-dir", "halovet-demo", "directory the demo writes its compliance charts (SVG) into, created when absent; empty: no charts")
	today := fs.String("today", "2026-12-01", "the date the server takes as today, so that the scenario's date rules give the same findings whenever the demo runs; empty: the real date")
	return func(ctx context.Context, args []string) error {
		if len(args) > 0 {
			return usageErr("unexpected argument %q (see --help)", args[0])
		}
		for _, f := range []string{"scenario.json", "shipments.csv"} {
			if _, err := os.Stat(filepath.Join(*dir, f)); err != nil {
				return usageErr("--scenario-dir %s: %v (run the demo from the repository root, or point --scenario-dir at testdata/demo)", *dir, err)
			}
		}
		now := time.Now
		if *today != "" {
			t, err := time.Parse("2006-01-02", *today)
			if err != nil {
				return usageErr("--today %q: give a date YYYY-MM-DD", *today)
			}
			now = func() time.Time { return t.Add(12 * time.Hour) }
		}
		level := slog.LevelWarn
		if *verbose {
			level = slog.LevelInfo
		}
		log := slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: level}))
		out := os.Stdout

		step := stepper(out)
		if d.url == "" {
			tmp, err := os.MkdirTemp("", "halovet-demo-")
			if err != nil {
				return err
			}
			defer os.RemoveAll(tmp)
			// The cluster runs as an unprivileged account when we are root; it must be able
			// to reach its directory, or it would be placed (and left) elsewhere.
			if err := os.Chmod(tmp, 0o755); err != nil {
				return err
			}
			d.dataDir, d.ephemeral = filepath.Join(tmp, "postgres"), true
			step("Starting a private PostgreSQL cluster in %s", d.dataDir)
		} else {
			step("Using the database at --database-url")
		}
		db, err := openDatabase(ctx, d, true, log)
		if err != nil {
			return err
		}
		defer db.Close()
		cat, err := service.LoadCatalogue(ctx, db.Store, log)
		if err != nil {
			return err
		}
		subs, blends := len(cat.Load().Substances()), len(cat.Load().Blends())

		lis, err := net.Listen("tcp", "127.0.0.1:0")
		if err != nil {
			return err
		}
		srvCtx, stopServer := context.WithCancel(context.Background())
		srv := service.New(db.Store, cat, service.Options{Logger: log, HealthInterval: 200 * time.Millisecond, Now: now})
		served := make(chan error, 1)
		go func() { served <- srv.Serve(srvCtx, lis) }()
		defer func() {
			stopServer()
			if err := <-served; err != nil {
				fmt.Fprintln(os.Stderr, "server:", err)
			}
		}()
		addr := lis.Addr().String()
		step("Server listening on %s (catalogue: %d substances, %d blends)", addr, subs, blends)

		// Credentials, as a fresh install gets them: the first officer's straight in the
		// database (halovet credentials issue --database-url), the customs office's
		// through the API by that officer. Names invented.
		credDir, err := os.MkdirTemp("", "halovet-demo-credentials-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(credDir)
		step("Issuing the first officer's credential straight in the database (as 'halovet credentials issue --database-url' does)")
		officer, officerSecret, err := db.Store.IssueCredential(ctx, store.NewCredential{Name: demoOfficer, Role: access.RoleOfficer})
		if err != nil {
			return err
		}
		officerFile := filepath.Join(credDir, "officer.cred")
		if err := os.WriteFile(officerFile, []byte(officerSecret+"\n"), 0o600); err != nil {
			return err
		}
		fmt.Fprintf(out, "  credential %s: %s, role officer (secret written to a file of mode 0600; only its hash is stored)\n", officer.ID, demoOfficer)

		cf := clientFlags{server: addr, credFile: officerFile}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		if err := showHealthAndServices(ctx, conn, out); err != nil {
			return err
		}
		issued, err := halovetv1.NewAccessServiceClient(conn).IssueCredential(ctx, &halovetv1.IssueCredentialRequest{Name: demoCustoms, Role: halovetv1.Role_ROLE_CUSTOMS})
		if err != nil {
			return err
		}
		customsFile := filepath.Join(credDir, "customs.cred")
		if err := os.WriteFile(customsFile, []byte(issued.GetSecret()+"\n"), 0o600); err != nil {
			return err
		}
		fmt.Fprintf(out, "  credential %s: %s, role customs (issued through the API by %s)\n", issued.GetCredential().GetCredentialId(), demoCustoms, demoOfficer)
		customsFlags := clientFlags{server: addr, credFile: customsFile}
		customs, err := customsFlags.dial()
		if err != nil {
			return err
		}
		defer customs.Close()

		step("Loading the invented registry: party settings, companies, licences")
		msg, err := loadRegistry(ctx, conn, filepath.Join(*dir, "scenario.json"))
		if err != nil {
			return err
		}
		fmt.Fprintln(out, "  "+msg)

		shipments := filepath.Join(*dir, "shipments.csv")
		step("Checking %s as %s (nothing stored)", shipments, demoCustoms)
		if _, err := checkFile(ctx, customs, checkOptions{path: shipments, format: validate.FormatCSV, maxRejected: 10,
			maxLine: validate.DefaultMaxLineBytes, output: "text", progress: isTerminal(os.Stderr)}, out, os.Stderr); err != nil {
			return err
		}
		step("Recording %s as %s: accepted records are stored and draw down their quotas (the verdicts are those above)", shipments, demoCustoms)
		if _, err := checkFile(ctx, customs, checkOptions{path: shipments, format: validate.FormatCSV, record: true, brief: true,
			maxLine: validate.DefaultMaxLineBytes, output: "text", progress: isTerminal(os.Stderr)}, out, os.Stderr); err != nil {
			return err
		}
		step("Metrics after the batch (what GET /metrics of 'halovet serve --metrics-listen' shows; a selection)")
		if err := printScrape(out, srv.MetricsHandler(), "halovet_shipment_records_total", "halovet_shipment_findings_total", 8); err != nil {
			return err
		}
		step("Licence balances after recording")
		if err := printLicences(ctx, conn, out, "", 2026); err != nil {
			return err
		}
		if err := demoReports(ctx, conn, *dir, *chartDir, out, step); err != nil {
			return err
		}
		step("The audit trail: who changed what (halovet audit list), and its hash chain (halovet audit verify)")
		if err := demoAudit(ctx, conn, out); err != nil {
			return err
		}
		step("Done; stopping the server and the cluster")
		return nil
	}
}

// The demo's invented identities.
const (
	demoOfficer = "officer.demo (invented)"
	demoCustoms = "customs.demo-port (invented)"
)

// demoAudit summarises the audit trail per actor and action, shows its last events, and
// verifies its chain.
func demoAudit(ctx context.Context, conn *grpc.ClientConn, out io.Writer) error {
	c := halovetv1.NewAccessServiceClient(conn)
	var events []*halovetv1.AuditEvent
	req := &halovetv1.ListAuditEventsRequest{PageSize: 1000}
	for {
		page, err := c.ListAuditEvents(ctx, req)
		if err != nil {
			return err
		}
		events = append(events, page.GetEvents()...)
		if req.PageToken = page.GetNextPageToken(); req.PageToken == "" {
			break
		}
	}
	type key struct{ actor, action, object string }
	counts := map[key]int{}
	var keys []key
	for _, e := range events {
		k := key{e.GetActor(), e.GetAction(), e.GetObjectType()}
		if counts[k] == 0 {
			keys = append(keys, k)
		}
		counts[k]++
	}
	fmt.Fprintf(out, "  %d events:\n", len(events))
	for _, k := range keys {
		fmt.Fprintf(out, "    %-30s %-17s %-15s %d\n", k.actor, k.action, k.object, counts[k])
	}
	fmt.Fprintln(out, "  the last three:")
	var w bytes.Buffer
	if err := writeAuditEvents(&w, events[max(0, len(events)-3):]); err != nil {
		return err
	}
	for _, line := range strings.Split(strings.TrimRight(w.String(), "\n"), "\n") {
		fmt.Fprintln(out, "    "+line)
	}
	v, err := c.VerifyAuditChain(ctx, &halovetv1.VerifyAuditChainRequest{})
	if err != nil {
		return err
	}
	fmt.Fprintf(out, "  hash chain over %d events intact: %v\n", v.GetEventsChecked(), v.GetIntact())
	return nil
}

func stepper(w io.Writer) func(format string, args ...any) {
	n := 0
	return func(format string, args ...any) {
		n++
		fmt.Fprintf(w, "\n== %d. %s\n", n, fmt.Sprintf(format, args...))
	}
}

// showHealthAndServices asks the standard health service for the server's status and
// lists the services offered through server reflection, as any gRPC client would.
func showHealthAndServices(ctx context.Context, conn *grpc.ClientConn, out io.Writer) error {
	hc := healthpb.NewHealthClient(conn)
	deadline := time.Now().Add(30 * time.Second)
	var st healthpb.HealthCheckResponse_ServingStatus
	for {
		resp, err := hc.Check(ctx, &healthpb.HealthCheckRequest{})
		if err == nil {
			st = resp.GetStatus()
			if st == healthpb.HealthCheckResponse_SERVING {
				break
			}
		}
		if time.Now().After(deadline) {
			return fmt.Errorf("the server did not become SERVING within 30 s (last status %v, error %v)", st, err)
		}
		time.Sleep(100 * time.Millisecond)
	}
	fmt.Fprintf(out, "  health (grpc.health.v1): %s\n", st)
	rc, err := reflectionpb.NewServerReflectionClient(conn).ServerReflectionInfo(ctx)
	if err != nil {
		return err
	}
	if err := rc.Send(&reflectionpb.ServerReflectionRequest{MessageRequest: &reflectionpb.ServerReflectionRequest_ListServices{}}); err != nil {
		return err
	}
	resp, err := rc.Recv()
	if err != nil {
		return err
	}
	_ = rc.CloseSend()
	var names []string
	for _, s := range resp.GetListServicesResponse().GetService() {
		names = append(names, s.GetName())
	}
	sort.Strings(names)
	fmt.Fprintln(out, "  services offered (server reflection):")
	for _, n := range names {
		fmt.Fprintln(out, "    "+n)
	}
	return nil
}

// printScrape scrapes h and prints every sample of the first metric and the largest n
// samples of the second, with how many samples the second has in all.
func printScrape(w io.Writer, h http.Handler, first, second string, n int) error {
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/metrics", nil))
	if rec.Code != http.StatusOK {
		return fmt.Errorf("metrics scrape: HTTP %d", rec.Code)
	}
	type sample struct {
		line  string
		value float64
	}
	var seconds []sample
	for _, line := range strings.Split(rec.Body.String(), "\n") {
		switch {
		case strings.HasPrefix(line, first+"{"):
			fmt.Fprintln(w, "  "+line)
		case strings.HasPrefix(line, second+"{"):
			v, _ := strconv.ParseFloat(line[strings.LastIndexByte(line, ' ')+1:], 64)
			seconds = append(seconds, sample{line, v})
		}
	}
	sort.SliceStable(seconds, func(i, j int) bool { return seconds[i].value > seconds[j].value })
	for _, s := range seconds[:min(n, len(seconds))] {
		fmt.Fprintln(w, "  "+s.line)
	}
	if len(seconds) > n {
		fmt.Fprintf(w, "  ... and %d more %s samples\n", len(seconds)-n, second)
	}
	return nil
}
