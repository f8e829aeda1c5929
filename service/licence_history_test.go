package service_test

import (
	"context"
	"slices"
	"strings"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// Licence history, the reporting Party and registry loads over gRPC, against the invented
// registry of shipRegistry. The dates of the acceptance case (a suspension dated
// 2026-09-15, declarations of 2026-09-16 and 2026-06-18) are the issue's own.

// checkOn checks shipRecord declared on day d against licence shipLicence and returns its codes.
func checkOn(t *testing.T, conn *grpc.ClientConn, day string) []string {
	t.Helper()
	r := shipRecord("chk-" + day)
	r.DeclarationDate = day
	resp, err := halovetv1.NewShipmentServiceClient(conn).CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: r})
	if err != nil {
		t.Fatalf("CheckShipment %s: %v", day, err)
	}
	return shipCodes(resp.GetVerdict())
}

// registerState is what a refused call must leave as it was: every audit entry and the
// licence's version and history.
func registerState(t *testing.T, st *store.Store) string {
	t.Helper()
	var s string
	if err := st.Pool().QueryRow(context.Background(), `SELECT (SELECT count(*) FROM audit_log)::text || '/' ||
	    (SELECT count(*) FROM licence_events)::text || '/' || (SELECT string_agg(licence_number || ':' || version || ':' || status, ',' ORDER BY licence_number) FROM licences) || '/' ||
	    (SELECT count(*) FROM parties)::text || '/' || (SELECT count(*) FROM companies)::text || '/' ||
	    coalesce((SELECT country_code FROM parties WHERE reporting_party), '-') || '/' ||
	    (SELECT string_agg(licence_number || line_number || unit || allocated::text, ',' ORDER BY licence_number, line_number) FROM quota_lines)`).Scan(&s); err != nil {
		t.Fatal(err)
	}
	return s
}

func wantCode(t *testing.T, what string, err error, want codes.Code, contains string) {
	t.Helper()
	st, _ := status.FromError(err)
	if err == nil || st.Code() != want || !strings.Contains(st.Message(), contains) {
		t.Errorf("%s: error %v; want %v mentioning %q", what, err, want, contains)
	}
}

func TestLicenceStatusJudgedOnTheDeclarationDate(t *testing.T) {
	conn, _ := startTestServer(t)
	shipRegistry(t, conn)
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	resp, err := lic.SetLicenceStatus(ctx, &halovetv1.SetLicenceStatusRequest{LicenceNumber: shipLicence,
		Status: halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED, EffectiveDate: "2026-09-15", Reason: "inspection pending"})
	if err != nil {
		t.Fatal(err)
	}
	if resp.GetChange() != halovetv1.LicenceEventKind_LICENCE_EVENT_KIND_SUSPENDED || resp.GetLicence().GetVersion() != 2 {
		t.Fatalf("answer %v", resp)
	}
	if c := checkOn(t, conn, "2026-09-16"); !slices.Contains(c, "LICENCE_INACTIVE") {
		t.Errorf("declared 2026-09-16, after the suspension: codes %v, want LICENCE_INACTIVE", c)
	}
	if c := checkOn(t, conn, "2026-06-18"); len(c) != 0 {
		t.Errorf("declared 2026-06-18, before the suspension: codes %v, want none", c)
	}
	r := shipRecord("rec-0618")
	r.DeclarationDate = "2026-06-18"
	if vs, _ := shipRecordCall(t, halovetv1.NewShipmentServiceClient(conn), r); !vs[0].GetRecorded() {
		t.Errorf("recording a declaration of 2026-06-18: not recorded, %v", vs[0].GetFindings())
	}

	// Reinstated through a load from 2026-10-01.
	got, _ := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: shipLicence})
	l := got.GetLicence()
	l.Status, l.StatusEffectiveDate = halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE, "2026-10-01"
	load, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Licences: []*halovetv1.Licence{l}, Reason: "inspection passed"})
	if err != nil {
		t.Fatal(err)
	}
	if o := load.GetObjects(); len(o) != 1 || o[0].GetResult() != halovetv1.LoadResult_LOAD_RESULT_CHANGED ||
		!slices.Equal(o[0].GetChanges(), []string{"reinstated from 2026-10-01"}) {
		t.Fatalf("load report %v", load.GetObjects())
	}
	if c := checkOn(t, conn, "2026-10-02"); len(c) != 0 {
		t.Errorf("declared 2026-10-02, after the reinstatement by load: codes %v, want none", c)
	}
	if c := checkOn(t, conn, "2026-09-20"); !slices.Contains(c, "LICENCE_INACTIVE") {
		t.Errorf("declared 2026-09-20, while suspended: codes %v", c)
	}
	h, err := lic.ListLicenceHistory(ctx, &halovetv1.ListLicenceHistoryRequest{LicenceNumber: shipLicence})
	if err != nil {
		t.Fatal(err)
	}
	var kinds []string
	for _, e := range h.GetEvents() {
		kinds = append(kinds, e.GetKind().String()+" "+e.GetEffectiveDate()+" "+e.GetReason())
	}
	want := []string{"LICENCE_EVENT_KIND_ISSUED 2026-01-01 test", "LICENCE_EVENT_KIND_SUSPENDED 2026-09-15 inspection pending",
		"LICENCE_EVENT_KIND_REINSTATED 2026-10-01 inspection passed"}
	if !slices.Equal(kinds, want) || len(h.GetStatusHistory()) != 3 {
		t.Fatalf("history %q (periods %v), want %q", kinds, h.GetStatusHistory(), want)
	}
}

