package service_test

import (
	"context"
	"slices"
	"strings"
	"testing"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Integration tests of CatalogueService: a real server on loopback, a real gRPC client and
// a real PostgreSQL database holding the seed catalogue.

// catalogueCallStatus checks that err is a gRPC status with the wanted code and returns it.
func catalogueCallStatus(t *testing.T, err error, want codes.Code) *status.Status {
	t.Helper()
	if err == nil {
		t.Fatalf("call succeeded; want a %v status", want)
	}
	st, ok := status.FromError(err)
	if !ok {
		t.Fatalf("error %v is not a gRPC status; want %v", err, want)
	}
	if st.Code() != want {
		t.Fatalf("status %v %q; want %v", st.Code(), st.Message(), want)
	}
	return st
}

// catalogueViolatedFields lists the fields named in a status's BadRequest detail.
func catalogueViolatedFields(st *status.Status) []string {
	var fields []string
	for _, d := range st.Details() {
		if br, ok := d.(*errdetails.BadRequest); ok {
			for _, v := range br.GetFieldViolations() {
				fields = append(fields, v.GetField())
			}
		}
	}
	return fields
}

func TestGetEntry(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	t.Run("designation", func(t *testing.T) {
		resp, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "HCFC-22"})
		if err != nil {
			t.Fatalf("GetEntry HCFC-22: %v", err)
		}
		s := resp.GetSubstance()
		if s == nil {
			t.Fatalf("GetEntry HCFC-22 returned %v; want a substance", resp)
		}
		if s.GetDesignation() != "HCFC-22" || s.GetAnnexGroup() != "C/I" {
			t.Errorf("designation %q group %q; want HCFC-22 in C/I", s.GetDesignation(), s.GetAnnexGroup())
		}
		if s.GetOdp() != "0.055" { // source: Montreal Protocol Annex C Group I (HCFC-22 0.055)
			t.Errorf("ODP %v; want 0.055", s.GetOdp())
		}
		if s.GetCasNumber() != "75-45-6" { // source: testdata/reference/halocarbons.csv (CAS of HCFC-22)
			t.Errorf("CAS %q; want 75-45-6", s.GetCasNumber())
		}
		if s.GetFormula() != "CHClF2" {
			t.Errorf("formula %q; want CHClF2", s.GetFormula())
		}
		gwp := map[halovetv1.GwpSet]string{}
		for _, g := range s.GetGwps() {
			gwp[g.GetGwpSet()] = g.GetGwp_100Yr()
		}
		// source: Kigali Amendment, Annex C Group I GWP column: HCFC-22 1810;
		// IPCC AR4 WG1 Table 2.14: 1810.
		if gwp[halovetv1.GwpSet_GWP_SET_PROTOCOL_ANNEXES] != "1810" || gwp[halovetv1.GwpSet_GWP_SET_IPCC_AR4] != "1810" {
			t.Errorf("GWPs %v; want MP 1810 and AR4 1810", gwp)
		}
		var hs22 []string
		for _, h := range s.GetHsCodes() {
			if h.GetEdition() == halovetv1.HsEdition_HS_EDITION_HS_2022 {
				hs22 = append(hs22, h.GetSubheading())
			}
		}
		if !slices.Equal(hs22, []string{"2903.71"}) { // source: WCO HS 2022 subheading 2903.71
			t.Errorf("HS 2022 subheadings %v; want [2903.71]", hs22)
		}
	})

	t.Run("synonym", func(t *testing.T) {
		resp, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "R-22"})
		if err != nil {
			t.Fatalf("GetEntry R-22: %v", err)
		}
		if got := resp.GetSubstance().GetDesignation(); got != "HCFC-22" {
			t.Errorf("GetEntry R-22 gave %q; want HCFC-22 (R-22 is its ASHRAE 34 number)", got)
		}
	})

	t.Run("blend, any case", func(t *testing.T) {
		resp, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "r-404a"})
		if err != nil {
			t.Fatalf("GetEntry r-404a: %v", err)
		}
		b := resp.GetBlend()
		if b.GetDesignation() != "R-404A" {
			t.Fatalf("GetEntry r-404a gave %v; want the blend R-404A", resp)
		}
		// source: ASHRAE 34 (reference blends.csv): R-404A is HFC-125/143a/134a 44/52/4.
		want := map[string]string{"HFC-125": "44", "HFC-143a": "52", "HFC-134a": "4"}
		if len(b.GetComponents()) != len(want) {
			t.Fatalf("R-404A components %v; want %v", b.GetComponents(), want)
		}
		for _, c := range b.GetComponents() {
			if want[c.GetDesignation()] != c.GetMassPercent() {
				t.Errorf("R-404A component %s at %v %%; want %v %%", c.GetDesignation(), c.GetMassPercent(), want[c.GetDesignation()])
			}
		}
	})

	t.Run("unknown gives NotFound with suggestions", func(t *testing.T) {
		_, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "R-4O4A"}) // letter O for zero
		st := catalogueCallStatus(t, err, codes.NotFound)
		if !strings.Contains(st.Message(), "did you mean") || !strings.Contains(st.Message(), "R-404A") {
			t.Errorf("NotFound message %q; want a did-you-mean naming R-404A", st.Message())
		}
	})

	t.Run("empty is InvalidArgument", func(t *testing.T) {
		_, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "  "})
		st := catalogueCallStatus(t, err, codes.InvalidArgument)
		if !slices.Contains(catalogueViolatedFields(st), "designation") {
			t.Errorf("violations %v; want one on designation", catalogueViolatedFields(st))
		}
	})
}

