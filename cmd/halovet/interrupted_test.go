package main

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/halovet/halovet/service"
)

// TestCheckRecordInterrupted: a recording that the server ends part-way (here a message
// over the server's size limit after 1,005 good records; the server ends the call at once,
// and whether its first write batch was committed depends on timing) exits 5, says how many records
// were stored and that sending the file again is safe; sending the file again (without the
// oversized line) stores the rest and answers the stored ones as replays.
func TestCheckRecordInterrupted(t *testing.T) {
	ts := startTestServer(t, demoNow, func(o *service.Options) { o.Limits.MaxRecvMsgBytes = 2048 })
	if _, err := loadRegistry(t.Context(), ts.conn, demoScenario); err != nil {
		t.Fatal(err)
	}
	// Invented records: 10 kg of HCFC-22 each under new keys, then one whose key is 3000
	// bytes long (the message carrying it exceeds 2048 bytes), then two more.
	const header = "record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,declared_hs_code,declared_cas_number,declared_formula,total_net_quantity,quantity_unit,package_count,net_fill_per_package,purpose,condition,declared_composition,measured_composition\n"
	row := func(key string) string {
		return key + ",import,XA-1002,XA-IMP-2026-002,XB,2026-01-05,HCFC-22,,,,10,kg,,,servicing,,,\n"
	}
	var good []string
	const total, cut = 1007, 1005
	for i := 1; i <= total; i++ {
		good = append(good, row(fmt.Sprintf("INT-%d", i)))
	}
	dir := t.TempDir()
	broken := filepath.Join(dir, "broken.csv")
	writeFile(t, broken, header+strings.Join(good[:cut], "")+row("INT-"+strings.Repeat("X", 3000))+strings.Join(good[cut:], ""))
	code, stdout, stderr := runCaptured(t, "check", "--record", "--records-per-message", "1", "--server", ts.addr, broken)
	if code != exitInterrupted || !strings.Contains(stderr, "recording stopped part-way") ||
		!strings.Contains(stderr, "newly stored") || !strings.Contains(stderr, "sending the whole file again is safe") {
		t.Fatalf("exit %d; want %d saying how many were stored and that a retry is safe\nstdout:\n%s\nstderr:\n%s", code, exitInterrupted, stdout, stderr)
	}
	var before int
	if err := ts.st.Pool().QueryRow(t.Context(), `SELECT count(*) FROM shipments WHERE record_key LIKE 'INT-%'`).Scan(&before); err != nil {
		t.Fatal(err)
	}
	t.Logf("stored before the failure: %d; %s", before, strings.TrimSpace(stderr))
	// The message counts the records whose answers came back; a batch the server committed
	// while the call was ending may have lost its answers, so the register can hold more
	// (the retry below answers every stored one as a replay), never fewer.
	var told int
	if i := strings.Index(stderr, " of them newly stored"); i < 0 {
		t.Fatalf("no count of stored records in:\n%s", stderr)
	} else if _, err := fmt.Sscanf(stderr[strings.LastIndex(stderr[:i], " ")+1:i], "%d", &told); err != nil {
		t.Fatalf("count of stored records in %q: %v", stderr, err)
	}
	if before > cut || told > before {
		t.Fatalf("%d records stored before the failure, %d said stored; the message says:\n%s", before, told, stderr)
	}

	fixed := filepath.Join(dir, "fixed.csv")
	writeFile(t, fixed, header+strings.Join(good, ""))
	code, stdout, stderr = runCaptured(t, "check", "--record", "--records-per-message", "1", "--output", "json", "--server", ts.addr, fixed)
	if code != exitOK {
		t.Fatalf("the retry: exit %d\n%s%s", code, stdout, stderr)
	}
	if !strings.Contains(stdout, fmt.Sprintf(`"replayed": %d`, before)) {
		t.Errorf("the retry should answer the %d stored records as replays:\n%s", before, stdout)
	}
	var after int
	if err := ts.st.Pool().QueryRow(t.Context(), `SELECT count(*) FROM shipments WHERE record_key LIKE 'INT-%'`).Scan(&after); err != nil {
		t.Fatal(err)
	}
	if after != total {
		t.Errorf("%d records stored after the retry; want %d", after, total)
	}
}
