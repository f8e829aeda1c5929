package console_test

import (
	"bufio"
	"context"
	"encoding/csv"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/console"
	"github.com/halovet/halovet/internal/servertest"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

// demoToday is the date the demo scenario's golden files were made on (halovet demo
// --today), so that its date rules give the golden verdicts.
var demoToday = time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC)

// The test credentials (invented): one per role the console is tried with, issued in
// the store as 'halovet credentials issue' does.
var testCredentials = map[string]store.NewCredential{
	"officer": {Name: "Olu Officer (invented)", Role: access.RoleOfficer},
	"trader":  {Name: "Tess Trader (invented)", Role: access.RoleTrader, CompanyID: "XA-1002"},
	"auditor": {Name: "Ada Auditor (invented)", Role: access.RoleAuditor},
	"reader":  {Name: "Ravi Reader (invented)", Role: access.RoleReader},
}

// clock is the console's clock, moved by the tests (the server keeps the demo's date).
type clock struct {
	mu sync.Mutex
	t  time.Time
}

func (c *clock) now() time.Time { c.mu.Lock(); defer c.mu.Unlock(); return c.t }
func (c *clock) advance(d time.Duration) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.t = c.t.Add(d)
}

// harness is a real halovet server on a fresh PostgreSQL database holding the demo
// registry, with the console mounted on its HTTP handler, served by httptest.
type harness struct {
	url     string
	secrets map[string]string // role -> the secret of its test credential
	conn    *halovetGRPC
	clock   *clock
	ts      *httptest.Server
}

type halovetGRPC = grpcConn

func quiet() *slog.Logger {
	return slog.New(slog.NewTextHandler(io.Discard, &slog.HandlerOptions{Level: slog.LevelError + 1}))
}

func newHarness(t testing.TB, tls bool) *harness {
	t.Helper()
	ctx := context.Background()
	srvT := servertest.Start(t, "halovet_console", service.Options{Logger: quiet(),
		HealthInterval: 200 * time.Millisecond, Now: func() time.Time { return demoToday }})
	st, srv := srvT.Store, srvT.Server
	secrets := map[string]string{}
	issue := func(role string) {
		_, secret, err := st.IssueCredential(ctx, testCredentials[role])
		if err != nil {
			t.Fatalf("issue the %s credential: %v", role, err)
		}
		secrets[role] = secret
	}
	issue("officer") // first: it loads the demo registry, which the trader's company is in
	conn, err := srv.InProcessConn()
	if err != nil {
		t.Fatal(err)
	}
	clk := &clock{t: demoToday}
	// The console as serve wires it: the store's credentials, the policy table, and calls
	// carrying the signed-in identity's own secret.
	con, err := console.New(console.Config{Conn: conn, Auth: console.AccessAuthenticator{A: access.NewAuthenticator(st, access.AuthOptions{CacheTTL: -1})},
		Policy: console.AccessPolicy{}, CallContext: console.BearerCallContext, Now: clk.now, Logger: quiet()})
	if err != nil {
		t.Fatal(err)
	}
	srv.Mount(console.Prefix, con)
	h, err := srv.HTTPHandler()
	if err != nil {
		t.Fatal(err)
	}
	var ts *httptest.Server
	if tls {
		ts = httptest.NewTLSServer(h)
	} else {
		ts = httptest.NewServer(h)
	}
	t.Cleanup(ts.Close)
	t.Cleanup(func() { _ = conn.Close() })
	hc := &harness{url: ts.URL, secrets: secrets, conn: &grpcConn{conn, secrets["officer"]}, clock: clk, ts: ts}
	hc.loadDemo(t)
	for _, role := range []string{"trader", "auditor", "reader"} {
		issue(role)
	}
	return hc
}

// repoFile is a file of the repository, from this package's directory.
func repoFile(t testing.TB, rel string) string {
	t.Helper()
	p := filepath.Join("..", rel)
	if _, err := os.Stat(p); err != nil {
		t.Fatalf("%s is missing: %v", rel, err)
	}
	return p
}

