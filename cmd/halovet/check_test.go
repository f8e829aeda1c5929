package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc"

	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/validate"
)

// End-to-end tests of 'halovet check': the real server in-process on a loopback port, a
// fresh PostgreSQL database, the invented demo registry, and checkFile as the CLI runs it.

var update = flag.Bool("update", false, "rewrite the golden files in testdata/demo/golden")

const (
	demoDir      = "../../testdata/demo"
	demoScenario = demoDir + "/scenario.json"
	demoBatch    = demoDir + "/shipments.csv"
	goldenDir    = demoDir + "/golden"
)

// demoNow is the demo's "today" (testdata/demo/README.md): the server's clock is fixed so
// that date checks, and so the reports, do not depend on the day the test runs.
func demoNow() time.Time { return time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC) }

// demoServer is a running server with the demo registry loaded.
type demoServer struct {
	conn *grpc.ClientConn
	st   *store.Store
}

// startDemoServer runs the real server in process (startTestServer) with the demo's fixed
// clock and loads the registry file into it. Everything is torn down when the test ends.
func startDemoServer(t *testing.T, registry string) *demoServer {
	t.Helper()
	ts := startTestServer(t, demoNow)
	if _, err := loadRegistry(context.Background(), ts.conn, registry); err != nil {
		t.Fatalf("load %s: %v", registry, err)
	}
	return &demoServer{conn: ts.conn, st: ts.st}
}

// runCheck runs checkFile on path and returns the summary, the stdout text and the report.
func (d *demoServer) runCheck(t *testing.T, path string, record bool) (*validate.Summary, string, []byte) {
	t.Helper()
	report := filepath.Join(t.TempDir(), "report.csv")
	var stdout, stderr bytes.Buffer
	opts := checkOptions{path: path, format: validate.FormatOfPath(path), record: record, reportPath: report,
		maxLine: validate.DefaultMaxLineBytes, output: "text"}
	sum, err := checkFile(context.Background(), d.conn, opts, &stdout, &stderr)
	if err != nil {
		t.Fatalf("checkFile %s (record %t): %v\nstderr: %s", path, record, err, stderr.String())
	}
	if stderr.Len() > 0 {
		t.Errorf("checkFile wrote to stderr without --progress: %q", stderr.String())
	}
	rep, err := os.ReadFile(report)
	if err != nil {
		t.Fatal(err)
	}
	return sum, stdout.String(), rep
}

// compareGolden compares got with the golden file, or rewrites it with -update.
func compareGolden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join(goldenDir, name)
	if *update {
		if err := os.MkdirAll(goldenDir, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (create the golden files with: go test ./cmd/halovet -run Golden -update)", err)
	}
	if bytes.Equal(got, want) {
		return
	}
	gl, wl := strings.Split(string(got), "\n"), strings.Split(string(want), "\n")
	for i := 0; i < max(len(gl), len(wl)); i++ {
		var g, w string
		if i < len(gl) {
			g = gl[i]
		}
		if i < len(wl) {
			w = wl[i]
		}
		if g != w {
			t.Fatalf("%s differs from the golden file at line %d:\n got: %s\nwant: %s\n(if the change is intended: go test ./cmd/halovet -run Golden -update, and review the diff)", name, i+1, g, w)
		}
	}
}

// reportRow is one row of a CSV report.
type reportRow struct {
	line    string
	key     string
	outcome string
	codes   []string
}

func readReport(t *testing.T, b []byte) []reportRow {
	t.Helper()
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("the report is not CSV: %v", err)
	}
	if len(rows) == 0 || rows[0][0] != "source_line" || rows[0][12] != "codes" {
		t.Fatalf("report header %v; want source_line ... codes ... first", rows[0])
	}
	var out []reportRow
	for _, r := range rows[1:] {
		rr := reportRow{line: r[0], key: r[1], outcome: r[2]}
		if r[12] != "" {
			rr.codes = strings.Split(r[12], ";")
		}
		out = append(out, rr)
	}
	return out
}

