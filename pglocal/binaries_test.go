package pglocal

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// fakeInstall writes executable stand-ins for the named programs into dir.
func fakeInstall(t *testing.T, dir string, programs ...string) string {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, p := range programs {
		if err := os.WriteFile(filepath.Join(dir, p), []byte("#!/bin/sh\nexit 0\n"), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

func TestFindBinaries(t *testing.T) {
	all := []string{"initdb", "pg_ctl", "postgres"}
	tests := []struct {
		name string
		// setup builds PATH entries and versioned roots under base and returns the
		// PATH value, the roots and the expected directory ("" for ErrNoServerBinaries).
		setup func(t *testing.T, base string) (path string, roots []string, want string)
	}{
		{
			name: "complete directory in PATH wins over versioned roots",
			setup: func(t *testing.T, base string) (string, []string, string) {
				bin := fakeInstall(t, filepath.Join(base, "bin"), all...)
				fakeInstall(t, filepath.Join(base, "lib", "16", "bin"), all...)
				return bin, []string{filepath.Join(base, "lib")}, bin
			},
		},
		{
			name: "symlinked initdb in PATH resolves to its real installation",
			setup: func(t *testing.T, base string) (string, []string, string) {
				real := fakeInstall(t, filepath.Join(base, "lib", "15", "bin"), all...)
				link := filepath.Join(base, "local")
				if err := os.MkdirAll(link, 0o755); err != nil {
					t.Fatal(err)
				}
				if err := os.Symlink(filepath.Join(real, "initdb"), filepath.Join(link, "initdb")); err != nil {
					t.Fatal(err)
				}
				return link, nil, real
			},
		},
		{
			name: "incomplete PATH directory falls through to highest complete version",
			setup: func(t *testing.T, base string) (string, []string, string) {
				bin := fakeInstall(t, filepath.Join(base, "bin"), "initdb")
				root := filepath.Join(base, "lib")
				fakeInstall(t, filepath.Join(root, "9.6", "bin"), all...)
				want := fakeInstall(t, filepath.Join(root, "15", "bin"), all...)
				fakeInstall(t, filepath.Join(root, "16", "bin"), "initdb", "pg_ctl") // no postgres
				return bin, []string{root}, want
			},
		},
		{
			name: "non-executable files do not count",
			setup: func(t *testing.T, base string) (string, []string, string) {
				bin := fakeInstall(t, filepath.Join(base, "bin"), all...)
				if err := os.Chmod(filepath.Join(bin, "postgres"), 0o644); err != nil {
					t.Fatal(err)
				}
				return bin, nil, ""
			},
		},
		{
			name: "nothing anywhere",
			setup: func(t *testing.T, base string) (string, []string, string) {
				return filepath.Join(base, "empty"), []string{filepath.Join(base, "missing")}, ""
			},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path, roots, want := tt.setup(t, t.TempDir())
			t.Setenv("PATH", path)
			got, err := findBinaries(roots)
			if want == "" {
				if !errors.Is(err, ErrNoServerBinaries) {
					t.Fatalf("findBinaries() = %q, %v; want ErrNoServerBinaries", got, err)
				}
				// The message must tell a person what to install.
				if !strings.Contains(err.Error(), "apt-get install -y postgresql") {
					t.Errorf("error %q does not name the package to install", err)
				}
				return
			}
			if err != nil || got != want {
				t.Fatalf("findBinaries() = %q, %v; want %q", got, err, want)
			}
		})
	}
}

func TestCompareVersions(t *testing.T) {
	tests := []struct {
		name string
		a, b string
		sign int
	}{
		{"numeric not lexical", "9.6", "15", -1},
		{"major wins", "16", "15", 1},
		{"minor decides", "9.6", "9.5", 1},
		{"longer is newer", "15.1", "15", 1},
		{"equal", "15", "15", 0},
		{"numbers above names", "15", "devel", 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := compareVersions(tt.a, tt.b)
			if (got > 0) != (tt.sign > 0) || (got < 0) != (tt.sign < 0) {
				t.Errorf("compareVersions(%q, %q) = %d; want sign %d", tt.a, tt.b, got, tt.sign)
			}
		})
	}
}