func TestListEntriesAnnexFGroupI(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	// source: Montreal Protocol Annex F Group I (Kigali Amendment): the 17 HFCs; HFC-23 is
	// Group II.
	want := []string{"HFC-134", "HFC-134a", "HFC-143", "HFC-245fa", "HFC-365mfc", "HFC-227ea", "HFC-236cb",
		"HFC-236ea", "HFC-236fa", "HFC-245ca", "HFC-43-10mee", "HFC-32", "HFC-125", "HFC-143a", "HFC-41", "HFC-152", "HFC-152a"}
	resp, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", Kind: halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE})
	if err != nil {
		t.Fatalf("ListEntries F/I: %v", err)
	}
	var got []string
	for _, e := range resp.GetEntries() {
		s := e.GetSubstance()
		if s == nil || s.GetAnnexGroup() != "F/I" {
			t.Errorf("entry %v in an F/I substance listing; want only F/I substances", e)
			continue
		}
		got = append(got, s.GetDesignation())
	}
	slices.Sort(got)
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("F/I substances %v; want the 17 of Annex F Group I %v", got, want)
	}
	if resp.GetTotalSize() != 17 || resp.GetNextPageToken() != "" {
		t.Errorf("total_size %d, next_page_token %q; want 17 on one page", resp.GetTotalSize(), resp.GetNextPageToken())
	}

	// Blends are listed under a group when a component is in it; R-404A is all Annex F HFCs.
	resp, err = client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", Kind: halovetv1.EntryKind_ENTRY_KIND_BLEND, Text: "404"})
	if err != nil {
		t.Fatalf("ListEntries F/I blends: %v", err)
	}
	if len(resp.GetEntries()) != 1 || resp.GetEntries()[0].GetBlend().GetDesignation() != "R-404A" {
		t.Errorf("F/I blends matching 404: %v; want R-404A alone", resp.GetEntries())
	}
}

