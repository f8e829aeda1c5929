package service_test

import (
	"context"
	"slices"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/metadata"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// Integration tests of what ConsumptionService refuses: national entries it cannot use
// (and that a refused call stores nothing), reports without a reporting Party, and
// writes without an officer's credential. Entries and Parties are invented (consumption_test.go).

func TestNationalEntriesValidation(t *testing.T) {
	conn, _ := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	good := consEntry(2025, prod, "HCFC-22", 1)
	bad := []struct {
		name  string
		entry *halovetv1.NationalEntry
		field string
		says  string
	}{
		{"blend", consEntry(2025, hImp, "R-404A", 1), "entries[1].substance", "split it"},
		{"unknown", consEntry(2025, hImp, "HCFC-999", 1), "entries[1].substance", "not a catalogue substance"},
		{"uncontrolled", consEntry(2025, hImp, "R-290", 1), "entries[1].substance", "not controlled"},
		{"qps not methyl bromide", consEntry(2025, halovetv1.EntryType_ENTRY_TYPE_QPS, "HCFC-22", 1), "entries[1].entry_type", "methyl bromide"},
		{"negative", consEntry(2025, hImp, "HCFC-22", -1), "entries[1].metric_tonnes", "from 0"},
		{"year", consEntry(1970, hImp, "HCFC-22", 1), "entries[1].year", "1986"},
		{"no type", consEntry(2025, halovetv1.EntryType_ENTRY_TYPE_UNSPECIFIED, "HCFC-22", 1), "entries[1].entry_type", "PRODUCTION"},
		{"duplicate key", consEntry(2025, prod, "HCFC-22", 2), "entries[1].entry_key", "also the key"},
	}
	for _, b := range bad {
		_, err := c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{good, b.entry}})
		st := catalogueCallStatus(t, err, codes.InvalidArgument)
		if !slices.Contains(catalogueViolatedFields(st), b.field) || !strings.Contains(st.Message(), b.says) {
			t.Errorf("%s: %q fields %v; want field %s saying %q", b.name, st.Message(), catalogueViolatedFields(st), b.field, b.says)
		}
	}
	list, err := c.ListNationalEntries(ctx, &halovetv1.ListNationalEntriesRequest{})
	if err != nil || len(list.GetEntries()) != 0 {
		t.Fatalf("after refused calls: %v %v; want nothing stored (a call is all or nothing)", list.GetEntries(), err)
	}
	mb := consEntry(2025, halovetv1.EntryType_ENTRY_TYPE_QPS, "CH3Br", 3)
	resp, err := c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{good, mb}})
	if err != nil {
		t.Fatal(err)
	}
	if resp.GetEntries()[1].GetSubstance() != "methyl bromide" {
		t.Errorf("stored substance %q; want the designation \"methyl bromide\" for CH3Br", resp.GetEntries()[1].GetSubstance())
	}
	list, _ = c.ListNationalEntries(ctx, &halovetv1.ListNationalEntriesRequest{Year: 2025})
	if len(list.GetEntries()) != 2 {
		t.Fatalf("listed %v, want 2 entries", list.GetEntries())
	}
}

func TestConsumptionNeedsReportingParty(t *testing.T) {
	conn, _ := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	_, err := c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "C/I"})
	consCode(t, err, codes.FailedPrecondition, "reporting_party")
	_, err = c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "C/I", FromYear: 2025, ToYear: 2025})
	consCode(t, err, codes.FailedPrecondition, "SetReportingParty")
	_, err = c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "G/I"})
	consCode(t, err, codes.InvalidArgument, "not a control scope")
	_, err = c.AssessCompliance(ctx, &halovetv1.AssessComplianceRequest{AnnexGroup: "C/I", FromYear: 2026, ToYear: 2025})
	consCode(t, err, codes.InvalidArgument, "before from_year")
	// A Party without an HFC group cannot be asked about Annex F.
	consPutParty(t, conn, &halovetv1.Party{CountryCode: "XA", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, ReportingParty: true})
	_, err = c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "F"})
	consCode(t, err, codes.FailedPrecondition, "hfc_group")
	_, err = c.GetBaseline(ctx, &halovetv1.GetBaselineRequest{AnnexGroup: "C/II"})
	consCode(t, err, codes.InvalidArgument, "no baseline")
	_, err = c.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: 2026, AnnexGroup: "C/I", ReferenceYears: []int32{2025}})
	consCode(t, err, codes.FailedPrecondition, "baseline")
}

