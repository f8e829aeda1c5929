package service_test

import (
	"context"
	"encoding/base64"
	"slices"
	"strings"
	"testing"

	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// Page tokens are signed with a key the replicas share: a token one replica gave is
// accepted by another; a forged, altered or re-aimed token is refused naming page_token.
func TestPageTokensAreSigned(t *testing.T) {
	url := pgtest.NewDatabase(t, "halovet_service", migrateServiceDB)
	connA, _, _ := startServerOn(t, url, service.Options{OpenAccess: true})
	connB, _, _ := startServerOn(t, url, service.Options{OpenAccess: true})
	ctx := context.Background()
	a, b := halovetv1.NewCatalogueServiceClient(connA), halovetv1.NewCatalogueServiceClient(connB)

	first, err := a.ListEntries(ctx, &halovetv1.ListEntriesRequest{PageSize: 5})
	if err != nil || first.GetNextPageToken() == "" {
		t.Fatalf("first page: %v (next %q)", err, first.GetNextPageToken())
	}
	second, err := b.ListEntries(ctx, &halovetv1.ListEntriesRequest{PageSize: 5, PageToken: first.GetNextPageToken()})
	if err != nil || len(second.GetEntries()) != 5 {
		t.Fatalf("the other replica refused the token: %v", err)
	}
	if slices.EqualFunc(first.GetEntries(), second.GetEntries(), func(x, y *halovetv1.CatalogueEntry) bool { return x.String() == y.String() }) {
		t.Errorf("the second page repeats the first")
	}

	tok := first.GetNextPageToken()
	payload, sig, _ := strings.Cut(tok, ".")
	raw, _ := base64.RawURLEncoding.DecodeString(payload)
	// The same signature over a payload whose page key is altered.
	forged := base64.RawURLEncoding.EncodeToString([]byte(strings.Replace(string(raw), ".k", ".kWyJ", 1))) + "." + sig
	refusals := map[string]*halovetv1.ListEntriesRequest{
		"made up":         {PageSize: 5, PageToken: "5"},
		"payload altered": {PageSize: 5, PageToken: forged},
		"signature cut":   {PageSize: 5, PageToken: payload},
		"other filters":   {PageSize: 5, PageToken: tok, AnnexGroup: "C/I"},
		"garbage":         {PageSize: 5, PageToken: "%%%.%%%"},
		"overlong":        {PageSize: 5, PageToken: strings.Repeat("A", 5000)},
	}
	for name, req := range refusals {
		_, err := b.ListEntries(ctx, req)
		if status.Code(err) != codes.InvalidArgument || !slices.Contains(catalogueViolatedFields(status.Convert(err)), "page_token") {
			t.Errorf("%s: %v; want InvalidArgument naming page_token", name, err)
		}
	}
	// A catalogue token is no token of the shipment register.
	_, err = halovetv1.NewShipmentServiceClient(connA).ListShipments(ctx, &halovetv1.ListShipmentsRequest{PageToken: tok})
	if status.Code(err) != codes.InvalidArgument {
		t.Errorf("a catalogue token on ListShipments: %v; want InvalidArgument", err)
	}
}
