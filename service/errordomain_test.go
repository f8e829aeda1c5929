package service_test

import (
	"context"
	"testing"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// TestErrorInfoDomainIsOurs: the ErrorInfo of a not-found answer names the API's own proto
// package as its domain (google.rpc.ErrorInfo: "the logical grouping to which the reason
// belongs", usually the service's name; common practice).
func TestErrorInfoDomainIsOurs(t *testing.T) {
	t.Parallel()
	conn, _ := startTestServer(t)
	_, err := halovetv1.NewLicensingServiceClient(conn).GetLicence(context.Background(), &halovetv1.GetLicenceRequest{LicenceNumber: "XA-NONE-1"})
	st, _ := status.FromError(err)
	found := false
	for _, d := range st.Details() {
		if ei, ok := d.(*errdetails.ErrorInfo); ok {
			found = true
			if ei.GetDomain() != "halovet.v1" {
				t.Errorf("ErrorInfo domain %q; want halovet.v1", ei.GetDomain())
			}
		}
	}
	if !found {
		t.Errorf("GetLicence of an unknown licence: %v; want an ErrorInfo detail", err)
	}
}