func TestListEntriesPaging(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	all, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{PageSize: 500})
	if err != nil {
		t.Fatalf("ListEntries page_size 500: %v", err)
	}
	total := int(all.GetTotalSize())
	if total != len(all.GetEntries()) || total < 200 {
		t.Fatalf("one page of 500 holds %d entries of total_size %d; want the whole catalogue (over 200 entries)", len(all.GetEntries()), total)
	}

	seen := map[string]int{}
	var order []string
	pages := 0
	token := ""
	for {
		resp, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{PageSize: 7, PageToken: token})
		if err != nil {
			t.Fatalf("ListEntries page %d: %v", pages+1, err)
		}
		pages++
		if n := len(resp.GetEntries()); n > 7 || (n < 7 && resp.GetNextPageToken() != "") {
			t.Fatalf("page %d holds %d entries with next token %q; want 7 on every page but the last", pages, n, resp.GetNextPageToken())
		}
		for _, e := range resp.GetEntries() {
			d := e.GetSubstance().GetDesignation() + e.GetBlend().GetDesignation()
			seen[d]++
			order = append(order, d)
		}
		token = resp.GetNextPageToken()
		if token == "" {
			break
		}
		if pages > total {
			t.Fatalf("more than %d pages; the tokens do not advance", total)
		}
	}
	if len(order) != total {
		t.Errorf("paging returned %d entries; want total_size %d", len(order), total)
	}
	for d, n := range seen {
		if n != 1 {
			t.Errorf("%s returned %d times; want once", d, n)
		}
	}
	if wantPages := (total + 6) / 7; pages != wantPages {
		t.Errorf("%d pages; want %d for %d entries at 7 a page", pages, wantPages, total)
	}
	var unpaged []string
	for _, e := range all.GetEntries() {
		unpaged = append(unpaged, e.GetSubstance().GetDesignation()+e.GetBlend().GetDesignation())
	}
	if !slices.Equal(order, unpaged) {
		t.Errorf("paged order differs from the one-page listing")
	}
}

func TestListEntriesRejects(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	first, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", PageSize: 7})
	if err != nil {
		t.Fatalf("ListEntries F/I: %v", err)
	}
	if first.GetNextPageToken() == "" {
		t.Fatal("F/I at 7 a page gave no next token; want more than one page")
	}
	cases := []struct {
		name  string
		req   *halovetv1.ListEntriesRequest
		field string
	}{
		{"token with another group", &halovetv1.ListEntriesRequest{AnnexGroup: "C/I", PageSize: 7, PageToken: first.GetNextPageToken()}, "page_token"},
		{"token with a text filter added", &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", Text: "134", PageSize: 7, PageToken: first.GetNextPageToken()}, "page_token"},
		{"token not issued by the server", &halovetv1.ListEntriesRequest{PageToken: "not-a-token!"}, "page_token"},
		{"unknown Annex group", &halovetv1.ListEntriesRequest{AnnexGroup: "G/I"}, "annex_group"},
		{"page size over 500", &halovetv1.ListEntriesRequest{PageSize: 501}, "page_size"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := client.ListEntries(ctx, tc.req)
			st := catalogueCallStatus(t, err, codes.InvalidArgument)
			if !slices.Contains(catalogueViolatedFields(st), tc.field) {
				t.Errorf("violations %v (%q); want one on %s", catalogueViolatedFields(st), st.Message(), tc.field)
			}
		})
	}
	// The same token with the same filters still works.
	next, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", PageSize: 7, PageToken: first.GetNextPageToken()})
	if err != nil || len(next.GetEntries()) == 0 {
		t.Errorf("second page with the same filters: %d entries, err %v; want entries", len(next.GetEntries()), err)
	}
}

