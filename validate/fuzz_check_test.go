package validate

import (
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/halovet/halovet/terms"
)

// FuzzCheck feeds arbitrary field text through every rule: Check must not panic, every
// finding must carry a code of the table with the table's severity, and the outcome must
// follow from the findings. The input is one string of "|"-separated fields (key, company,
// licence, partner, date, substance, HS code, CAS, formula, quantity, unit, container count,
// composition), so the fuzzer minimizes one value rather than thirteen.
func FuzzCheck(f *testing.F) {
	f.Add("K|CO-1|XA-IMP-2025-001|XB|2025-06-01|HCFC-22|2903.71|75-45-6|CHClF2|13.6|kg|10|")
	f.Add("||||||||||||")
	f.Add("K|CO-1|XA-IMP-2025-001|XB|2025-06-01||||||kg|0|HFC-32=50;HFC-125=50")
	f.Add("K|CO-2|XA-FEED-2025-005|xd|1990-01-01|CFC-12|382711|75-71-8|CCl2F2|1e3|ton|x|=5")
	f.Add("K|CO-1|XA-IMP-2025-008|QZ|2033-01-01|R-402A|3827.31|1-11-1|C(|-0|lb|1099511627776|R-410A=100")
	f.Add("K\x00|CO-1|XA-IMP-2025-001|XB|2025-06-01|HCFC-22|2903.71|75-45-6|CHCl\x00F2|13.6|kg|10|")
	f.Add("K|CO-1|XA-IMP-\u202e1|X\u200bB|2025-06-01|HCFC-22\xff||||+100|kg|0|")
	f.Add("K|CO-1|XA-IMP-2025-001|XB|2025-06-01|HCFC-22||||0.0000000009|kg|1|")
	f.Add("K|CO-1|XA-IMP-2025-001|XB|2025-06-01||||||kg|0|" + strings.Repeat("HFC-32=1;", 40))
	env := testEnv(f)
	f.Fuzz(func(t *testing.T, data string) {
		p := strings.SplitN(data, "|", 13)
		for len(p) < 13 {
			p = append(p, "")
		}
		containers, _ := strconv.ParseInt(p[11], 10, 64)
		r := Record{Key: p[0], Direction: terms.DirectionImport, CompanyID: p[1], LicenceNumber: p[2], PartnerCountry: p[3],
			DeclarationDate: p[4], Substance: p[5], HSCode: p[6], CAS: p[7], Formula: p[8], TotalQuantity: p[9], Unit: p[10],
			PackageCount: containers, Purpose: terms.PurposeServicing}
		if shares, err := parseComposition(p[12]); err == nil {
			r.Composition = shares
		}
		v := Check(env, &r, NewMemoryLedger())
		for _, fd := range v.Findings {
			info, ok := LookupCode(fd.Code)
			if !ok || info.Severity != fd.Severity || fd.Message == "" {
				t.Fatalf("finding %+v: code unknown, severity off the table, or no message", fd)
			}
		}
		if v.Outcome != OutcomeOf(v.Findings) {
			t.Fatalf("outcome %v does not follow from %v", v.Outcome, v.Findings)
		}
		if v.Outcome == OutcomeRejected && v.Draws != nil {
			t.Fatal("a rejected record must not draw")
		}
		if len(v.Findings) > MaxFindings+1 {
			t.Fatalf("%d findings, above the cap of %d and its notice", len(v.Findings), MaxFindings)
		}
		if v.Outcome != OutcomeRejected {
			texts := p[:11]
			for _, sh := range r.Composition {
				texts = append(texts, sh.Identifier)
			}
			for _, s := range texts {
				if !Storable(s) {
					t.Fatalf("accepted a record with text the store cannot hold: %q", s)
				}
			}
		}
		if len(v.Fingerprint) != 64 {
			t.Fatalf("fingerprint %q", v.Fingerprint)
		}
	})
}

// TestCheckConcurrent runs checks on one Env from many goroutines (run with -race).
func TestCheckConcurrent(t *testing.T) {
	env := testEnv(t)
	recs := typicalRecords()
	want := make([]Verdict, len(recs))
	for i := range recs {
		want[i] = Check(env, &recs[i], nil)
	}
	var wg sync.WaitGroup
	errs := make(chan string, 8)
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			ledger := NewMemoryLedger()
			for i := 0; i < 200; i++ {
				k := i % len(recs)
				r := recs[k]
				v := Check(env, &r, ledger)
				if v.Fingerprint != want[k].Fingerprint || v.Figures.NetMassKg != want[k].Figures.NetMassKg {
					errs <- "concurrent check differs from the sequential one"
					return
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Error(e)
	}
}

func TestNonPartyTypeIsBoundByNothing(t *testing.T) {
	p := PartySettings{Type: terms.PartyTypeNonParty, BoundFrom: everyGroup(d("1989-01-01")), Known: true}
	if p.BoundOn("C/I", d("2025-01-01")) {
		t.Error("a country of type non-Party must not count as bound")
	}
	p.Type = terms.PartyTypeArticle5
	if !p.BoundOn("C/I", d("2025-01-01")) || p.BoundOn("C/I", d("1988-12-31")) {
		t.Error("a Party is bound from its BoundFrom date on")
	}
}