// Every new call refuses bad input with a clear error naming the field, and changes nothing.
func TestLicenceHistoryCallsRefuseBadInput(t *testing.T) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	if vs, _ := shipRecordCall(t, halovetv1.NewShipmentServiceClient(conn), shipRecord("drawn-1")); !vs[0].GetRecorded() {
		t.Fatalf("setup record: %v", vs[0].GetFindings())
	}
	cur, err := lic.GetLicence(ctx, &halovetv1.GetLicenceRequest{LicenceNumber: shipLicence})
	if err != nil {
		t.Fatal(err)
	}
	odpToCO2 := func() *halovetv1.Licence {
		l := cur.GetLicence()
		c := &halovetv1.Licence{LicenceNumber: l.GetLicenceNumber(), CompanyId: l.GetCompanyId(), Directions: l.GetDirections(),
			ValidFrom: l.GetValidFrom(), ValidTo: l.GetValidTo()}
		for _, q := range l.GetQuotaLines() {
			c.QuotaLines = append(c.QuotaLines, &halovetv1.QuotaLine{LineNumber: q.GetLineNumber(), AnnexGroup: q.GetAnnexGroup(), Unit: q.GetUnit(), AllocatedAmount: q.GetAllocatedAmount()})
		}
		// The example: the C/I line with draws turned into an F/I line in CO2-eq t.
		c.QuotaLines[0].AnnexGroup, c.QuotaLines[0].Unit = "F/I", halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES
		return c
	}
	goodLicence := func(n, company, validTo string) *halovetv1.Licence {
		return &halovetv1.Licence{LicenceNumber: n, CompanyId: company, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
			ValidFrom: "2026-01-01", ValidTo: validTo, QuotaLines: []*halovetv1.QuotaLine{{AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1"}}}
	}
	newParty := &halovetv1.Party{CountryCode: "XC", Name: "Cantoria (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5}
	suspend := func(n, date string) *halovetv1.SetLicenceStatusRequest {
		return &halovetv1.SetLicenceStatusRequest{LicenceNumber: n, Status: halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED, EffectiveDate: date, Reason: "test"}
	}
	cases := []struct {
		name     string
		call     func() error
		code     codes.Code
		contains string
	}{
		{"status: unknown licence", func() error { _, err := lic.SetLicenceStatus(ctx, suspend("NOPE-1", "")); return err }, codes.NotFound, "NOPE-1"},
		{"status: invalid date", func() error { _, err := lic.SetLicenceStatus(ctx, suspend(shipLicence, "2026-13-01")); return err }, codes.InvalidArgument, "effective_date"},
		{"status: no reason", func() error {
			r := suspend(shipLicence, "")
			r.Reason = ""
			_, err := lic.SetLicenceStatus(ctx, r)
			return err
		}, codes.InvalidArgument, "reason"},
		{"status: back to draft", func() error {
			r := suspend(shipLicence, "")
			r.Status = halovetv1.LicenceStatus_LICENCE_STATUS_DRAFT
			_, err := lic.SetLicenceStatus(ctx, r)
			return err
		}, codes.InvalidArgument, "status"},
		{"status: reinstating a licence not suspended", func() error {
			r := suspend(shipLicence, "")
			r.Status = halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE
			_, err := lic.SetLicenceStatus(ctx, r)
			return err
		}, codes.FailedPrecondition, "a reinstatement needs a suspended licence"},
		{"status: suspending a suspended licence", func() error { _, err := lic.SetLicenceStatus(ctx, suspend(shipSuspended, "")); return err },
			codes.FailedPrecondition, "only an active licence can be suspended"},
		{"status: dated before the last change", func() error {
			r := suspend(shipSuspended, "2025-12-01")
			r.Status = halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE
			_, err := lic.SetLicenceStatus(ctx, r)
			return err
		}, codes.FailedPrecondition, "before its last status change"},
		{"status: stale version", func() error {
			r := suspend(shipLicence, "")
			r.ExpectedVersion = 7
			_, err := lic.SetLicenceStatus(ctx, r)
			return err
		}, codes.FailedPrecondition, "expected_version 7"},
		{"amend: unit and scope of a line with draws", func() error {
			_, err := lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Licence: odpToCO2(), Reason: "test"})
			return err
		}, codes.FailedPrecondition, "CloseQuotaLine"},
		{"amend: effective date in the future", func() error {
			_, err := lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Licence: odpToCO2(), Reason: "test", EffectiveDate: "2199-01-01"})
			return err
		}, codes.InvalidArgument, "effective_date"},
		{"amend: unknown licence", func() error {
			_, err := lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Licence: goodLicence("NOPE-2", shipCompany, "2026-12-31"), Reason: "test"})
			return err
		}, codes.NotFound, "NOPE-2"},
		{"close: unknown line", func() error {
			_, err := lic.CloseQuotaLine(ctx, &halovetv1.CloseQuotaLineRequest{LicenceNumber: shipLicence, LineNumber: 9, Reason: "test"})
			return err
		}, codes.NotFound, "quota line 9"},
		{"close: no line number", func() error {
			_, err := lic.CloseQuotaLine(ctx, &halovetv1.CloseQuotaLineRequest{LicenceNumber: shipLicence, Reason: "test"})
			return err
		}, codes.InvalidArgument, "line_number"},
		{"close: bad successor", func() error {
			_, err := lic.CloseQuotaLine(ctx, &halovetv1.CloseQuotaLineRequest{LicenceNumber: shipLicence, LineNumber: 1, Reason: "test",
				Successor: &halovetv1.QuotaLine{AnnexGroup: "Z/IX", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES}})
			return err
		}, codes.InvalidArgument, "successor.annex_group"},
		{"close: invalid date", func() error {
			_, err := lic.CloseQuotaLine(ctx, &halovetv1.CloseQuotaLineRequest{LicenceNumber: shipLicence, LineNumber: 1, Reason: "test", EffectiveDate: "15.09.2026"})
			return err
		}, codes.InvalidArgument, "effective_date"},
		{"history: unknown licence", func() error {
			_, err := lic.ListLicenceHistory(ctx, &halovetv1.ListLicenceHistoryRequest{LicenceNumber: "NOPE-3"})
			return err
		}, codes.NotFound, "NOPE-3"},
		{"history: no licence number", func() error {
			_, err := lic.ListLicenceHistory(ctx, &halovetv1.ListLicenceHistoryRequest{})
			return err
		}, codes.InvalidArgument, "licence_number"},
		{"reporting: unknown country", func() error {
			_, err := lic.SetReportingParty(ctx, &halovetv1.SetReportingPartyRequest{CountryCode: "XZ"})
			return err
		}, codes.NotFound, "XZ"},
		{"reporting: not a code", func() error {
			_, err := lic.SetReportingParty(ctx, &halovetv1.SetReportingPartyRequest{CountryCode: "xb"})
			return err
		}, codes.InvalidArgument, "country_code"},
		{"reporting: forced without a reason", func() error {
			_, err := lic.SetReportingParty(ctx, &halovetv1.SetReportingPartyRequest{CountryCode: "XB", Force: true})
			return err
		}, codes.InvalidArgument, "reason"},
		{"reporting: shipments recorded, not forced", func() error {
			_, err := lic.SetReportingParty(ctx, &halovetv1.SetReportingPartyRequest{CountryCode: "XB"})
			return err
		}, codes.FailedPrecondition, "repeat with force"},
		{"PutParty: reporting flag on another country", func() error {
			_, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: &halovetv1.Party{CountryCode: "XB", Name: "Borealia (invented)",
				PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5, ReportingParty: true}})
			return err
		}, codes.FailedPrecondition, "the reporting Party is XA"},
		{"PutParty: clearing the flag of the reporting Party", func() error {
			_, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: &halovetv1.Party{CountryCode: "XA", Name: "Xandria (invented)",
				PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5}})
			return err
		}, codes.FailedPrecondition, "must stay set"},
		{"load: last licence invalid", func() error {
			_, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Reason: "test", Parties: []*halovetv1.Party{newParty},
				Licences: []*halovetv1.Licence{goodLicence("XA-NEW-1", shipCompany, "2026-12-31"), goodLicence("XA-NEW-2", shipCompany, "2025-12-31")}})
			return err
		}, codes.InvalidArgument, "licences[1].valid_to"},
		{"load: last licence of an unknown company", func() error {
			_, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Reason: "test", Parties: []*halovetv1.Party{newParty},
				Companies: []*halovetv1.Company{{CompanyId: "XC-1", Name: "Invented"}},
				Licences:  []*halovetv1.Licence{goodLicence("XA-NEW-1", shipCompany, "2026-12-31"), goodLicence("XA-NEW-2", "NOBODY", "2026-12-31")}})
			return err
		}, codes.NotFound, "licences[1] (XA-NEW-2)"},
		{"load: last licence amended against its draws", func() error {
			_, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Reason: "test", Parties: []*halovetv1.Party{newParty},
				Licences: []*halovetv1.Licence{goodLicence("XA-NEW-1", shipCompany, "2026-12-31"), odpToCO2()}})
			return err
		}, codes.FailedPrecondition, "licences[1]"},
		{"load: reinstating a licence not suspended, dated badly", func() error {
			l := goodLicence(shipSuspended, shipOther, "2026-12-31")
			l.Status, l.StatusEffectiveDate = halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE, "2026-02-30"
			_, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Reason: "test", Licences: []*halovetv1.Licence{l}})
			return err
		}, codes.InvalidArgument, "licences[0].status_effective_date"},
		{"load: no reason", func() error {
			_, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Parties: []*halovetv1.Party{newParty}})
			return err
		}, codes.InvalidArgument, "reason"},
	}
	before := registerState(t, st)
	for _, c := range cases {
		wantCode(t, c.name, c.call(), c.code, c.contains)
		if after := registerState(t, st); after != before {
			t.Errorf("%s changed the register:\n before %s\n after  %s", c.name, before, after)
			before = after
		}
	}

	// A dry run reports and writes nothing.
	dry, err := lic.LoadRegistry(ctx, &halovetv1.LoadRegistryRequest{Reason: "test", DryRun: true, Parties: []*halovetv1.Party{newParty},
		Licences: []*halovetv1.Licence{goodLicence("XA-NEW-1", shipCompany, "2026-12-31")}})
	if err != nil || !dry.GetDryRun() || len(dry.GetObjects()) != 2 || dry.GetObjects()[0].GetResult() != halovetv1.LoadResult_LOAD_RESULT_CREATED {
		t.Fatalf("dry run: %v %v", dry, err)
	}
	if after := registerState(t, st); after != before {
		t.Errorf("a dry run changed the register:\n before %s\n after  %s", before, after)
	}

	// Closing the line and opening another is the way to change what it counts.
	closed, err := lic.CloseQuotaLine(ctx, &halovetv1.CloseQuotaLineRequest{LicenceNumber: shipLicence, LineNumber: 1, Reason: "counted in CO2-eq from now",
		Successor: &halovetv1.QuotaLine{AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES, AllocatedAmount: "20"}})
	if err != nil || closed.GetSuccessorLineNumber() != 3 {
		t.Fatalf("close: %v %v", closed, err)
	}
	q := closed.GetLicence().GetQuotaLines()
	if q[0].GetClosedOn() == "" || q[0].GetRemainingAmount() != "0" || q[0].GetUnit() != halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES || q[2].GetUnit() != halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES {
		t.Fatalf("lines after closing: %v", q)
	}
	vs, _ := shipRecordCall(t, halovetv1.NewShipmentServiceClient(conn), shipRecord("drawn-2"))
	// 100 kg of HCFC-22 is 0.1 metric t on the new line (arithmetic).
	if drawn, _ := shipLineDrawn(t, st, shipLicence, 3); !vs[0].GetRecorded() || drawn != "0.100000000" {
		t.Fatalf("a record after the close: recorded %v, line 3 drawn %s, findings %v; want 0.1 t on line 3", vs[0].GetRecorded(), drawn, vs[0].GetFindings())
	}

	// Forced, with a reason, the reporting Party moves.
	rp, err := lic.SetReportingParty(ctx, &halovetv1.SetReportingPartyRequest{CountryCode: "XB", Force: true, Reason: "test: the register was set up on the wrong country"})
	if err != nil || !rp.GetChanged() || !rp.GetParty().GetReportingParty() {
		t.Fatalf("forced SetReportingParty: %v %v", rp, err)
	}
}
