package main

import (
	"io"
	"strings"
	"testing"

	"github.com/halovet/halovet/validate"
)

// TestVerify records the demo batch through the real server, then runs halovet verify on
// its database: every invariant holds. Tampering with a line's drawn amount, and then with
// one draw (drawn kept equal to the draws), each gives a breach and exit code 1.
func TestVerify(t *testing.T) {
	ts := startTestServer(t, demoNow)
	if _, err := loadRegistry(t.Context(), ts.conn, demoScenario); err != nil {
		t.Fatal(err)
	}
	o := checkOptions{path: demoBatch, format: validate.FormatCSV, record: true, output: "text", maxLine: validate.DefaultMaxLineBytes}
	if _, err := checkFile(t.Context(), ts.conn, o, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	url := ts.st.Pool().Config().ConnString()
	verify := func() (int, string) {
		code, stdout, stderr := runCaptured(t, "verify", "--database-url", url)
		return code, stdout + stderr
	}
	code, out := verify()
	if code != exitOK || !strings.Contains(out, "every invariant holds") || strings.Contains(out, "checked 0 quota lines") || strings.Contains(out, "and 0 draws") ||
		!strings.Contains(out, " audit events (chain head at ") || strings.Contains(out, "checked 0 audit events") {
		t.Fatalf("verify after recording the demo: exit %d\n%s", code, out)
	}

	pool := ts.st.Pool()
	var lic string
	var line int
	if err := pool.QueryRow(t.Context(), `SELECT q.licence_number, q.line_number FROM quota_lines q JOIN quota_draws d USING (licence_number, line_number)
	    GROUP BY 1, 2, q.allocated, q.drawn HAVING q.allocated - q.drawn > 2 * max(d.amount) ORDER BY 1, 2 LIMIT 1`).Scan(&lic, &line); err != nil {
		t.Fatal(err)
	}
	if _, err := pool.Exec(t.Context(), `UPDATE quota_lines SET drawn = drawn - 0.000000001 WHERE licence_number = $1 AND line_number = $2`, lic, line); err != nil {
		t.Fatal(err)
	}
	code, out = verify()
	if code != exitRejected || !strings.Contains(out, "BREACH drawn-equals-draws: licence "+lic) {
		t.Fatalf("verify with drawn one step short: exit %d\n%s", code, out)
	}

	// Double one draw and its line's drawn: the sums agree, the draw exceeds its shipment.
	if _, err := pool.Exec(t.Context(), `WITH d AS (
	        SELECT shipment_id, licence_number, line_number, amount FROM quota_draws WHERE licence_number = $1 AND line_number = $2 ORDER BY shipment_id LIMIT 1),
	    u AS (UPDATE quota_draws q SET amount = q.amount * 2 FROM d WHERE q.shipment_id = d.shipment_id AND q.licence_number = d.licence_number AND q.line_number = d.line_number)
	    UPDATE quota_lines q SET drawn = q.drawn + 0.000000001 + d.amount FROM d WHERE q.licence_number = d.licence_number AND q.line_number = d.line_number`, lic, line); err != nil {
		t.Fatal(err)
	}
	code, out = verify()
	if code != exitRejected || !strings.Contains(out, "BREACH draw-matches-figures: shipment ") || strings.Contains(out, "drawn-equals-draws") {
		t.Fatalf("verify with one draw doubled: exit %d\n%s", code, out)
	}

	// An audit event altered behind the server's back (its append-only trigger switched off
	// as the superuser could): the chain check names it.
	for _, sql := range []string{`ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`,
		`UPDATE audit_log SET reason = 'altered' WHERE chain_seq = (SELECT min(chain_seq) FROM audit_log)`,
		`ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update`} {
		if _, err := pool.Exec(t.Context(), sql); err != nil {
			t.Fatalf("%s: %v", sql, err)
		}
	}
	code, out = verify()
	if code != exitRejected || !strings.Contains(out, "BREACH audit-chain: event ") {
		t.Fatalf("verify with an altered audit event: exit %d\n%s", code, out)
	}
}
