package service_test

import (
	"context"
	"slices"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc/codes"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// Integration tests of CatalogueService's administrator writes (UpsertSubstance): the
// audit log, the rejections, and the change reaching other replicas.

// catalogueAuditRows counts the audit log rows of one substance.
func catalogueAuditRows(t *testing.T, st *store.Store, designation string) int {
	t.Helper()
	var n int
	if err := st.Pool().QueryRow(context.Background(),
		`SELECT count(*) FROM audit_log WHERE entity = 'substance' AND entity_key = $1`, designation).Scan(&n); err != nil {
		t.Fatalf("count audit rows: %v", err)
	}
	return n
}

// catalogueHFC134a returns HFC-134a as the server has it, to correct.
func catalogueHFC134a(t *testing.T, client halovetv1.CatalogueServiceClient) *halovetv1.Substance {
	t.Helper()
	resp, err := client.GetEntry(context.Background(), &halovetv1.GetEntryRequest{Designation: "HFC-134a"})
	if err != nil || resp.GetSubstance() == nil {
		t.Fatalf("GetEntry HFC-134a: %v (%v)", err, resp)
	}
	return resp.GetSubstance()
}

// The correction the tests make: HFC-134a's atmospheric lifetime as IPCC AR5 tabulates it,
// 13.4 years (source: IPCC AR5 WG1 Table 8.A.1, reference halocarbons.csv
// lifetime_ar5_years), in place of the seed's WMO 2018 value of 14 years (source: WMO 2018
// via IPCC AR6 Table 7.SM.7, halocarbons.csv lifetime_years).
const (
	catalogueSeedLifetime      = "14"
	catalogueCorrectedLifetime = "13.4"
	catalogueCorrectionSource  = "; lifetime corrected: IPCC Fifth Assessment Report, WG1 (2013), Table 8.A.1"
)

// catalogueLifetimeCorrection returns HFC-134a with the corrected lifetime and source.
func catalogueLifetimeCorrection(s *halovetv1.Substance) *halovetv1.Substance {
	c := proto.Clone(s).(*halovetv1.Substance)
	c.LifetimeYears = catalogueCorrectedLifetime
	c.Sources += catalogueCorrectionSource
	return c
}

func TestUpsertSubstanceCorrection(t *testing.T) {
	conn, st := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	before := catalogueHFC134a(t, client)
	if before.GetLifetimeYears() != catalogueSeedLifetime {
		t.Fatalf("seed lifetime of HFC-134a %v; want %v", before.GetLifetimeYears(), catalogueSeedLifetime)
	}
	resp, err := client.UpsertSubstance(ctx, &halovetv1.UpsertSubstanceRequest{Substance: catalogueLifetimeCorrection(before),
		Reason: "use the AR5 lifetime for this office's reports"})
	if err != nil {
		t.Fatalf("UpsertSubstance HFC-134a with a corrected lifetime: %v", err)
	}
	if resp.GetCreated() {
		t.Error("created = true; HFC-134a exists in the seed, so this is a correction")
	}
	if got := resp.GetSubstance().GetLifetimeYears(); got != catalogueCorrectedLifetime {
		t.Errorf("stored lifetime %v; want %v", got, catalogueCorrectedLifetime)
	}
	// source: C2H2F4 with IUPAC standard atomic weights (abridged, conventional values):
	// 2x12.011 + 2x1.008 + 4x18.998 = 102.03, exactly.
	if m := resp.GetSubstance().GetMolarMassGPerMol(); m != "102.03" {
		t.Errorf("molar mass %v; want 102.03 g/mol computed from the formula", m)
	}
	if n := catalogueAuditRows(t, st, "HFC-134a"); n != 1 {
		t.Errorf("%d audit rows for HFC-134a; want 1 for one correction", n)
	}
	var action, reason string
	if err := st.Pool().QueryRow(ctx, `SELECT action, reason FROM audit_log WHERE entity = 'substance' AND entity_key = 'HFC-134a'`).
		Scan(&action, &reason); err != nil || action != "update" || !strings.Contains(reason, "AR5 lifetime") {
		t.Errorf("audit row action %q reason %q (err %v); want an update with the request's reason", action, reason, err)
	}

	// The next read sees the correction, and nothing else changed.
	after := catalogueHFC134a(t, client)
	if after.GetLifetimeYears() != catalogueCorrectedLifetime || !strings.HasSuffix(after.GetSources(), catalogueCorrectionSource) {
		t.Errorf("GetEntry after the correction: lifetime %v, sources ending %q; want %v and the new source",
			after.GetLifetimeYears(), tail(after.GetSources(), 60), catalogueCorrectedLifetime)
	}
	after.LifetimeYears, after.Sources = before.GetLifetimeYears(), before.GetSources()
	if !proto.Equal(after, before) {
		t.Errorf("the correction changed more than the lifetime and sources:\n got %v\nwant %v", after, before)
	}
}

// tail returns the last n bytes of s, for messages.
func tail(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return s[len(s)-n:]
}

func TestUpsertSubstanceRejects(t *testing.T) {
	conn, st := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()
	base := catalogueHFC134a(t, client)

	cases := []struct {
		name   string
		edit   func(s *halovetv1.Substance)
		reason string
		field  string
	}{
		// HFC-134a decodes by the ASHRAE 34 / ISO 817 number + 90 rule to C2H2F4; CH2F2 is HFC-32.
		{"designation and formula disagree", func(s *halovetv1.Substance) { s.Formula, s.Structure = "CH2F2", "" }, "fix", "substance.designation"},
		// 811-97-2 is HFC-134a's CAS number (testdata/reference/halocarbons.csv); the check digit of 811-97 is 2.
		{"CAS check digit wrong", func(s *halovetv1.Substance) { s.CasNumber = "811-97-3" }, "fix", "substance.cas_number"},
		{"structure disagrees with formula", func(s *halovetv1.Substance) { s.Structure = "CH3CF3" }, "fix", "substance.structure"},
		{"unknown Annex group", func(s *halovetv1.Substance) { s.AnnexGroup = "F/III" }, "fix", "substance.annex_group"},
		{"no reason", func(*halovetv1.Substance) {}, " ", "reason"},
		{"GWP without its set", func(s *halovetv1.Substance) { s.Gwps[0].GwpSet = halovetv1.GwpSet_GWP_SET_UNSPECIFIED }, "fix", "substance.gwps[0].gwp_set"},
		{"GWP set no .proto declares", func(s *halovetv1.Substance) { s.Gwps[1].GwpSet = 99 }, "fix", "substance.gwps[1].gwp_set"},
		{"HS code without its edition", func(s *halovetv1.Substance) { s.HsCodes[0].Edition = halovetv1.HsEdition_HS_EDITION_UNSPECIFIED }, "fix", "substance.hs_codes[0].edition"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			s := proto.Clone(base).(*halovetv1.Substance)
			tc.edit(s)
			_, err := client.UpsertSubstance(ctx, &halovetv1.UpsertSubstanceRequest{Substance: s, Reason: tc.reason})
			stt := catalogueCallStatus(t, err, codes.InvalidArgument)
			if fields := catalogueViolatedFields(stt); !slices.Contains(fields, tc.field) {
				t.Errorf("violations %v (%q); want one on %s", fields, stt.Message(), tc.field)
			}
		})
	}
	if n := catalogueAuditRows(t, st, "HFC-134a"); n != 0 {
		t.Errorf("%d audit rows after rejected corrections; want 0", n)
	}
	after := catalogueHFC134a(t, client)
	if !proto.Equal(after, base) {
		t.Errorf("HFC-134a changed after rejected corrections:\n got %v\nwant %v", after, base)
	}
}