// unreachableFromCSV lists the finding codes no line of a CSV file can make fire, each with
// the reason. The demo batch must fire every other code.
var unreachableFromCSV = map[string]string{
	validate.CodeHCFCTailUse:        hcfcTailNotInDemo,
	validate.CodeHCFCTailUseMissing: hcfcTailNotInDemo,
	validate.CodeYearClosed:         "given by recording into a reporting year an officer closed; the demo closes no year; service TestRecordInClosedYear makes it fire",
	validate.CodeLicenceChanged:     "given by recording when the licence changes between the check of a record and its writing, a race a file check cannot stage; store TestRecordRefusesARowJudgedOnAnOlderLicenceVersion makes it fire",
	validate.CodeQuotaLineInvalid:   "the API (IssueLicence, AmendLicence) and the quota_lines CHECK constraints refuse a line without a unit or with a negative allocation, so no stored licence has one; validate's unit tests make it fire",
}

const hcfcTailNotInDemo = "the demo's reporting Party is an Article 5 Party and its batch is of 2026, before the Article 5 HCFC servicing tail of 2030-2039; validate's unit tests make it fire"

// TestGoldenDemoReport checks the demo batch, compares the report and the summary with the
// golden files, then records it, compares again, checks what the database holds, and
// records it a second time to see every stored record answered as a replay.
func TestGoldenDemoReport(t *testing.T) {
	d := startDemoServer(t, demoScenario)

	// Check mode: nothing is stored.
	sum, text, rep := d.runCheck(t, demoBatch, false)
	compareGolden(t, "check-summary.txt", []byte(text))
	compareGolden(t, "check-report.csv", rep)
	if n := d.count(t, `SELECT count(*) FROM shipments`); n != 0 {
		t.Fatalf("check mode stored %d shipments; want 0", n)
	}
	rows := readReport(t, rep)
	if int64(len(rows)) != sum.Records || sum.Records != 424 {
		t.Fatalf("report has %d rows, summary %d records; want 424 each (every line of the batch but the header)", len(rows), sum.Records)
	}
	seen := map[string]bool{}
	for _, r := range rows {
		for _, c := range r.codes {
			seen[c] = true
		}
	}
	for _, info := range validate.CodeTable() {
		reason, unreachable := unreachableFromCSV[info.Code]
		switch {
		case unreachable && seen[info.Code]:
			t.Errorf("%s fires in the demo batch but is listed as unreachable (%s); drop it from unreachableFromCSV", info.Code, reason)
		case !unreachable && !seen[info.Code]:
			t.Errorf("no line of the demo batch fires %s (%s); add a special line in testdata/demo/gen", info.Code, info.Meaning)
		}
	}
	for code := range unreachableFromCSV {
		if _, ok := validate.LookupCode(code); !ok {
			t.Errorf("unreachableFromCSV names %s, which is not in the code table", code)
		}
	}
	// Spot checks of the quota sequence at the end of the batch, before the last line (an
	// HS_KIND rejection; see testdata/demo/README.md).
	if last := rows[len(rows)-1]; last.outcome != "rejected" || !slices.Contains(last.codes, validate.CodeHSKind) {
		t.Errorf("last line %s: outcome %s codes %v; want rejected with %s", last.line, last.outcome, last.codes, validate.CodeHSKind)
	}
	tail := rows[len(rows)-5 : len(rows)-1]
	wantTail := [][2]string{{"accepted", validate.CodeQuotaNearLimit}, {"rejected", validate.CodeQuotaExceeded},
		{"accepted", validate.CodeQuotaNearLimit}, {"rejected", validate.CodeQuotaExceeded}}
	for i, w := range wantTail {
		if tail[i].outcome != w[0] || !slices.Contains(tail[i].codes, w[1]) {
			t.Errorf("line %s: outcome %s codes %v; want %s with %s", tail[i].line, tail[i].outcome, tail[i].codes, w[0], w[1])
		}
	}

	// Record mode.
	rsum, rtext, rrep := d.runCheck(t, demoBatch, true)
	compareGolden(t, "record-summary.txt", []byte(rtext))
	compareGolden(t, "record-report.csv", rrep)
	stored := rsum.Accepted + rsum.AcceptedWithWarnings - rsum.Replayed
	if n := d.count(t, `SELECT count(*) FROM shipments`); n != stored {
		t.Fatalf("%d shipments stored; the summary says %d accepted records that are not replays", n, stored)
	}
	d.assertDrawsAddUp(t)

	// What is stored is exactly the accepted records: nothing from a rejected or unreadable
	// line. The key of each line is read from the file itself, so unreadable lines count too.
	keys := fileKeys(t, demoBatch)
	for _, r := range readReport(t, rrep) {
		key := keys[r.line]
		if key == "" {
			continue // KEY_MISSING: nothing to look up
		}
		n := d.count(t, `SELECT count(*) FROM shipments WHERE record_key = $1`, key)
		switch {
		case r.outcome != "rejected" && n != 1:
			t.Errorf("line %s (%s) was accepted but %d rows hold its key; want 1", r.line, key, n)
		case r.outcome == "rejected" && !slices.Contains(r.codes, validate.CodeDupKeyConflict) && n != 0:
			t.Errorf("line %s (%s, %v) was rejected but is stored", r.line, key, r.codes)
		}
	}
	drawn := d.drawn(t)

	// Recording the same file again stores nothing new: each stored record is a replay.
	again, _, _ := d.runCheck(t, demoBatch, true)
	if again.Accepted+again.AcceptedWithWarnings != rsum.Accepted+rsum.AcceptedWithWarnings || again.Replayed != again.Accepted+again.AcceptedWithWarnings {
		t.Errorf("second recording: %d accepted, %d with warnings, %d replays; want every one of the %d accepted records a replay",
			again.Accepted, again.AcceptedWithWarnings, again.Replayed, rsum.Accepted+rsum.AcceptedWithWarnings)
	}
	if n := d.count(t, `SELECT count(*) FROM shipments`); n != stored {
		t.Errorf("after the second recording %d shipments are stored; want still %d", n, stored)
	}
	if got := d.drawn(t); !maps2Equal(got, drawn) {
		t.Errorf("quota drawn changed on a replayed batch:\n got %v\nwant %v", got, drawn)
	}
}

