package service_test

import (
	"context"
	"testing"

	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// TestListEntriesKeysetAcrossACatalogueChange: ListEntries pages by keyset, as every other
// list does. An entry that comes to match the filter between two calls, before the cut of
// the first page, moves no entry across pages: the second page starts with the entry that
// followed the first page's last one (by offset it would repeat that entry). The filter is
// the text "hfc-1" in Annex F Group I; HFC-32 comes to match it by an INVENTED synonym, and
// sorts first in the group (Annex order, then by number).
func TestListEntriesKeysetAcrossACatalogueChange(t *testing.T) {
	conn, _ := startTestServer(t)
	client := halovetv1.NewCatalogueServiceClient(conn)
	ctx := context.Background()
	req := &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", Text: "hfc-1", PageSize: 3}
	all, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", Text: "hfc-1", PageSize: 500})
	if err != nil || len(all.GetEntries()) < 5 {
		t.Fatalf("F/I entries: %v %v; want at least 5", all, err)
	}
	first, err := client.ListEntries(ctx, req)
	if err != nil || len(first.GetEntries()) != 3 || first.GetNextPageToken() == "" {
		t.Fatalf("first page: %v %v", first, err)
	}
	for _, e := range all.GetEntries() {
		if e.GetSubstance().GetDesignation() == "HFC-32" {
			t.Fatalf("HFC-32 matches %q before the change; the test needs it not to", req.GetText())
		}
	}
	got, err := client.GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "HFC-32"})
	if err != nil || got.GetSubstance() == nil {
		t.Fatalf("GetEntry HFC-32: %v %v", got, err)
	}
	s := proto.Clone(got.GetSubstance()).(*halovetv1.Substance)
	s.Synonyms = append(s.Synonyms, "HFC-1 paging test")
	if _, err := client.UpsertSubstance(ctx, &halovetv1.UpsertSubstanceRequest{Substance: s, Reason: "invented synonym for a paging test"}); err != nil {
		t.Fatalf("UpsertSubstance HFC-32: %v", err)
	}
	if again, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "F/I", Text: "hfc-1", PageSize: 1}); err != nil ||
		again.GetEntries()[0].GetSubstance().GetDesignation() != "HFC-32" {
		t.Fatalf("after the change the list starts with %v (%v); want HFC-32", again.GetEntries(), err)
	}
	req.PageToken = first.GetNextPageToken()
	second, err := client.ListEntries(ctx, req)
	if err != nil || len(second.GetEntries()) == 0 {
		t.Fatalf("second page: %v %v", second, err)
	}
	if got, want := second.GetEntries()[0].GetSubstance().GetDesignation(), all.GetEntries()[3].GetSubstance().GetDesignation(); got != want {
		t.Errorf("second page starts with %s; want %s, the entry after the first page's last (%s)",
			got, want, first.GetEntries()[2].GetSubstance().GetDesignation())
	}
	// A token of another filter is refused naming page_token.
	if _, err := client.ListEntries(ctx, &halovetv1.ListEntriesRequest{AnnexGroup: "C/I", PageSize: 3, PageToken: first.GetNextPageToken()}); err == nil {
		t.Error("a F/I token accepted for C/I")
	}
}