func TestResolveIdentifier(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()

	unique := []struct {
		id, want string
		kind     halovetv1.EntryKind
	}{
		// HCFC-22 in every spelling a paper may use (ASHRAE 34 designation and number,
		// molecular and condensed formula, CAS number of testdata/reference/halocarbons.csv, chemical name).
		{"R-22", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"R22", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"HCFC-22", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"hcfc 22", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"CHClF2", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"CHF2Cl", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"75-45-6", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"chlorodifluoromethane", "HCFC-22", halovetv1.EntryKind_ENTRY_KIND_SUBSTANCE},
		{"R-404A", "R-404A", halovetv1.EntryKind_ENTRY_KIND_BLEND},
		{"404a", "R-404A", halovetv1.EntryKind_ENTRY_KIND_BLEND},
	}
	for _, tc := range unique {
		t.Run(tc.id, func(t *testing.T) {
			resp, err := client.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: tc.id})
			if err != nil {
				t.Fatalf("ResolveIdentifier %q: %v", tc.id, err)
			}
			if resp.GetAmbiguous() || len(resp.GetCandidates()) == 0 {
				t.Fatalf("%q: ambiguous %v with %d candidates; want one best candidate", tc.id, resp.GetAmbiguous(), len(resp.GetCandidates()))
			}
			best := resp.GetCandidates()[0]
			if best.GetDesignation() != tc.want || best.GetKind() != tc.kind {
				t.Errorf("%q resolved to %s (%v); want %s (%v)", tc.id, best.GetDesignation(), best.GetKind(), tc.want, tc.kind)
			}
			if best.GetMatchKind() == halovetv1.MatchKind_MATCH_KIND_UNSPECIFIED || exact.MustParse(best.GetScore()).Sign() <= 0 {
				t.Errorf("%q: match kind %v score %v; want a set kind and a positive score", tc.id, best.GetMatchKind(), best.GetScore())
			}
		})
	}

	t.Run("shared HS code is ambiguous", func(t *testing.T) {
		resp, err := client.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: "2903.45"})
		if err != nil {
			t.Fatalf("ResolveIdentifier 2903.45: %v", err)
		}
		var got []string
		for _, c := range resp.GetCandidates() {
			got = append(got, c.GetDesignation())
			if c.GetMatchKind() != halovetv1.MatchKind_MATCH_KIND_HS_CODE {
				t.Errorf("candidate %s matched by %v; want MATCH_KIND_HS_CODE", c.GetDesignation(), c.GetMatchKind())
			}
		}
		slices.Sort(got)
		// source: HS 2022 subheading 2903.45 holds HFC-134a and HFC-134 (WCO HS 2022 text).
		if !resp.GetAmbiguous() || !slices.Equal(got, []string{"HFC-134", "HFC-134a"}) {
			t.Errorf("2903.45: ambiguous %v, candidates %v; want ambiguous between HFC-134 and HFC-134a", resp.GetAmbiguous(), got)
		}
	})

	t.Run("unknown gives suggestions", func(t *testing.T) {
		resp, err := client.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: "R-4O4A"})
		if err != nil {
			t.Fatalf("ResolveIdentifier R-4O4A: %v", err)
		}
		if len(resp.GetCandidates()) != 0 || !slices.Contains(resp.GetSuggestions(), "R-404A") {
			t.Errorf("R-4O4A: candidates %v, suggestions %v; want none and a suggestion of R-404A", resp.GetCandidates(), resp.GetSuggestions())
		}
	})

	t.Run("CAS with a wrong check digit", func(t *testing.T) {
		// 75-45-6 is right (CAS check-digit method): 5x1 + 4x2 + 5x3 + 7x4 = 56, check digit 6.
		resp, err := client.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: "75-45-7"})
		if err != nil {
			t.Fatalf("ResolveIdentifier 75-45-7: %v", err)
		}
		if len(resp.GetCandidates()) != 0 {
			t.Errorf("75-45-7 gave candidates %v; a wrong check digit must give none", resp.GetCandidates())
		}
		if !strings.Contains(resp.GetNote(), "check digit") {
			t.Errorf("note %q; want it to say the check digit is wrong", resp.GetNote())
		}
	})

	t.Run("empty is InvalidArgument", func(t *testing.T) {
		_, err := client.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{})
		st := catalogueCallStatus(t, err, codes.InvalidArgument)
		if !slices.Contains(catalogueViolatedFields(st), "identifier") {
			t.Errorf("violations %v; want one on identifier", catalogueViolatedFields(st))
		}
	})
}
