package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// The listing verbs follow the pages of the API: asked for two rows a page, licences and
// entries --list print what the golden files hold (the whole list, as one page of 1000
// gives it).
func TestListingVerbsFollowPages(t *testing.T) {
	d := startDemoServerAddr(t)
	saved := listPageSize
	listPageSize = 2
	t.Cleanup(func() { listPageSize = saved })
	for _, tc := range []struct {
		golden string
		args   []string
	}{
		{"licences.txt", []string{"licences", "--year", "2026"}},
		{"licences.json", []string{"licences", "--year", "2026", "--output", "json"}},
		{"entries.csv", []string{"entries", "--list", "--output", "csv"}},
		{"entries.json", []string{"entries", "--list", "--output", "json"}},
	} {
		args := append(tc.args, "--server", d)
		code, stdout, stderr := runCaptured(t, args...)
		if code != exitOK {
			t.Fatalf("halovet %s: exit code %d\n%s", strings.Join(args, " "), code, stderr)
		}
		compareVerbGolden(t, filepath.Join("testdata", "golden", tc.golden), stdout)
	}
}
