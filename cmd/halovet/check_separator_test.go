package main

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/spf13/pflag"
)

// TestCheckSeparatorFlag: --csv-separator takes auto, comma or semicolon; anything else is a
// usage error (exit 2) naming the accepted values, before any file is opened or server dialled.
func TestCheckSeparatorFlag(t *testing.T) {
	fs := pflag.NewFlagSet("check", pflag.ContinueOnError)
	run := defineCheck(fs)
	if err := fs.Parse([]string{"--csv-separator", "tab"}); err != nil {
		t.Fatal(err)
	}
	err := run(context.Background(), []string{"shipments.csv"})
	var ee *exitError
	if !errors.As(err, &ee) || ee.code != exitUsage || !strings.Contains(err.Error(), "auto, comma or semicolon") {
		t.Fatalf("--csv-separator tab: %v; want a usage error naming auto, comma or semicolon", err)
	}
	if f := fs.Lookup("csv-separator"); f == nil || f.DefValue != "auto" {
		t.Errorf("--csv-separator default %+v, want auto", f)
	}
}
