package service_test

import (
	"context"
	"errors"
	"io"
	"slices"
	"sort"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Integration tests of ShipmentService: the rules as a client sees them over gRPC, the
// stream's quota ledger and duplicate keys, and recording against a real PostgreSQL, where
// the store has the last word on quotas, keys and licence status.
//
// The registry is invented (user-assigned codes XA, XB, QM; no real country's status is
// implied). Declaration dates are fixed in 2026, in the past of any run of these tests, so
// that the schedules of that year apply whatever the date today.

const (
	shipLicence   = "XA-IMP-2026-301" // Annex C/I 1 ODP t, Annex F/I 10,000 CO2-eq t
	shipSuspended = "XA-IMP-2026-302" // suspended
	shipCompany   = "XA-3001"
	shipOther     = "XA-3002"
)

// shipRegistry loads the invented registry through LicensingService.
func shipRegistry(t testing.TB, conn *grpc.ClientConn) {
	t.Helper()
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	all := map[string]string{"A/I": "1992-01-01", "A/II": "1992-01-01", "B/I": "1994-01-01", "B/II": "1994-01-01",
		"B/III": "1994-01-01", "C/I": "2000-01-01", "C/II": "2000-01-01", "C/III": "2004-01-01", "E/I": "2002-01-01",
		"F/I": "2021-01-01", "F/II": "2021-01-01"}
	parties := []*halovetv1.Party{
		{CountryCode: "XA", Name: "Xandria (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5,
			HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, ReportingParty: true, BoundFrom: all},
		{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5,
			HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, BoundFrom: all},
		{CountryCode: "QM", Name: "Quorvia (invented; not a Party)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_PARTY},
	}
	for _, p := range parties {
		if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: p}); err != nil {
			t.Fatalf("PutParty %s: %v", p.GetCountryCode(), err)
		}
	}
	for _, c := range []string{shipCompany, shipOther} {
		if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{
			CompanyId: c, Name: "Invented importer " + c, CountryCode: "XA"}}); err != nil {
			t.Fatalf("RegisterCompany %s: %v", c, err)
		}
	}
	for _, l := range []*halovetv1.Licence{
		{LicenceNumber: shipLicence, CompanyId: shipCompany, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
			ValidFrom: "2026-01-01", ValidTo: "2026-12-31", Status: halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE,
			QuotaLines: []*halovetv1.QuotaLine{
				{LineNumber: 1, AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1"},
				{LineNumber: 2, AnnexGroup: "F/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, AllocatedAmount: "10000"}}},
		{LicenceNumber: shipSuspended, CompanyId: shipOther, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
			ValidFrom: "2026-01-01", ValidTo: "2026-12-31", Status: halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE,
			QuotaLines: []*halovetv1.QuotaLine{
				{LineNumber: 1, AnnexGroup: "F/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, AllocatedAmount: "10000"}}},
	} {
		if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Licence: l, Reason: "test"}); err != nil {
			t.Fatalf("IssueLicence %s: %v", l.GetLicenceNumber(), err)
		}
	}
	shipSetStatus(t, conn, shipSuspended, halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED)
}

func shipSetStatus(t testing.TB, conn *grpc.ClientConn, licence string, s halovetv1.LicenceStatus) {
	t.Helper()
	if _, err := halovetv1.NewLicensingServiceClient(conn).SetLicenceStatus(context.Background(),
		// From the licence's first day, so that the test records (declared in 2026) are
		// judged by it.
		&halovetv1.SetLicenceStatusRequest{LicenceNumber: licence, Status: s, Reason: "test", EffectiveDate: "2026-01-01"}); err != nil {
		t.Fatalf("SetLicenceStatus %s %v: %v", licence, s, err)
	}
}

// shipRecord is a clean import: 100 kg of HCFC-22 from XB for servicing.
func shipRecord(key string) *halovetv1.ShipmentRecord {
	return &halovetv1.ShipmentRecord{RecordKey: key, Direction: halovetv1.Direction_DIRECTION_IMPORT, CompanyId: shipCompany,
		LicenceNumber: shipLicence, PartnerCountry: "XB", DeclarationDate: "2026-06-15", Substance: "HCFC-22",
		TotalNetQuantity: "100", QuantityUnit: "kg", Purpose: halovetv1.Purpose_PURPOSE_SERVICING}
}

func shipCodes(v *halovetv1.Verdict) []string {
	var out []string
	for _, f := range v.GetFindings() {
		out = append(out, f.GetCode())
	}
	sort.Strings(out)
	return out
}

// TestCheckShipmentRules sends one record per case through CheckShipment: a clean record
// gives no finding, and each change makes its rule fire, alone. It covers one rule of each
// family end to end (the validate package tests every rule); FIELD_UNREADABLE for an enum
// number outside the wire enum can only come over the wire.
func TestCheckShipmentRules(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	future := time.Now().UTC().AddDate(0, 0, 30).Format("2006-01-02")

	cases := []struct {
		name    string
		change  func(r *halovetv1.ShipmentRecord)
		want    []string // the codes, sorted
		outcome halovetv1.Outcome
	}{
		{"clean record: no finding", func(*halovetv1.ShipmentRecord) {}, nil, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{"record: no key", func(r *halovetv1.ShipmentRecord) { r.RecordKey = "" }, []string{"KEY_MISSING"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"record: purpose number outside the enum", func(r *halovetv1.ShipmentRecord) { r.Purpose = 99 }, []string{"FIELD_UNREADABLE"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"record: no direction", func(r *halovetv1.ShipmentRecord) { r.Direction = halovetv1.Direction_DIRECTION_UNSPECIFIED }, []string{"DIRECTION_MISSING"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"identity: unknown substance", func(r *halovetv1.ShipmentRecord) { r.Substance = "unlabelled refrigerant" }, []string{"SUBST_UNKNOWN"}, halovetv1.Outcome_OUTCOME_REJECTED},
		// source: testdata/reference/halocarbons.csv (CAS 811-97-2 is HFC-134a's)
		{"identity: CAS of another substance", func(r *halovetv1.ShipmentRecord) { r.DeclaredCasNumber = "811-97-2" }, []string{"CAS_MISMATCH"}, halovetv1.Outcome_OUTCOME_REJECTED},
		// source: WCO HS 2022 (HCFC-22 is 2903.71); halocarbons.csv (its own CAS is 75-45-6)
		{"identity: right HS code and CAS", func(r *halovetv1.ShipmentRecord) { r.DeclaredHsCode, r.DeclaredCasNumber = "2903.71", "75-45-6" }, nil, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{"quantity: ambiguous unit", func(r *halovetv1.ShipmentRecord) { r.QuantityUnit = "ton" }, []string{"QTY_UNIT_UNKNOWN"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"party: non-Party partner", func(r *halovetv1.ShipmentRecord) { r.PartnerCountry = "QM" }, []string{"PARTNER_NON_PARTY"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"party: partner without settings", func(r *halovetv1.ShipmentRecord) { r.PartnerCountry = "XZ" }, []string{"PARTNER_UNKNOWN"}, halovetv1.Outcome_OUTCOME_ACCEPTED_WITH_WARNINGS},
		{"dates: a day ago", func(r *halovetv1.ShipmentRecord) { r.DeclarationDate = "2026-11-30" }, nil, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{"licence: unknown number", func(r *halovetv1.ShipmentRecord) { r.LicenceNumber = "XA-IMP-2026-399" }, []string{"LICENCE_UNKNOWN"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"licence: suspended", func(r *halovetv1.ShipmentRecord) {
			r.CompanyId, r.LicenceNumber, r.Substance = shipOther, shipSuspended, "R-410A"
		}, []string{"LICENCE_INACTIVE"}, halovetv1.Outcome_OUTCOME_REJECTED},
		// 20 t of HCFC-22 = 1.1 ODP t (ODP 0.055; source: Montreal Protocol Annex C Group I) > 1 ODP t
		{"quota: more than the line holds", func(r *halovetv1.ShipmentRecord) { r.TotalNetQuantity, r.QuantityUnit = "20", "t" }, []string{"QUOTA_EXCEEDED"}, halovetv1.Outcome_OUTCOME_REJECTED},
		// 17 t = 0.935 ODP t, 93.5 % of the line
		{"quota: near the limit", func(r *halovetv1.ShipmentRecord) { r.TotalNetQuantity, r.QuantityUnit = "17", "t" }, []string{"QUOTA_NEAR_LIMIT"}, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{"phase-out: virgin CFC-12", func(r *halovetv1.ShipmentRecord) { r.Substance = "CFC-12" }, []string{"LICENCE_SCOPE", "PHASED_OUT"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"purpose: QPS for an HCFC", func(r *halovetv1.ShipmentRecord) { r.Purpose = halovetv1.Purpose_PURPOSE_QPS }, []string{"QPS_NOT_MB"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{"purpose: recycled material", func(r *halovetv1.ShipmentRecord) { r.Condition = halovetv1.Condition_CONDITION_RECYCLED }, []string{"RECOVERED_NOT_COUNTED"}, halovetv1.Outcome_OUTCOME_ACCEPTED},
		// source: ASHRAE 34 (R-410A HFC-32 50 +0.5/-1.5, HFC-125 50 +1.5/-0.5; substances/data/blends.csv)
		{"mixture: R-410A within tolerance", func(r *halovetv1.ShipmentRecord) {
			r.Substance = "R-410A"
			r.DeclaredComposition = []*halovetv1.MixtureShare{{Identifier: "HFC-32", MassPercent: "49"}, {Identifier: "HFC-125", MassPercent: "51"}}
		}, nil, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{"mixture: R-410A out of tolerance", func(r *halovetv1.ShipmentRecord) {
			r.Substance = "R-410A"
			r.DeclaredComposition = []*halovetv1.MixtureShare{{Identifier: "HFC-32", MassPercent: "53"}, {Identifier: "HFC-125", MassPercent: "47"}}
		}, []string{"MIX_OUT_OF_TOLERANCE", "MIX_OUT_OF_TOLERANCE"}, halovetv1.Outcome_OUTCOME_REJECTED},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			rec := shipRecord("CHK-1")
			tc.change(rec)
			resp, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: rec})
			if err != nil {
				t.Fatalf("CheckShipment: %v", err)
			}
			v := resp.GetVerdict()
			if got := shipCodes(v); !slices.Equal(got, tc.want) {
				t.Errorf("codes %v; want %v (findings %v)", got, tc.want, v.GetFindings())
			}
			if v.GetOutcome() != tc.outcome {
				t.Errorf("outcome %v; want %v", v.GetOutcome(), tc.outcome)
			}
			if v.GetRecordKey() != rec.GetRecordKey() || v.GetRecorded() {
				t.Errorf("verdict key %q recorded %t; want the key sent back and nothing recorded", v.GetRecordKey(), v.GetRecorded())
			}
		})
	}

	t.Run("dates: a month ahead", func(t *testing.T) {
		// A month ahead of the real clock; the date may also lie after the 2026 licence.
		rec := shipRecord("CHK-2")
		rec.DeclarationDate = future
		resp, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: rec})
		if err != nil {
			t.Fatal(err)
		}
		if v := resp.GetVerdict(); !slices.Contains(shipCodes(v), "DATE_FUTURE") || v.GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED {
			t.Errorf("%v %v; want rejected with DATE_FUTURE", v.GetOutcome(), shipCodes(v))
		}
	})

	t.Run("figures", func(t *testing.T) {
		rec := shipRecord("FIG-1")
		rec.Substance, rec.TotalNetQuantity, rec.NetFillPerPackage, rec.PackageCount = "R-410A", "", "11.3", 10 // 11.3 kg per package × 10 = 113 kg
		resp, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: rec})
		if err != nil {
			t.Fatal(err)
		}
		f := resp.GetVerdict().GetFigures()
		// 0.113 t x (0.5 x 675 + 0.5 x 3500) = 38.1375 + 197.75; source: Montreal Protocol Annex F
		// GWPs of HFC-32 and HFC-125, ASHRAE 34 composition
		if f.GetNetMassKg() != "113" || f.GetCo2ETonnes() != "235.8875" {
			t.Errorf("net_mass_kg %q, co2e_tonnes %q; want 113 and 235.8875 exactly", f.GetNetMassKg(), f.GetCo2ETonnes())
		}
		if f.GetOdpTonnes() != "0" || f.GetKind() != halovetv1.EntryKind_ENTRY_KIND_BLEND || f.GetResolvedDesignation() != "R-410A" || !f.GetCountsInConsumption() {
			t.Errorf("figures %v; want R-410A, a blend, 0 ODP t, counted in consumption", f)
		}
		if len(f.GetComponents()) != 2 {
			t.Errorf("%d components; want HFC-32 and HFC-125", len(f.GetComponents()))
		}
	})

	// The measured composition travels on the wire record: a cylinder declared as HCFC-22
	// that reads as CFC-12 contradicts the declaration (invented reading).
	t.Run("measured composition", func(t *testing.T) {
		rec := shipRecord("MEAS-1")
		rec.MeasuredComposition = []*halovetv1.MeasuredShare{{Identifier: "CFC-12", MassPercent: "100", UncertaintyPoints: "1"}}
		resp, err := client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: rec})
		if err != nil {
			t.Fatal(err)
		}
		if v := resp.GetVerdict(); !slices.Contains(shipCodes(v), "MEASURED_CONTRADICTS") || !slices.Contains(shipCodes(v), "MEASURED_HIDDEN_CONTROLLED") ||
			v.GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED {
			t.Errorf("%v %v; want rejected with MEASURED_CONTRADICTS and MEASURED_HIDDEN_CONTROLLED", v.GetOutcome(), shipCodes(v))
		}
		rec = shipRecord("MEAS-2")
		rec.MeasuredComposition = []*halovetv1.MeasuredShare{{Identifier: "HCFC-22", MassPercent: "100"}}
		resp, err = client.CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: rec})
		if err != nil {
			t.Fatal(err)
		}
		if v := resp.GetVerdict(); !slices.Contains(shipCodes(v), "MEASURED_CONFIRMS") {
			t.Errorf("%v %v; want MEASURED_CONFIRMS", v.GetOutcome(), shipCodes(v))
		}
	})
}

// TestCheckShipmentsStream checks a stream: verdicts in order with keys and lines sent back,
// quota drawn by earlier records of the same stream, replays and key conflicts, and the
// closing summary. Nothing is stored.
func TestCheckShipmentsStream(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	stream, err := halovetv1.NewShipmentServiceClient(conn).CheckShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	// 10 t of HCFC-22 = 0.55 ODP t of the 1 ODP t line (ODP 0.055, Annex C Group I): the
	// first fits, the second does not fit after it, the third (7.2727 t, 0.39999985 ODP t)
	// does and takes the line to 95 %.
	first := shipRecord("S-1")
	first.TotalNetQuantity, first.QuantityUnit, first.SourceLine = "10", "t", 2
	second := proto.Clone(first).(*halovetv1.ShipmentRecord)
	second.RecordKey, second.SourceLine = "S-2", 3
	third := proto.Clone(first).(*halovetv1.ShipmentRecord)
	third.RecordKey, third.TotalNetQuantity, third.SourceLine = "S-3", "7.2727", 4
	replay := proto.Clone(first).(*halovetv1.ShipmentRecord)
	replay.SourceLine = 5
	conflict := proto.Clone(first).(*halovetv1.ShipmentRecord)
	conflict.TotalNetQuantity, conflict.SourceLine = "1", 6
	sent := []*halovetv1.ShipmentRecord{first, second, third, replay, conflict}
	want := []struct {
		codes   []string
		outcome halovetv1.Outcome
	}{
		{nil, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{[]string{"QUOTA_EXCEEDED"}, halovetv1.Outcome_OUTCOME_REJECTED},
		{[]string{"QUOTA_NEAR_LIMIT"}, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{[]string{"DUP_REPLAY"}, halovetv1.Outcome_OUTCOME_ACCEPTED},
		{[]string{"DUP_KEY_CONFLICT"}, halovetv1.Outcome_OUTCOME_REJECTED},
	}
	for _, r := range sent {
		if err := stream.Send(&halovetv1.CheckShipmentsRequest{Record: r}); err != nil {
			t.Fatal(err)
		}
	}
	if err := stream.CloseSend(); err != nil {
		t.Fatal(err)
	}
	for i, w := range want {
		m, err := stream.Recv()
		if err != nil {
			t.Fatalf("verdict %d: %v", i+1, err)
		}
		v := m.GetVerdict()
		if v.GetRecordKey() != sent[i].GetRecordKey() || v.GetSourceLine() != sent[i].GetSourceLine() {
			t.Errorf("verdict %d is for %q line %d; want %q line %d (verdicts come in order)", i+1, v.GetRecordKey(), v.GetSourceLine(),
				sent[i].GetRecordKey(), sent[i].GetSourceLine())
		}
		if got := shipCodes(v); !slices.Equal(got, w.codes) || v.GetOutcome() != w.outcome {
			t.Errorf("verdict %d (%s): %v %v; want %v %v", i+1, v.GetRecordKey(), v.GetOutcome(), got, w.outcome, w.codes)
		}
		if (i == 3) != v.GetReplayed() {
			t.Errorf("verdict %d: replayed %t; only the unchanged repeat of S-1 is a replay", i+1, v.GetReplayed())
		}
	}
	m, err := stream.Recv()
	if err != nil {
		t.Fatal(err)
	}
	s := m.GetSummary()
	if s.GetRecords() != 5 || s.GetAccepted() != 3 || s.GetRejected() != 2 || s.GetReplayed() != 1 || s.GetRecorded() != 0 {
		t.Errorf("summary %v; want 5 records, 3 accepted, 2 rejected, 1 replay, nothing recorded", s)
	}
	if s.GetErrorsByCode()["QUOTA_EXCEEDED"] != 1 || s.GetErrorsByCode()["DUP_KEY_CONFLICT"] != 1 {
		t.Errorf("errors by code %v; want QUOTA_EXCEEDED 1 and DUP_KEY_CONFLICT 1", s.GetErrorsByCode())
	}
	if _, err := stream.Recv(); !errors.Is(err, io.EOF) {
		t.Errorf("after the summary: %v; want the end of the stream", err)
	}
	var n int
	if err := st.Pool().QueryRow(context.Background(), `SELECT count(*) FROM shipments`).Scan(&n); err != nil || n != 0 {
		t.Errorf("check mode stored %d shipments (err %v); want none", n, err)
	}
}

// shipRecordCall records records in one RecordShipments call and returns the verdicts and
// the summary.
func shipRecordCall(t *testing.T, client halovetv1.ShipmentServiceClient, recs ...*halovetv1.ShipmentRecord) ([]*halovetv1.Verdict, *halovetv1.BatchSummary) {
	t.Helper()
	stream, err := client.RecordShipments(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range recs {
		if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: r}); err != nil {
			t.Fatal(err)
		}
	}
	if err := stream.CloseSend(); err != nil {
		t.Fatal(err)
	}
	var vs []*halovetv1.Verdict
	for {
		m, err := stream.Recv()
		if err != nil {
			t.Fatalf("RecordShipments after %d verdicts: %v", len(vs), err)
		}
		if s := m.GetSummary(); s != nil {
			if len(vs) != len(recs) {
				t.Fatalf("summary after %d verdicts; want %d", len(vs), len(recs))
			}
			return vs, s
		}
		vs = append(vs, m.GetVerdict())
	}
}

// shipLineDrawn returns a quota line's drawn amount and the sum of its draws, as numeric text.
func shipLineDrawn(t *testing.T, st *store.Store, licence string, line int) (drawn, draws string) {
	t.Helper()
	err := st.Pool().QueryRow(context.Background(), `SELECT q.drawn::text,
	    (SELECT COALESCE(sum(amount), 0)::numeric(30,9)::text FROM quota_draws d WHERE d.licence_number = q.licence_number AND d.line_number = q.line_number)
	    FROM quota_lines q WHERE q.licence_number = $1 AND q.line_number = $2`, licence, line).Scan(&drawn, &draws)
	if err != nil {
		t.Fatal(err)
	}
	return drawn, draws
}

// TestRecordShipments records through the API and checks what the store holds: accepted
// records are stored and drawn, rejected ones are not; a second call with the same keys is
// a replay (nothing drawn twice) or a conflict; within one call the store, not the check,
// decides the quota; a licence suspended after a stream began is refused when written.
func TestRecordShipments(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	client := halovetv1.NewShipmentServiceClient(conn)
	ctx := context.Background()

	a := shipRecord("R-1") // 100 kg HCFC-22 = 0.0055 ODP t (ODP 0.055, Annex C Group I)
	b := shipRecord("R-2")
	b.Substance, b.TotalNetQuantity, b.QuantityUnit = "R-410A", "1", "t" // 2087.5 CO2-eq t (Annex F GWPs, ASHRAE 34 composition)
	bad := shipRecord("R-3")
	bad.PartnerCountry = "QM"
	vs, sum := shipRecordCall(t, client, a, b, bad)
	if !vs[0].GetRecorded() || !vs[1].GetRecorded() || vs[2].GetRecorded() || vs[2].GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED {
		t.Fatalf("recorded %t %t %t, third outcome %v; want the first two stored and the non-Party import rejected",
			vs[0].GetRecorded(), vs[1].GetRecorded(), vs[2].GetRecorded(), vs[2].GetOutcome())
	}
	if sum.GetRecorded() != 2 || sum.GetRejected() != 1 || sum.GetReplayed() != 0 {
		t.Errorf("summary %v; want 2 recorded, 1 rejected", sum)
	}
	if d, s := shipLineDrawn(t, st, shipLicence, 1); d != "0.005500000" || s != d {
		t.Errorf("C/I line drawn %s, draws sum %s; want 0.005500000 both", d, s)
	}
	if d, s := shipLineDrawn(t, st, shipLicence, 2); d != "2087.500000000" || s != d {
		t.Errorf("F/I line drawn %s, draws sum %s; want 2087.500000000 both", d, s)
	}
	var odp, co2e string
	var n int
	if err := st.Pool().QueryRow(ctx, `SELECT count(*), sum(odp_tonnes)::text, sum(co2e_tonnes)::text FROM shipments`).Scan(&n, &odp, &co2e); err != nil {
		t.Fatal(err)
	}
	if n != 2 || odp != "0.005500000" || co2e != "2087.500000000" {
		t.Errorf("stored %d shipments, %s ODP t, %s CO2-eq t; want 2, 0.005500000, 2087.500000000", n, odp, co2e)
	}

	first := vs
	t.Run("second call: replay and conflict", func(t *testing.T) {
		changed := proto.Clone(b).(*halovetv1.ShipmentRecord)
		changed.TotalNetQuantity = "2"
		vs, sum := shipRecordCall(t, client, a, changed)
		// A replay answers the verdict stored with the record, unchanged but for replayed.
		again := proto.Clone(vs[0]).(*halovetv1.Verdict)
		again.Replayed = false
		if !vs[0].GetReplayed() || !vs[0].GetRecorded() || vs[0].GetShipmentId() == 0 || !proto.Equal(again, first[0]) {
			t.Errorf("repeat of R-1: %v; want the first answer %v with replayed set", vs[0], first[0])
		}
		if vs[1].GetRecorded() || !slices.Equal(shipCodes(vs[1]), []string{"DUP_KEY_CONFLICT"}) {
			t.Errorf("changed R-2: recorded %t codes %v; want rejected with DUP_KEY_CONFLICT", vs[1].GetRecorded(), shipCodes(vs[1]))
		}
		if sum.GetReplayed() != 1 || sum.GetRecorded() != 0 {
			t.Errorf("summary %v; want 1 replay, nothing recorded", sum)
		}
		if d, _ := shipLineDrawn(t, st, shipLicence, 1); d != "0.005500000" {
			t.Errorf("C/I line drawn %s after a replay; want still 0.005500000", d)
		}
	})

	t.Run("the store decides the quota within one call", func(t *testing.T) {
		// 10 t of HCFC-22 = 0.55 ODP t each: each passes the check on its own (the check
		// in recording mode sees the balance the call began with), but only one fits.
		x, y := shipRecord("Q-1"), shipRecord("Q-2")
		x.TotalNetQuantity, x.QuantityUnit = "10", "t"
		y.TotalNetQuantity, y.QuantityUnit = "10", "t"
		z := shipRecord("Q-3") // 0.0055 ODP t still fits after the first
		vs, _ := shipRecordCall(t, client, x, y, z)
		if !vs[0].GetRecorded() || vs[1].GetRecorded() || !vs[2].GetRecorded() {
			t.Fatalf("recorded %t %t %t; want the first and third stored, the second turned down", vs[0].GetRecorded(), vs[1].GetRecorded(), vs[2].GetRecorded())
		}
		var errs []string
		for _, f := range vs[1].GetFindings() {
			if f.GetSeverity() == halovetv1.Severity_SEVERITY_ERROR {
				errs = append(errs, f.GetCode())
			}
		}
		if !slices.Equal(errs, []string{"QUOTA_EXCEEDED"}) || vs[1].GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED {
			t.Errorf("second 10 t: %v errors %v; want rejected with QUOTA_EXCEEDED", vs[1].GetOutcome(), errs)
		}
		// 0.0055 + 0.55 + 0.0055
		if d, s := shipLineDrawn(t, st, shipLicence, 1); d != "0.561000000" || s != d {
			t.Errorf("C/I line drawn %s, draws sum %s; want 0.561000000 both", d, s)
		}
	})

	t.Run("a licence suspended while a call runs", func(t *testing.T) {
		stream, err := client.RecordShipments(ctx)
		if err != nil {
			t.Fatal(err)
		}
		send := func(r *halovetv1.ShipmentRecord) *halovetv1.Verdict {
			t.Helper()
			if err := stream.Send(&halovetv1.RecordShipmentsRequest{Record: r}); err != nil {
				t.Fatal(err)
			}
			m, err := stream.Recv() // the server writes when the client pauses
			if err != nil {
				t.Fatal(err)
			}
			return m.GetVerdict()
		}
		if v := send(shipRecord("L-1")); !v.GetRecorded() {
			t.Fatalf("L-1 not recorded: %v", v.GetFindings())
		}
		shipSetStatus(t, conn, shipLicence, halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED)
		t.Cleanup(func() { shipSetStatus(t, conn, shipLicence, halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE) })
		v := send(shipRecord("L-2"))
		if v.GetRecorded() || !slices.Contains(shipCodes(v), "LICENCE_INACTIVE") {
			t.Errorf("L-2 after the suspension: recorded %t codes %v; want refused with LICENCE_INACTIVE", v.GetRecorded(), shipCodes(v))
		}
		if err := stream.CloseSend(); err != nil {
			t.Fatal(err)
		}
		m, err := stream.Recv()
		if err != nil || m.GetSummary().GetRecorded() != 1 {
			t.Errorf("summary %v (err %v); want 1 recorded", m.GetSummary(), err)
		}
	})
}

// TestShipmentServiceErrors: requests the service cannot judge are errors, not verdicts.
func TestShipmentServiceErrors(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewShipmentServiceClient(conn)
	ctx := context.Background()

	// No reporting Party configured yet.
	_, err := client.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: shipRecord("E-1")})
	if st, _ := status.FromError(err); st.Code() != codes.FailedPrecondition {
		t.Errorf("CheckShipment without a reporting Party: %v; want FailedPrecondition", err)
	}
	shipRegistry(t, conn)

	_, err = client.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{})
	if st, _ := status.FromError(err); st.Code() != codes.InvalidArgument {
		t.Errorf("CheckShipment without a record: %v; want InvalidArgument", err)
	}

	stream, err := client.RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if err := stream.Send(&halovetv1.RecordShipmentsRequest{}); err != nil {
		t.Fatal(err)
	}
	_ = stream.CloseSend()
	_, err = stream.Recv()
	if st, _ := status.FromError(err); st.Code() != codes.InvalidArgument {
		t.Errorf("RecordShipments with an empty message: %v; want InvalidArgument", err)
	}
}
