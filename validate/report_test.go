package validate

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

// batchFile is an INVENTED batch: a clean HCFC import, an R-32 import (A2L), an R-290 import
// (A3, not controlled), a rejected record and an unreadable line.
const batchFile = csvHeader + "\n" +
	"E-1,import,CO-1,XA-IMP-2025-001,XB,2025-06-01,HCFC-22,2903.71,75-45-6,CHClF2,136,kg,10,servicing,virgin,\n" +
	"E-2,import,CO-1,XA-IMP-2025-001,XB,2025-06-02,R-32,2903.42,75-10-5,,100,kg,0,servicing,virgin,\n" +
	"E-3,import,CO-1,,XB,2025-06-02,R-290,,,,50,kg,0,servicing,virgin,\n" +
	"E-4,import,CO-1,XA-IMP-2025-001,XB,2025-06-03,HCFC-22,,,,\"1,5\",kg,0,servicing,virgin,\n" +
	"E-5,import,\"CO-1\n"

func checkBatch(t *testing.T) ([]Verdict, []terms.Direction) {
	t.Helper()
	env := testEnv(t)
	rr, err := NewCSVReader(strings.NewReader(batchFile))
	if err != nil {
		t.Fatal(err)
	}
	b := NewBatch(env)
	var vs []Verdict
	var dirs []terms.Direction
	for _, it := range readAll(t, rr) {
		if it.lerr != nil {
			vs = append(vs, LineErrorVerdict(it.lerr))
			dirs = append(dirs, terms.DirectionUnspecified)
			continue
		}
		vs = append(vs, b.Check(&it.rec))
		dirs = append(dirs, it.rec.Direction)
	}
	return vs, dirs
}

func TestLineErrorVerdict(t *testing.T) {
	v := LineErrorVerdict(&LineError{Line: 9, Reason: "stray quote"})
	if v.Outcome != OutcomeRejected || v.Line != 9 || len(v.Findings) != 1 || v.Findings[0].Code != CodeLineUnreadable || v.Findings[0].Message != "stray quote" {
		t.Errorf("LineErrorVerdict = %+v", v)
	}
	if v.Resolved {
		t.Error("an unreadable line has no figures")
	}
}

func TestBatchEndToEnd(t *testing.T) {
	vs, _ := checkBatch(t)
	want := []struct {
		line    int64
		outcome Outcome
		code    string
	}{
		{2, OutcomeAccepted, ""},
		{3, OutcomeAccepted, ""},
		{4, OutcomeAccepted, CodeSubstNotControlled},
		{5, OutcomeRejected, CodeQtyFormat},
		{6, OutcomeRejected, CodeLineUnreadable},
	}
	if len(vs) != len(want) {
		t.Fatalf("%d verdicts, want %d", len(vs), len(want))
	}
	for i, w := range want {
		v := vs[i]
		if v.Line != w.line || v.Outcome != w.outcome {
			t.Errorf("verdict %d: line %d outcome %v, want line %d outcome %v (%v)", i, v.Line, v.Outcome, w.line, w.outcome, v.Findings)
		}
		if _, ok := codesOf(v)[w.code]; w.code != "" && !ok {
			t.Errorf("line %d should carry %s: %v", w.line, w.code, v.Findings)
		}
	}
}

