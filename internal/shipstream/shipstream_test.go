package shipstream_test

import (
	"strings"
	"testing"

	"github.com/halovet/halovet/internal/servertest"
	"github.com/halovet/halovet/internal/shipstream"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/validate"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

// startServer runs the real server, with open access, on a fresh migrated database that
// holds the seed catalogue and, of a registry, only the reporting Party (XA, invented):
// no companies, no licences. It returns a client of ShipmentService.
func startServer(t *testing.T) halovetv1.ShipmentServiceClient {
	t.Helper()
	ts := servertest.Start(t, "halovet_shipstream", service.Options{OpenAccess: true})
	if _, err := halovetv1.NewLicensingServiceClient(ts.Conn).PutParty(t.Context(), &halovetv1.PutPartyRequest{Party: &halovetv1.Party{
		CountryCode: "XA", Name: "Xandria (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5,
		HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, ReportingParty: true}}); err != nil {
		t.Fatal(err)
	}
	return halovetv1.NewShipmentServiceClient(ts.Conn)
}

// batch is an invented file: five records the server answers, a line with too few fields
// (line 4) and a record whose direction cannot be read (line 6), both answered here.
const batch = `record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,total_net_quantity,quantity_unit,purpose
SS-1,import,XA-9001,XA-IMP-9,XB,2026-01-05,R-410A,100,kg,servicing
SS-2,import,XA-9001,XA-IMP-9,XB,2026-01-05,HCFC-22,0.7,t,servicing
SS-3,import
SS-4,import,XA-9001,XA-IMP-9,XB,2026-01-06,R-134a,12,kg,servicing
SS-5,sideways,XA-9001,XA-IMP-9,XB,2026-01-06,R-134a,12,kg,servicing
SS-6,export,XA-9001,XA-EXP-9,XC,2026-01-07,HCFC-22,3,t,servicing
SS-7,import,XA-9001,XA-IMP-9,XB,2026-01-08,R-404A,5,kg,servicing
`

// answered is one line of the batch with its verdict: local, or the server's.
type answered struct {
	local  *validate.Verdict
	remote *halovetv1.Verdict
}

// run sends the batch through st, perMessage records to a message, and matches every
// line to its verdict, as the check verb and the console do.
func run(t *testing.T, st shipstream.Stream, perMessage int) ([]answered, *shipstream.Answers, *shipstream.Counts) {
	t.Helper()
	rd, err := validate.NewReader(validate.FormatCSV, strings.NewReader(batch))
	if err != nil {
		t.Fatal(err)
	}
	var counts shipstream.Counts
	items, wait := shipstream.Start(t.Context(), rd, st, &counts, perMessage)
	answers := shipstream.NewAnswers(st)
	var out []answered
	for it := range items {
		if it.Local != nil {
			out = append(out, answered{local: it.Local})
			continue
		}
		v, err := answers.Next()
		if err != nil {
			t.Fatalf("line %d: %v", len(out)+2, err)
		}
		out = append(out, answered{remote: v})
	}
	if err := wait(); err != nil {
		t.Fatal(err)
	}
	return out, answers, &counts
}

// TestCheckAnswersEveryLineInOrder: every line has its verdict in the file's order,
// whatever the number of records to a message; the bad lines are answered here and never
// sent; the summary counts what was sent.
func TestCheckAnswersEveryLineInOrder(t *testing.T) {
	svc := startServer(t)
	for _, perMessage := range []int{1, 2, 500} {
		s, err := svc.CheckShipments(t.Context())
		if err != nil {
			t.Fatal(err)
		}
		got, answers, counts := run(t, shipstream.Check(s, false), perMessage)
		var keys []string
		for i, a := range got {
			switch {
			case a.local != nil && a.local.RecordKey == "":
				keys = append(keys, "(line)")
				if a.local.Line != int64(i+2) || a.local.Outcome != validate.OutcomeRejected {
					t.Errorf("%d per message: the unreadable line answered as line %d, %v", perMessage, a.local.Line, a.local.Outcome)
				}
			case a.local != nil:
				keys = append(keys, a.local.RecordKey+" (here)")
			default:
				keys = append(keys, a.remote.GetRecordKey())
				if a.remote.GetRecorded() {
					t.Errorf("%d per message: %s recorded by CheckShipments", perMessage, a.remote.GetRecordKey())
				}
			}
		}
		const want = "SS-1 SS-2 (line) SS-4 SS-5 (here) SS-6 SS-7"
		if strings.Join(keys, " ") != want {
			t.Errorf("%d per message: answers %q, want %q", perMessage, strings.Join(keys, " "), want)
		}
		if counts.Sent.Load() != 5 || counts.Read.Load() != 7 {
			t.Errorf("%d per message: %d sent, %d read; want 5 and 7", perMessage, counts.Sent.Load(), counts.Read.Load())
		}
		sum, err := answers.Summary(counts.Sent.Load())
		if err != nil {
			t.Fatalf("%d per message: %v", perMessage, err)
		}
		if sum.GetRecords() != 5 || sum.GetRecorded() != 0 {
			t.Errorf("%d per message: summary %v, want 5 records, none recorded", perMessage, sum)
		}
	}
}

// TestCheckAsksForComponentFigures: with componentFigures the verdict of R-410A carries
// its two components (R-32/R-125, ASHRAE 34), without it none.
func TestCheckAsksForComponentFigures(t *testing.T) {
	svc := startServer(t)
	for _, with := range []bool{false, true} {
		s, err := svc.CheckShipments(t.Context())
		if err != nil {
			t.Fatal(err)
		}
		got, _, _ := run(t, shipstream.Check(s, with), 2)
		n := len(got[0].remote.GetFigures().GetComponents())
		if want := map[bool]int{false: 0, true: 2}[with]; n != want {
			t.Errorf("componentFigures %v: %d components of R-410A, want %d", with, n, want)
		}
	}
}

// TestRecordStream: RecordShipments through the same adapters. The registry is empty, so
// no licence covers the invented records: each is answered rejected and nothing is stored.
func TestRecordStream(t *testing.T) {
	svc := startServer(t)
	s, err := svc.RecordShipments(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	got, answers, counts := run(t, shipstream.Record(s), 2)
	if len(got) != 7 {
		t.Fatalf("%d answers, want 7", len(got))
	}
	for _, a := range got {
		if a.remote != nil && (a.remote.GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED || a.remote.GetRecorded()) {
			t.Errorf("%s: %v recorded=%v, want rejected and not recorded", a.remote.GetRecordKey(), a.remote.GetOutcome(), a.remote.GetRecorded())
		}
	}
	sum, err := answers.Summary(counts.Sent.Load())
	if err != nil {
		t.Fatal(err)
	}
	if sum.GetRecords() != 5 || sum.GetRejected() != 5 || sum.GetRecorded() != 0 {
		t.Errorf("summary %v, want 5 records, 5 rejected, none recorded", sum)
	}
}

// TestAnswersRefuseWhatDoesNotAddUp: a summary that counts other than what was sent, and
// a verdict asked for after the last record, are errors that say so.
func TestAnswersRefuseWhatDoesNotAddUp(t *testing.T) {
	svc := startServer(t)
	s, err := svc.CheckShipments(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	_, answers, counts := run(t, shipstream.Check(s, false), 2)
	if _, err := answers.Summary(counts.Sent.Load() + 1); err == nil || !strings.Contains(err.Error(), "the server counted 5 records, 6 were sent") {
		t.Errorf("a summary of 5 for 6 sent: %v", err)
	}

	s, err = svc.CheckShipments(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	_, answers, _ = run(t, shipstream.Check(s, false), 2)
	if _, err := answers.Next(); err == nil || !strings.Contains(err.Error(), "ended the stream before answering every record") {
		t.Errorf("a verdict past the last record: %v", err)
	}
}