// TestUpsertSubstanceReachesOtherReplicas checks the LISTEN/NOTIFY path: a second
// catalogue holder on the same database, as another replica would run it, picks up a
// correction made through the server within a few seconds.
func TestUpsertSubstanceReachesOtherReplicas(t *testing.T) {
	conn, st := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	replicaStore, err := store.Open(ctx, st.Pool().Config().ConnString())
	if err != nil {
		t.Fatalf("open a second store on the test database: %v", err)
	}
	t.Cleanup(replicaStore.Close)
	replica, err := service.LoadCatalogue(ctx, replicaStore, quietLogger())
	if err != nil {
		t.Fatalf("second catalogue holder: %v", err)
	}
	if s, ok := replica.Load().Substance("HFC-134a"); !ok || exact.OfFloat(s.Lifetime).String() != catalogueSeedLifetime {
		t.Fatalf("the replica's HFC-134a before the correction: %v; want lifetime %v", s, catalogueSeedLifetime)
	}
	stop := replica.Watch(ctx, replicaStore)
	t.Cleanup(stop)

	// Wait until the replica's listener is registered, so that the notification cannot
	// be sent before anyone listens.
	deadline := time.Now().Add(10 * time.Second)
	for {
		var listening int
		if err := st.Pool().QueryRow(ctx, `SELECT count(*) FROM pg_stat_activity
		        WHERE datname = current_database() AND query = 'LISTEN halovet_catalogue'`).Scan(&listening); err != nil {
			t.Fatalf("look for the listener: %v", err)
		}
		if listening > 0 {
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("the replica did not start listening for catalogue changes within 10 s")
		}
		time.Sleep(20 * time.Millisecond)
	}

	if _, err := client.UpsertSubstance(ctx, &halovetv1.UpsertSubstanceRequest{
		Substance: catalogueLifetimeCorrection(catalogueHFC134a(t, client)), Reason: "use the AR5 lifetime"}); err != nil {
		t.Fatalf("UpsertSubstance: %v", err)
	}
	start := time.Now()
	for {
		if s, ok := replica.Load().Substance("HFC-134a"); ok && exact.OfFloat(s.Lifetime).String() == catalogueCorrectedLifetime {
			t.Logf("the replica saw the correction after %v", time.Since(start).Round(time.Millisecond))
			return
		}
		if time.Since(start) > 5*time.Second {
			t.Fatal("the replica did not see the correction within 5 s of the change")
		}
		time.Sleep(20 * time.Millisecond)
	}
}