func TestReportWriters(t *testing.T) {
	vs, _ := checkBatch(t)
	var cb, jb bytes.Buffer
	cw, err := NewCSVReport(&cb)
	if err != nil {
		t.Fatal(err)
	}
	jw := NewJSONLReport(&jb)
	for i := range vs {
		for _, w := range []ReportWriter{cw, jw} {
			if err := w.Write(&vs[i]); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := cw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := jw.Close(); err != nil {
		t.Fatal(err)
	}

	rows, err := csv.NewReader(&cb).ReadAll()
	if err != nil {
		t.Fatalf("CSV report does not parse: %v", err)
	}
	if len(rows) != len(vs)+1 || strings.Join(rows[0], ",") != strings.Join(reportColumns, ",") {
		t.Fatalf("CSV report: %d rows, header %v", len(rows), rows[0])
	}
	first := rows[1]
	// 136 kg HCFC-22: 0.00748 ODP t (ODP 0.055, Montreal Protocol Annex C Group I).
	if first[0] != "2" || first[1] != "E-1" || first[2] != "accepted" || first[3] != "HCFC-22" || first[5] != "136" || first[6] != "0.00748" || first[8] != "true" {
		t.Errorf("first CSV row %v", first)
	}
	last := rows[len(rows)-1]
	if last[0] != "6" || last[2] != "rejected" || last[9] != "1" || last[12] != CodeLineUnreadable || last[3] != "" {
		t.Errorf("unreadable-line CSV row %v", last)
	}

	sc := bufio.NewScanner(&jb)
	n := 0
	for sc.Scan() {
		var obj map[string]any
		if err := json.Unmarshal(sc.Bytes(), &obj); err != nil {
			t.Fatalf("JSON report line %d: %v", n+1, err)
		}
		if int64(obj["source_line"].(float64)) != vs[n].Line || obj["outcome"] != vs[n].Outcome.String() {
			t.Errorf("JSON line %d: %v", n+1, obj)
		}
		if n == 0 {
			fig := obj["figures"].(map[string]any)
			// 136 kg HCFC-22 × ODP 0.055 / 1000 = 0.00748 ODP t (Montreal Protocol Annex C Group I), as
			// an exact decimal string; "0" CO2-eq t (no Annex F component).
			if fig["resolved_designation"] != "HCFC-22" || fig["net_mass_kg"] != "136" || fig["odp_tonnes"] != "0.00748" || fig["co2e_tonnes"] != "0" {
				t.Errorf("JSON figures %v", fig)
			}
			draws := obj["draws"].([]any)
			if len(draws) != 1 || draws[0].(map[string]any)["unit"] != "ODP t" {
				t.Errorf("JSON draws %v", draws)
			}
		}
		n++
	}
	if n != len(vs) {
		t.Errorf("JSON report has %d lines, want %d", n, len(vs))
	}
}

func TestCSVReportDefusesFormulas(t *testing.T) {
	var b bytes.Buffer
	w, _ := NewCSVReport(&b)
	v := Verdict{RecordKey: "=HYPERLINK(\"x\")", Line: 1, Outcome: OutcomeAccepted}
	if err := w.Write(&v); err != nil {
		t.Fatal(err)
	}
	_ = w.Close()
	rows, _ := csv.NewReader(&b).ReadAll()
	if rows[1][1] != "'=HYPERLINK(\"x\")" {
		t.Errorf("record key cell %q should start with an apostrophe", rows[1][1])
	}
}

func TestSummaryText(t *testing.T) {
	vs, dirs := checkBatch(t)
	s := NewSummary()
	for i := range vs {
		s.Add(&vs[i], dirs[i])
	}
	if s.Records != 5 || s.Accepted != 3 || s.AcceptedWithWarnings != 0 || s.Rejected != 2 {
		t.Errorf("summary counts %+v", s)
	}
	if s.ByCode[CodeQtyFormat] != 1 || s.ByCode[CodeLineUnreadable] != 1 || s.ByCode[CodeSubstNotControlled] != 1 {
		t.Errorf("by code %v", s.ByCode)
	}
	if e := s.CountsBySeverity(SeverityError); e[CodeQtyFormat] != 1 || e[CodeSubstNotControlled] != 0 {
		t.Errorf("errors by code %v", e)
	}
	imp := s.ByDirection[terms.DirectionImport]
	if imp == nil || imp.Records != 3 || imp.NetMassKg.String() != "286" {
		t.Errorf("import totals %+v; want 3 accepted records, 136 + 100 + 50 kg", imp)
	}
	var out strings.Builder
	if err := s.WriteText(&out); err != nil {
		t.Fatal(err)
	}
	text := out.String()
	for _, want := range []string{
		"Records", "rejected", "QTY_FORMAT", "LINE_UNREADABLE",
		"Lower flammability (ASHRAE 34 class A2L)", // R-32 is A2L (catalogue safety class)
		"Highly flammable (ASHRAE 34 class A3)",    // R-290 is A3
		"applies to: R-290",
		DecisionSupportNotice,
	} {
		if !strings.Contains(text, want) {
			t.Errorf("summary text lacks %q:\n%s", want, text)
		}
	}
	if !strings.HasSuffix(strings.TrimSpace(text), DecisionSupportNotice) {
		t.Error("the text report must end with the decision-support notice")
	}
	if strings.Count(text, "decision support") != 1 {
		t.Error("the decision-support sentence should appear once")
	}
}