// TestConsumptionWritesNeedAnOfficer: storing national entries and issuing draft
// licences need an officer's credential; an auditor reads but may not write.
func TestConsumptionWritesNeedAnOfficer(t *testing.T) {
	ctx := context.Background()
	_, conn, st, _ := runSecuredServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{GracePeriod: time.Second})
	officer := withSecret(ctx, issueTestCredential(t, st, "officer.invented", access.RoleOfficer, ""))
	auditor := withSecret(ctx, issueTestCredential(t, st, "auditor.invented", access.RoleAuditor, ""))
	c := halovetv1.NewConsumptionServiceClient(conn)
	req := &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{consEntry(2025, prod, "HCFC-22", 1)}}
	_, err := c.RecordNationalEntries(ctx, req)
	consCode(t, err, codes.Unauthenticated, "needs a credential")
	bad := metadata.AppendToOutgoingContext(ctx, "authorization", "Bearer wrong")
	_, err = c.RecordNationalEntries(bad, req)
	consCode(t, err, codes.Unauthenticated, "malformed")
	_, err = c.RecordNationalEntries(auditor, req)
	consCode(t, err, codes.PermissionDenied, "role auditor")
	_, err = c.PlanQuotas(auditor, &halovetv1.PlanQuotasRequest{Year: 2026, AnnexGroup: "C/I", ReferenceYears: []int32{2025}, IssueDrafts: true})
	consCode(t, err, codes.PermissionDenied, "issue_drafts")
	if _, err := c.RecordNationalEntries(officer, req); err != nil {
		t.Fatalf("with the officer's credential: %v", err)
	}
	if list, err := c.ListNationalEntries(auditor, &halovetv1.ListNationalEntriesRequest{}); err != nil || len(list.GetEntries()) != 1 {
		t.Fatalf("reading as the auditor: %v %v; want the one entry", list, err)
	}
}