// loadDemo loads the invented demo registry (testdata/demo/scenario.json) and national
// entries (testdata/demo/national_entries.csv) through the API, as 'halovet demo' does.
func (h *harness) loadDemo(t testing.TB) {
	t.Helper()
	ctx := h.conn.admin()
	raw, err := os.ReadFile(repoFile(t, "testdata/demo/scenario.json"))
	if err != nil {
		t.Fatal(err)
	}
	var rf struct{ Parties, Companies, Licences []json.RawMessage }
	if err := json.Unmarshal(raw, &rf); err != nil {
		t.Fatal(err)
	}
	un := func(b []byte, m proto.Message) {
		if err := protojson.Unmarshal(b, m); err != nil {
			t.Fatalf("scenario.json: %v", err)
		}
	}
	// One LoadRegistry call, as 'halovet load' sends it: licence statuses are reached from
	// their effective dates (the demo's XA-IMP-2026-005 is suspended from 2026-09-15).
	req := &halovetv1.LoadRegistryRequest{Reason: "console test: demo scenario"}
	for _, p := range rf.Parties {
		m := &halovetv1.Party{}
		un(p, m)
		req.Parties = append(req.Parties, m)
	}
	for _, c := range rf.Companies {
		m := &halovetv1.Company{}
		un(c, m)
		req.Companies = append(req.Companies, m)
	}
	for _, l := range rf.Licences {
		m := &halovetv1.Licence{}
		un(l, m)
		req.Licences = append(req.Licences, m)
	}
	if _, err := halovetv1.NewLicensingServiceClient(h.conn).LoadRegistry(ctx, req); err != nil {
		t.Fatalf("load the demo registry: %v", err)
	}
	f, err := os.Open(repoFile(t, "testdata/demo/national_entries.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cr := csv.NewReader(f)
	cr.Comment = '#'
	rows, err := cr.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var entries []*halovetv1.NationalEntry
	for _, r := range rows[1:] { // entry_key,year,entry_type,substance,metric_tonnes,note
		year, _ := strconv.Atoi(r[1])
		typ := halovetv1.EntryType(halovetv1.EntryType_value["ENTRY_TYPE_"+strings.ToUpper(strings.ReplaceAll(r[2], "-", "_"))])
		if typ == halovetv1.EntryType_ENTRY_TYPE_UNSPECIFIED {
			t.Fatalf("national_entries.csv: entry type %q", r[2])
		}
		entries = append(entries, &halovetv1.NationalEntry{EntryKey: r[0], Year: int32(year), EntryType: typ, Substance: r[3], MetricTonnes: r[4], Note: r[5]})
	}
	if _, err := halovetv1.NewConsumptionServiceClient(h.conn).RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: entries}); err != nil {
		t.Fatal(err)
	}
}

// goldenCounts reads the counts of the demo batch from its golden summary
// (testdata/demo/golden/check-summary.txt, which the CLI's golden test keeps current).
func goldenCounts(t testing.TB) map[string]int {
	t.Helper()
	f, err := os.Open(repoFile(t, "testdata/demo/golden/check-summary.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	out := map[string]int{}
	re := regexp.MustCompile(`^\s*(Records|accepted with warnings|accepted|rejected)\s+(\d+)$`)
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if m := re.FindStringSubmatch(sc.Text()); m != nil {
			n, _ := strconv.Atoi(m[2])
			out[m[1]] = n
		}
	}
	if len(out) != 4 {
		t.Fatalf("check-summary.txt: counts %v; want Records, accepted, accepted with warnings, rejected", out)
	}
	return out
}

// client is a browser-like HTTP client with its own cookies.
type client struct {
	t    testing.TB
	h    *harness
	http *http.Client
}

func (h *harness) client(t testing.TB) *client {
	jar, _ := cookiejar.New(nil)
	hc := h.ts.Client()
	hc.Jar = jar
	hc.CheckRedirect = func(*http.Request, []*http.Request) error { return nil }
	return &client{t: t, h: h, http: hc}
}

type page struct {
	code int
	body string
	hdr  http.Header
	path string // the path of the page shown (after redirects)
}

func (c *client) get(path string) page {
	c.t.Helper()
	resp, err := c.http.Get(c.h.url + path)
	if err != nil {
		c.t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	return page{resp.StatusCode, string(b), resp.Header, resp.Request.URL.RequestURI()}
}

func (c *client) post(path string, form url.Values) page {
	c.t.Helper()
	resp, err := c.http.PostForm(c.h.url+path, form)
	if err != nil {
		c.t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	return page{resp.StatusCode, string(b), resp.Header, resp.Request.URL.RequestURI()}
}

var csrfRE = regexp.MustCompile(`name="csrf" value="([^"]+)"`)

// csrf is the form token of a page.
func (p page) csrf(t testing.TB) string {
	t.Helper()
	m := csrfRE.FindStringSubmatch(p.body)
	if m == nil {
		t.Fatalf("no form token on the page:\n%s", p.body)
	}
	return m[1]
}

// signIn signs in with the test credential of a role.
func (c *client) signIn(role string) page {
	c.t.Helper()
	secret := c.h.secrets[role]
	form := c.get("/console/sign-in")
	p := c.post("/console/sign-in", url.Values{"csrf": {form.csrf(c.t)}, "secret": {secret}})
	if p.code != http.StatusOK || !strings.Contains(p.body, "Sign out") {
		c.t.Fatalf("sign-in as %s: %d\n%s", role, p.code, p.body)
	}
	return p
}

func (p page) mustContain(t testing.TB, subs ...string) {
	t.Helper()
	for _, s := range subs {
		if !strings.Contains(p.body, s) {
			t.Errorf("page (HTTP %d) lacks %q", p.code, s)
		}
	}
}
