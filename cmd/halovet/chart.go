package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"google.golang.org/grpc"

	"github.com/halovet/halovet/chart"
	"github.com/halovet/halovet/internal/registryview"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The compliance chart is drawn by package chart (shared with the console): SVG, or PNG
// for reports when the file name ends in .png.

// chartFormatOK tells a --chart file name the CLI can write.
func chartFormatOK(path string) bool {
	p := strings.ToLower(path)
	return strings.HasSuffix(p, ".svg") || strings.HasSuffix(p, ".png")
}

// writeChart draws the chart of a compliance response as SVG, or as PNG when asPNG.
// party is the reporting Party's name for the title ("" leaves it out); the current
// calendar year is marked provisional.
func writeChart(w io.Writer, resp *halovetv1.AssessComplianceResponse, party string, asPNG bool) error {
	c := chart.FromAssessment(resp, party, time.Now().Year())
	if asPNG {
		return chart.PNG(w, c)
	}
	return chart.SVG(w, c)
}

// writeChartFile writes the chart to path, in the format its extension names.
func writeChartFile(path string, resp *halovetv1.AssessComplianceResponse, party string) error {
	var b bytes.Buffer
	if err := writeChart(&b, resp, party, strings.HasSuffix(strings.ToLower(path), ".png")); err != nil {
		return err
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		return fmt.Errorf("--chart: %w", err)
	}
	return nil
}

// reportingPartyName asks the server for the reporting Party's name, for the chart's
// title; "" when none is set (the title then names the group only).
func reportingPartyName(ctx context.Context, conn grpc.ClientConnInterface) (string, error) {
	return registryview.ReportingPartyName(ctx, halovetv1.NewLicensingServiceClient(conn), listPageSize)
}
