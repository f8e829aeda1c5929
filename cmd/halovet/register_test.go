package main

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestShipmentsExportCorrectRoundTrip lists recorded shipments of the invented demo in the
// columns 'check' reads, checks the listing (every record answered as recorded, no quota
// finding from its own draws), corrects one line and feeds it back, and voids a record.
func TestShipmentsExportCorrectRoundTrip(t *testing.T) {
	d := startDemoServerAddr(t)
	dir := t.TempDir()
	s := "--server"
	for _, format := range []string{"csv", "jsonl"} {
		code, out, stderr := runCaptured(t, "shipments", "list", "--company", "XA-1002", "--licence", "XA-IMP-2026-002",
			"--state", "live", "--output", format, "--page-size", "7", s, d)
		if code != exitOK {
			t.Fatalf("list --output %s: exit %d\n%s", format, code, stderr)
		}
		path := filepath.Join(dir, "export."+format)
		writeFile(t, path, out)
		code, out, stderr = runCaptured(t, "check", path, s, d)
		if code != exitOK || strings.Contains(out, "QUOTA_EXCEEDED") || !strings.Contains(out, "of all accepted, replays") {
			t.Fatalf("check of the %s listing: exit %d; want every record answered as recorded\n%s\n%s", format, code, out, stderr)
		}
	}
	// Correct the first record's quantity and feed it back.
	raw, err := os.ReadFile(filepath.Join(dir, "export.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(raw)).ReadAll()
	if err != nil || len(rows) < 3 {
		t.Fatalf("export: %d rows, %v", len(rows), err)
	}
	col := map[string]int{}
	for i, n := range rows[0] {
		col[n] = i
	}
	fix := append([]string(nil), rows[1]...)
	key := fix[col["record_key"]]
	fix[col["total_net_quantity"]], fix[col["quantity_unit"]], fix[col["package_count"]], fix[col["net_fill_per_package"]] = "1", "kg", "", ""
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	_ = w.Write(rows[0])
	_ = w.Write(fix)
	w.Flush()
	fixPath := filepath.Join(dir, "fix.csv")
	writeFile(t, fixPath, buf.String())
	code, _, stderr := runCaptured(t, "shipments", "correct", fixPath, s, d)
	if code != exitUsage || !strings.Contains(stderr, "--reason") {
		t.Fatalf("correct without --reason: exit %d %s", code, stderr)
	}
	code, out, stderr := runCaptured(t, "shipments", "correct", fixPath, "--reason", "quantity from the corrected entry", s, d)
	if code != exitOK || !strings.Contains(out, "1 corrected, 0 refused") || !strings.Contains(out, "version 2") {
		t.Fatalf("correct: exit %d\n%s\n%s", code, out, stderr)
	}
	code, out, _ = runCaptured(t, "shipments", "list", "--key", key, s, d)
	if code != exitOK || !strings.Contains(out, "superseded") || !strings.Contains(out, "live") || !strings.Contains(out, "2 recorded shipments") {
		t.Fatalf("versions of %s: exit %d\n%s", key, code, out)
	}
	// The corrected file checked again: it is recorded (version 2).
	if code, out, _ = runCaptured(t, "check", fixPath, s, d); code != exitOK || !strings.Contains(out, "of all accepted, replays") {
		t.Fatalf("check of the applied correction: exit %d\n%s", code, out)
	}
	// A correction that breaks a rule: a date that does not exist. Nothing changes.
	bad := append([]string(nil), fix...)
	bad[col["declaration_date"]] = "2026-02-30"
	buf.Reset()
	w = csv.NewWriter(&buf)
	_ = w.Write(rows[0])
	_ = w.Write(bad)
	w.Flush()
	badPath := filepath.Join(dir, "bad.csv")
	writeFile(t, badPath, buf.String())
	code, out, _ = runCaptured(t, "shipments", "correct", badPath, "--reason", "test", s, d)
	if code != exitRejected || !strings.Contains(out, "record.declaration_date") {
		t.Fatalf("rule-breaking correction: exit %d\n%s", code, out)
	}
	// Void the live version by its id.
	_, out, _ = runCaptured(t, "shipments", "list", "--key", key, "--state", "live", s, d)
	lines := strings.Split(out, "\n")
	if len(lines) < 2 {
		t.Fatalf("list: %q", out)
	}
	id := strings.Fields(lines[1])[0]
	code, out, stderr = runCaptured(t, "shipments", "void", id, "--reason", "declared twice", s, d)
	if code != exitOK || !strings.Contains(out, "given back") {
		t.Fatalf("void %s: exit %d\n%s\n%s", id, code, out, stderr)
	}
	code, _, stderr = runCaptured(t, "shipments", "void", id, "--reason", "again", s, d)
	if code != exitUsage || !strings.Contains(stderr, "voided") {
		t.Fatalf("void twice: exit %d\n%s", code, stderr)
	}
	code, out, _ = runCaptured(t, "shipments", "show", id, s, d)
	if code != exitOK || !strings.Contains(out, "voided") || !strings.Contains(out, "versions:") {
		t.Fatalf("show %s: exit %d\n%s", id, code, out)
	}
	// Closing 2026 stops corrections of its records.
	if code, _, stderr = runCaptured(t, "year", "close", "2026", "--reason", "annual data submitted", s, d); code != exitOK {
		t.Fatalf("year close: exit %d %s", code, stderr)
	}
	fix[col["total_net_quantity"]] = "2"
	buf.Reset()
	w = csv.NewWriter(&buf)
	_ = w.Write(rows[0])
	_ = w.Write(rows[2])
	w.Flush()
	writeFile(t, fixPath, strings.Replace(buf.String(), ",servicing,", ",manufacturing,", 1))
	code, out, _ = runCaptured(t, "shipments", "correct", fixPath, "--reason", "test", s, d)
	if code != exitRejected || !strings.Contains(out, "closed") {
		t.Fatalf("correct in a closed year: exit %d\n%s", code, out)
	}
	if code, out, _ = runCaptured(t, "year", "list", s, d); code != exitOK || !strings.Contains(out, "2026  closed") {
		t.Fatalf("year list: exit %d\n%s", code, out)
	}
}
