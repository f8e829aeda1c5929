package registryview

import (
	"context"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// ReportingPartyName is the name of the reporting Party (for a chart's title), read from
// ListParties pageSize Parties to a page; "" when none is set.
func ReportingPartyName(ctx context.Context, lc halovetv1.LicensingServiceClient, pageSize int32) (string, error) {
	resp, err := halovetv1.ReadAllPages(ctx, lc.ListParties, &halovetv1.ListPartiesRequest{PageSize: pageSize}, "parties")
	if err != nil {
		return "", err
	}
	for _, p := range resp.GetParties() {
		if p.GetReportingParty() {
			return p.GetName(), nil
		}
	}
	return "", nil
}
