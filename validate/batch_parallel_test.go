package validate

import (
	"fmt"
	"reflect"
	"testing"
)

// parallelMessage is one stream message (INVENTED records) in which order matters: 1.5 t
// of HCFC-22 (0.0825 ODP t; ODP 0.055, Montreal Protocol Annex C Group I) every sixth
// record, with smaller ones, on the C/I line of XA-IMP-2025-001 (1 ODP t, 0.5 drawn),
// enough to run the line out part-way through; HFC records on other lines in between; records on a second company's
// licence that no one else draws on; repeated keys with the same content (replays) and
// other content (conflicts); records without a key; and a record the rules reject.
func parallelMessage() []Record {
	var rs []Record
	for i := 0; i < 90; i++ {
		r := baseRecord()
		r.Key, r.Line = fmt.Sprintf("P-%d", i), int64(i+2)
		switch i % 6 {
		case 0:
			r.TotalQuantity, r.Unit, r.PackageCount = "1.5", "t", 0 // 0.0825 ODP t
		case 1:
			r404A(&r)
			r.TotalQuantity, r.PackageCount = "10.9", 20
		case 2:
			r.CompanyID, r.LicenceNumber = "CO-2", "XA-IMP-2025-004"
		case 3:
			if i > 10 {
				r = rs[i-6] // a replay of an earlier record of the message
				r.Line = int64(i + 2)
			}
		case 4:
			if i > 10 {
				r = rs[i-8]
				r.TotalQuantity, r.Line = "1", int64(i+2) // a conflict
			}
		case 5:
			if i%4 == 1 {
				r.Key = "" // KEY_MISSING: rejected, still checked in order
			}
		}
		rs = append(rs, r)
	}
	return rs
}

// TestCheckAllMatchesCheckInOrder: CheckAll gives, record for record, the verdicts that
// Batch.Check gives one record at a time, and leaves the same quota drawn and the same
// keys remembered; so does a second message on the same batch.
func TestCheckAllMatchesCheckInOrder(t *testing.T) {
	env := testEnv(t)
	msg := parallelMessage()
	seq, par := NewBatch(env), NewBatch(env)
	for round := 0; round < 2; round++ {
		want := make([]Verdict, len(msg))
		for i := range msg {
			want[i] = seq.Check(&msg[i])
		}
		got := make([]Verdict, len(msg))
		par.CheckAll(msg, got)
		for i := range msg {
			if !reflect.DeepEqual(got[i], want[i]) {
				t.Errorf("round %d record %d (%s): CheckAll %+v\n one by one %+v", round+1, i, msg[i].Key, got[i], want[i])
			}
		}
		if !reflect.DeepEqual(par.ledger.m, seq.ledger.m) {
			t.Errorf("round %d: ledgers differ: CheckAll %v, one by one %v", round+1, par.ledger.m, seq.ledger.m)
		}
		if par.seen.Len() != seq.seen.Len() {
			t.Errorf("round %d: %d keys remembered, one by one %d", round+1, par.seen.Len(), seq.seen.Len())
		}
		// The message must exercise what makes order matter.
		codes := map[string]int{}
		for _, v := range want {
			for _, f := range v.Findings {
				codes[f.Code]++
			}
		}
		for _, c := range []string{CodeQuotaExceeded, CodeDupReplay, CodeDupKeyConflict, CodeKeyMissing} {
			if codes[c] == 0 {
				t.Errorf("round %d: no %s in the message; the test no longer covers it (codes %v)", round+1, c, codes)
			}
		}
	}
}
