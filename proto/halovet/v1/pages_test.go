package halovetv1

import (
	"context"
	"strings"
	"testing"

	"google.golang.org/grpc"
	"google.golang.org/protobuf/proto"
)

// ReadAllPages joins the pages a list answers, in order, sends back each token with the
// request's filters, and stops on a server that answers the same token twice.
func TestReadAllPages(t *testing.T) {
	pages := map[string]*ListCompaniesResponse{
		"":   {Companies: []*Company{{CompanyId: "A"}, {CompanyId: "B"}}, NextPageToken: "t1"},
		"t1": {Companies: []*Company{{CompanyId: "C"}, {CompanyId: "D"}}, NextPageToken: "t2"},
		"t2": {Companies: []*Company{{CompanyId: "E"}}},
	}
	var sizes []int32
	call := func(_ context.Context, r *ListCompaniesRequest, _ ...grpc.CallOption) (*ListCompaniesResponse, error) {
		sizes = append(sizes, r.GetPageSize())
		return proto.Clone(pages[r.GetPageToken()]).(*ListCompaniesResponse), nil // a fresh message, as a connection gives
	}
	req := &ListCompaniesRequest{PageSize: 2}
	got, err := ReadAllPages(context.Background(), call, req, "companies")
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, c := range got.GetCompanies() {
		ids = append(ids, c.GetCompanyId())
	}
	if strings.Join(ids, ",") != "A,B,C,D,E" || got.GetNextPageToken() != "" || len(sizes) != 3 || sizes[2] != 2 {
		t.Errorf("rows %v, next %q, %d calls of sizes %v; want A to E, no token, 3 calls of 2", ids, got.GetNextPageToken(), len(sizes), sizes)
	}
	if req.GetPageToken() != "" {
		t.Errorf("the caller's request was changed: page_token %q", req.GetPageToken())
	}

	pages["t2"].NextPageToken = "t1" // a server going round in circles
	if _, err := ReadAllPages(context.Background(), call, req, "companies"); err == nil || !strings.Contains(err.Error(), "twice") {
		t.Errorf("a repeated token: %v; want an error", err)
	}
	if _, err := ReadAllPages(context.Background(), call, req, "parties"); err == nil {
		t.Errorf("a field the response does not have was taken")
	}
}
