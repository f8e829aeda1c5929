package main

import (
	"bytes"
	"encoding/csv"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestYearReportFiles writes the demo year's report twice and expects the same bytes
// (nothing of the moment of writing is in them), every file present, CSV that parses with
// a record column, and HTML with every table. The demo data is invented.
func TestYearReportFiles(t *testing.T) {
	d := startDemoServerAddr(t)
	dirs := []string{filepath.Join(t.TempDir(), "a"), filepath.Join(t.TempDir(), "b")}
	for _, dir := range dirs {
		if code, out, errOut := runCaptured(t, "year-report", "--year", "2026", "--dir", dir, "--server", d); code != exitOK {
			t.Fatalf("year-report: exit %d\n%s\n%s", code, out, errOut)
		}
	}
	names := []string{"groups.csv", "imports.csv", "exports.csv", "production.csv", "destruction.csv", "feedstock.csv",
		"qps.csv", "non-party.csv", "hfc23.csv", "exemptions.csv", "report.json", "report.html"}
	for _, n := range names {
		a, err := os.ReadFile(filepath.Join(dirs[0], n))
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(dirs[1], n))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between two reports of the same register", n)
		}
		if strings.HasSuffix(n, ".csv") {
			rows, err := csv.NewReader(bytes.NewReader(a)).ReadAll()
			if err != nil || len(rows) == 0 {
				t.Errorf("%s: %v (%d rows)", n, err, len(rows))
			}
		}
	}
	imports, _ := os.ReadFile(filepath.Join(dirs[0], "imports.csv"))
	if !strings.Contains(string(imports), "records") || !strings.Contains(string(imports), "shipment:") {
		t.Errorf("imports.csv names no records:\n%s", imports)
	}
	groups, _ := os.ReadFile(filepath.Join(dirs[0], "groups.csv"))
	if !strings.Contains(string(groups), "C/I,yes") || !strings.Contains(string(groups), "A/I,no") {
		t.Errorf("groups.csv: want C/I with data and A/I without (the demo records no CFCs):\n%s", groups)
	}
	page, _ := os.ReadFile(filepath.Join(dirs[0], "report.html"))
	tables := strings.Count(string(page), "<table>")
	if strings.Count(string(page), "</table>") != tables {
		t.Errorf("report.html: tables not closed")
	}
	if tables != 11 || !strings.Contains(string(page), "no data") || !strings.Contains(string(page), "decision support") {
		t.Errorf("report.html: %d tables, want 11, with no-data groups and the decision-support notice", tables)
	}
	if left, _ := filepath.Glob(filepath.Join(dirs[0], ".*")); len(left) > 0 {
		t.Errorf("temporary files left: %v", left)
	}
}

// TestYearReportPrints prints the demo year's report.html with a real headless chromium
// (Debian package chromium) and expects a PDF of at least one page: the page is printable
// as it stands. The demo data is invented.
func TestYearReportPrints(t *testing.T) {
	browser, err := exec.LookPath("chromium")
	if err != nil {
		t.Fatalf("chromium is needed for this test (apt-get install chromium): %v", err)
	}
	d := startDemoServerAddr(t)
	dir := t.TempDir()
	if code, out, errOut := runCaptured(t, "year-report", "--year", "2026", "--dir", dir, "--server", d); code != exitOK {
		t.Fatalf("year-report: exit %d\n%s\n%s", code, out, errOut)
	}
	pdf := filepath.Join(dir, "report.pdf")
	cmd := exec.Command(browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-pdf-header-footer",
		"--user-data-dir="+filepath.Join(dir, "profile"), "--print-to-pdf="+pdf, "file://"+filepath.Join(dir, "report.html"))
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, b)
	}
	b, err := os.ReadFile(pdf)
	if err != nil {
		t.Fatalf("no PDF printed: %v", err)
	}
	if !bytes.HasPrefix(b, []byte("%PDF-")) || !bytes.Contains(b, []byte("/Type /Page")) {
		t.Errorf("report.pdf (%d bytes) is not a PDF with pages", len(b))
	}
}