func maps2Equal(a, b map[string]string) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

func (d *demoServer) count(t *testing.T, sql string, args ...any) int64 {
	t.Helper()
	var n int64
	if err := d.st.Pool().QueryRow(context.Background(), sql, args...).Scan(&n); err != nil {
		t.Fatalf("%s: %v", sql, err)
	}
	return n
}

// drawn returns each quota line's drawn amount as numeric text.
func (d *demoServer) drawn(t *testing.T) map[string]string {
	t.Helper()
	rows, err := d.st.Pool().Query(context.Background(),
		`SELECT licence_number || '/' || line_number, drawn::text FROM quota_lines ORDER BY 1`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	out := map[string]string{}
	for rows.Next() {
		var k, v string
		if err := rows.Scan(&k, &v); err != nil {
			t.Fatal(err)
		}
		out[k] = v
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

// assertDrawsAddUp checks that every quota line's drawn amount equals the sum of its stored
// draws exactly, and stays within 0 and the allocation.
func (d *demoServer) assertDrawsAddUp(t *testing.T) {
	t.Helper()
	rows, err := d.st.Pool().Query(context.Background(), `
		SELECT q.licence_number, q.line_number, q.drawn::text, COALESCE(sum(d.amount), 0)::numeric(30,9)::text,
		       q.drawn >= 0 AND q.drawn <= q.allocated
		FROM quota_lines q LEFT JOIN quota_draws d USING (licence_number, line_number)
		GROUP BY q.licence_number, q.line_number, q.drawn, q.allocated ORDER BY 1, 2`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	anyDrawn := false
	for rows.Next() {
		var lic, drawn, sum string
		var line int
		var inRange bool
		if err := rows.Scan(&lic, &line, &drawn, &sum, &inRange); err != nil {
			t.Fatal(err)
		}
		if drawn != sum {
			t.Errorf("%s line %d: drawn %s, but its draws sum to %s", lic, line, drawn, sum)
		}
		if !inRange {
			t.Errorf("%s line %d: drawn %s is outside 0 .. allocated", lic, line, drawn)
		}
		if drawn != "0.000000000" {
			anyDrawn = true
		}
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	if !anyDrawn {
		t.Error("no quota line has anything drawn after recording the batch")
	}
}

// fileKeys maps each line number of a CSV file (as text) to its first field, read without a
// CSV parser so that unreadable lines have a key too.
func fileKeys(t *testing.T, path string) map[string]string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	for i, l := range strings.Split(string(b), "\n") {
		k, _, _ := strings.Cut(l, ",")
		out[fmt.Sprint(i+1)] = k
	}
	return out
}

// TestDemoGeneratorReproducesBatch runs testdata/demo/gen into a temporary directory and
// checks that it writes the committed shipments.csv byte for byte, and the table of special
// lines that README.md holds.
func TestDemoGeneratorReproducesBatch(t *testing.T) {
	goTool, err := exec.LookPath("go")
	if err != nil {
		t.Skip("the go command is not on PATH")
	}
	dir := t.TempDir()
	cmd := exec.Command(goTool, "run", "./testdata/demo/gen", "-dir", dir, "-readme=false")
	cmd.Dir = "../.."
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go run ./testdata/demo/gen: %v\n%s", err, out)
	}
	got, err := os.ReadFile(filepath.Join(dir, "shipments.csv"))
	if err != nil {
		t.Fatal(err)
	}
	want, err := os.ReadFile(demoBatch)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("testdata/demo/gen writes a shipments.csv (%d bytes) that differs from the committed one (%d bytes); run go run ./testdata/demo/gen and commit", len(got), len(want))
	}
	table, err := os.ReadFile(filepath.Join(dir, "lines.md"))
	if err != nil {
		t.Fatal(err)
	}
	readme, err := os.ReadFile(filepath.Join(demoDir, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(readme, table) || len(table) < 100 {
		t.Error("testdata/demo/README.md does not hold the generator's table of special lines; run go run ./testdata/demo/gen and commit")
	}
}

// TestRecordSkipsBadLines records files with lines that cannot be read (binary garbage, a
// 10 MB line, stray quotes, wrong field counts, invalid JSON, unknown keys, an unreadable
// field): each gets a clear per-line error, nothing from those lines is stored, and every
// good line is.
func TestRecordSkipsBadLines(t *testing.T) {
	d := startDemoServer(t, demoScenario)
	good := func(key string) string {
		return key + ",import,XA-1001,XA-IMP-2026-001,XB,2026-03-02,HCFC-22,,,,100,kg,0,servicing,,"
	}
	header := "record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,declared_hs_code,declared_cas_number,declared_formula,total_net_quantity,quantity_unit,package_count,purpose,condition,declared_composition"
	huge := "BAD-HUGE,import,XA-1001,XA-IMP-2026-001,XB,2026-03-02,HCFC-22,,,," + strings.Repeat("9", 10<<20) + ",kg,0,servicing,,"
	csvLines := []struct {
		text   string
		reason string // "" for a good line; else a word the line error must contain
	}{
		{header, ""},
		{good("GOOD-1"), ""},
		{"BAD-BIN,\x00\x01\x02\xff\xfe garbage \x80\x81", "not text"},
		{"BAD-UTF8,import,XA-1001,\xff\xfe\x80", "UTF-8"},
		{good("GOOD-2"), ""},
		{huge, "bytes"},
		{strings.Replace(good("BAD-QUOTE"), ",HCFC-22,", `,HCFC"22,`, 1), "stray quote"},
		{strings.TrimSuffix(good("BAD-FIELDS"), ","), "fields"},
		{strings.Replace(good("BAD-OPEN"), ",servicing,", `,"servicing,`, 1), "not closed"},
		{strings.Replace(good("BAD-DIRECTION"), ",import,", ",sideways,", 1), "direction"},
		{good("GOOD-3"), ""},
	}
	var b strings.Builder
	for _, l := range csvLines {
		b.WriteString(l.text + "\n")
	}
	path := filepath.Join(t.TempDir(), "mixed.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	sum, _, rep := d.runCheck(t, path, true)
	if sum.Records != 10 || sum.Accepted != 3 || sum.Rejected != 7 {
		t.Fatalf("summary: %d records, %d accepted, %d rejected; want 10, 3 and 7", sum.Records, sum.Accepted, sum.Rejected)
	}
	rows := readReport(t, rep)
	findings := reportFindings(t, rep)
	for i, l := range csvLines[1:] {
		line := fmt.Sprint(i + 2)
		r := rows[i]
		if r.line != line {
			t.Fatalf("report row %d is line %s; want %s (the report follows the file)", i+1, r.line, line)
		}
		if l.reason == "" {
			if r.outcome != "accepted" {
				t.Errorf("good line %s: %s %v; want accepted", line, r.outcome, r.codes)
			}
			continue
		}
		if r.outcome != "rejected" || len(r.codes) != 1 {
			t.Errorf("bad line %s: %s %v; want rejected with one finding", line, r.outcome, r.codes)
		}
		if !strings.Contains(findings[i], l.reason) {
			t.Errorf("bad line %s: finding %q does not say %q", line, findings[i], l.reason)
		}
	}
	d.assertStoredKeys(t, "GOOD-1", "GOOD-2", "GOOD-3")

	// JSON Lines: the same kinds of bad line.
	jgood := func(key string) string {
		return `{"record_key":"` + key + `","direction":"import","company_id":"XA-1001","licence_number":"XA-IMP-2026-001","partner_country":"XB","declaration_date":"2026-03-03","substance":"HCFC-22","total_net_quantity":100,"quantity_unit":"kg","purpose":"servicing"}`
	}
	jsonl := strings.Join([]string{
		jgood("JGOOD-1"),
		"\xff\xfe\x00 binary",
		`{"record_key":"JBAD-HUGE","total_net_quantity":"` + strings.Repeat("9", 10<<20) + `"}`,
		`{"record_key":"JBAD-SYNTAX","direction":"import",`,
		`{"record_key":"JBAD-KEY","direction":"import","colour":"blue"}`,
		jgood("JGOOD-2"),
	}, "\n") + "\n"
	jpath := filepath.Join(t.TempDir(), "mixed.jsonl")
	if err := os.WriteFile(jpath, []byte(jsonl), 0o644); err != nil {
		t.Fatal(err)
	}
	jsum, _, jrep := d.runCheck(t, jpath, true)
	if jsum.Records != 6 || jsum.Accepted != 2 || jsum.Rejected != 4 {
		t.Fatalf("JSON Lines summary: %d records, %d accepted, %d rejected; want 6, 2 and 4", jsum.Records, jsum.Accepted, jsum.Rejected)
	}
	for _, r := range readReport(t, jrep) {
		if r.outcome == "rejected" && !slices.Equal(r.codes, []string{validate.CodeLineUnreadable}) {
			t.Errorf("JSON Lines line %s: codes %v; want LINE_UNREADABLE alone", r.line, r.codes)
		}
	}
	d.assertStoredKeys(t, "GOOD-1", "GOOD-2", "GOOD-3", "JGOOD-1", "JGOOD-2")

	// A wrong header stops the file before anything is sent: exit code 2, a message that
	// lists the accepted columns, nothing stored.
	wrong := filepath.Join(t.TempDir(), "wrong.csv")
	if err := os.WriteFile(wrong, []byte(strings.Replace(header, "quantity,", "qty,", 1)+"\n"+good("WRONG-1")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	_, err := checkFile(context.Background(), d.conn, checkOptions{path: wrong, format: validate.FormatCSV, record: true,
		maxLine: validate.DefaultMaxLineBytes, output: "text"}, &stdout, &stderr)
	var ee *exitError
	if !errors.As(err, &ee) || ee.code != 2 {
		t.Fatalf("wrong header: error %v; want an exit error with code 2", err)
	}
	for _, w := range []string{"unknown columns", `"total_net_qty"`, "missing required columns: total_net_quantity", "required columns:"} {
		if !strings.Contains(err.Error(), w) {
			t.Errorf("wrong header: message %q does not say %q", err.Error(), w)
		}
	}
	d.assertStoredKeys(t, "GOOD-1", "GOOD-2", "GOOD-3", "JGOOD-1", "JGOOD-2")
}

// reportFindings returns the findings column of each report row.
func reportFindings(t *testing.T, b []byte) []string {
	t.Helper()
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, r := range rows[1:] {
		out = append(out, r[13])
	}
	return out
}

// assertStoredKeys checks that the shipments table holds exactly these record keys.
func (d *demoServer) assertStoredKeys(t *testing.T, want ...string) {
	t.Helper()
	rows, err := d.st.Pool().Query(context.Background(), `SELECT record_key FROM shipments ORDER BY record_key`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var got []string
	for rows.Next() {
		var k string
		if err := rows.Scan(&k); err != nil {
			t.Fatal(err)
		}
		got = append(got, k)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("stored keys %v; want %v (every good line, nothing from a bad one)", got, want)
	}
}