// TestConsumptionFigureFieldErrors: a figure that is not a plain decimal is refused with
// INVALID_ARGUMENT naming the field and saying what is accepted (DEVELOPERS.md, "Figures on
// the wire"), before anything is read or stored.
func TestConsumptionFigureFieldErrors(t *testing.T) {
	conn, _ := startTestServer(t)
	ctx := context.Background()
	c := halovetv1.NewConsumptionServiceClient(conn)
	entry := func(tonnes string) *halovetv1.NationalEntry {
		e := consEntry(2025, prod, "HCFC-22", 1)
		e.MetricTonnes = tonnes
		return e
	}
	calls := []struct {
		name, field string
		call        func() error
	}{
		{"exponent", "entries[0].metric_tonnes", func() error {
			_, err := c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{entry("1e3")}})
			return err
		}},
		{"decimal comma", "exemptions[0].amount", func() error {
			_, err := c.RecordExemptions(ctx, &halovetv1.RecordExemptionsRequest{Exemptions: []*halovetv1.AuthorisedExemption{{
				ExemptionKey: "E", Year: 2025, AnnexGroup: "E/I", Use: halovetv1.ExemptedUse_EXEMPTED_USE_CRITICAL, Amount: "12,5", Source: "invented"}}})
			return err
		}},
		{"words", "figures[0].amount", func() error {
			_, err := c.RecordOfficialFigures(ctx, &halovetv1.RecordOfficialFiguresRequest{Figures: []*halovetv1.OfficialFigure{{
				FigureKey: "B", Kind: halovetv1.OfficialFigureKind_OFFICIAL_FIGURE_KIND_BASELINE, AnnexGroup: "C/I", Amount: "ten", Source: "invented"}}})
			return err
		}},
		{"separator", "entries[0].emitted_tonnes", func() error {
			_, err := c.RecordHfc23Entries(ctx, &halovetv1.RecordHfc23EntriesRequest{Entries: []*halovetv1.Hfc23Entry{{
				EntryKey: "H", Facility: "invented plant", Year: 2025, GeneratedTonnes: "2", EmittedTonnes: "1 000"}}})
			return err
		}},
		{"partner figure", "reports[0].metric_tonnes", func() error {
			_, err := c.RecordPartnerExports(ctx, &halovetv1.RecordPartnerExportsRequest{Reports: []*halovetv1.PartnerExport{{
				ReportKey: "P", Year: 2025, PartnerCountry: "XA", Substance: "HCFC-22", MetricTonnes: "NaN", Source: "invented"}}})
			return err
		}},
		{"fraction", "fraction_ratio", func() error {
			_, err := c.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: 2026, AnnexGroup: "C/I", ReferenceYears: []int32{2025}, FractionRatio: "0,9"})
			return err
		}},
		{"granularity", "granularity_amount", func() error {
			_, err := c.PlanQuotas(ctx, &halovetv1.PlanQuotasRequest{Year: 2026, AnnexGroup: "C/I", ReferenceYears: []int32{2025}, GranularityAmount: "1e-3"})
			return err
		}},
		{"tolerance", "tolerance_ratio", func() error {
			_, err := c.ReconcilePartnerExports(ctx, &halovetv1.ReconcilePartnerExportsRequest{Year: 2025, ToleranceRatio: "5%"})
			return err
		}},
		{"more decimals than the register keeps", "entries[0].metric_tonnes", func() error {
			_, err := c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{entry("0.1234567891")}})
			return err
		}},
	}
	for _, tc := range calls {
		st := catalogueCallStatus(t, tc.call(), codes.InvalidArgument)
		if !slices.Equal(catalogueViolatedFields(st), []string{tc.field}) || !strings.Contains(st.Message(), "at most 9 decimals") && !strings.Contains(st.Message(), "plain notation") {
			t.Errorf("%s: %q fields %v; want field %s saying what is accepted", tc.name, st.Message(), catalogueViolatedFields(st), tc.field)
		}
	}
	list, err := c.ListNationalEntries(ctx, &halovetv1.ListNationalEntriesRequest{})
	if err != nil || len(list.GetEntries()) != 0 {
		t.Fatalf("after refused calls: %v %v; want nothing stored", list.GetEntries(), err)
	}
	// 18 significant digits, more than a float64 holds, at the register's billionths: stored
	// and answered digit for digit (it was refused as having more digits than are kept).
	big := entry("123456789.123456789")
	if _, err := c.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: []*halovetv1.NationalEntry{big}}); err != nil {
		t.Fatalf("an entry of 123456789.123456789 t: %v", err)
	}
	list, err = c.ListNationalEntries(ctx, &halovetv1.ListNationalEntriesRequest{})
	if err != nil || len(list.GetEntries()) != 1 || list.GetEntries()[0].GetMetricTonnes() != "123456789.123456789" {
		t.Fatalf("listed %v %v; want the entry with metric_tonnes exactly 123456789.123456789", list.GetEntries(), err)
	}
	// The consumption of 2025 counts it exactly: production 123456789.123456789 t of
	// HCFC-22, × ODP 0.055 (MP Annex C Group I) = 6790123.401790123395 ODP t, by hand.
	cons, err := c.GetConsumption(ctx, &halovetv1.GetConsumptionRequest{Year: 2025, AnnexGroup: "C/I"})
	if err != nil || len(cons.GetGroups()) != 1 || cons.GetGroups()[0].GetConsumptionOdpTonnes() != "6790123.401790123395" {
		t.Fatalf("consumption %v %v; want C/I 6790123.401790123395 ODP t exactly", cons, err)
	}
}
