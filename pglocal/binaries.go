package pglocal

import (
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
)

// ErrNoServerBinaries reports that initdb, pg_ctl and postgres were not found together.
var ErrNoServerBinaries = errors.New("PostgreSQL server binaries (initdb, pg_ctl, postgres) not found in PATH or /usr/lib/postgresql/*/bin; install them with: apt-get install -y postgresql")

// serverPrograms are the programs a cluster needs; all must sit in one directory.
var serverPrograms = []string{"initdb", "pg_ctl", "postgres"}

// debianRoot is where Debian and Ubuntu packages install versioned server binaries.
const debianRoot = "/usr/lib/postgresql"

// FindBinaries returns the directory holding initdb, pg_ctl and postgres. It looks for initdb
// in PATH first (following a symbolic link to the real installation, where pg_ctl and
// postgres must sit beside it), then in /usr/lib/postgresql/*/bin, highest version first.
// Without any, it returns ErrNoServerBinaries.
func FindBinaries() (dir string, err error) {
	return findBinaries([]string{debianRoot})
}

// findBinaries is FindBinaries with the versioned roots to search after PATH.
func findBinaries(roots []string) (string, error) {
	if p, err := exec.LookPath("initdb"); err == nil {
		if abs, err := filepath.Abs(p); err == nil {
			p = abs
		}
		candidates := []string{}
		if real, err := filepath.EvalSymlinks(p); err == nil {
			candidates = append(candidates, filepath.Dir(real))
		}
		candidates = append(candidates, filepath.Dir(p))
		for _, dir := range candidates {
			if hasServerPrograms(dir) {
				return dir, nil
			}
		}
	}
	for _, root := range roots {
		for _, dir := range versionedBinDirs(root) {
			if hasServerPrograms(dir) {
				return dir, nil
			}
		}
	}
	return "", ErrNoServerBinaries
}

// hasServerPrograms reports whether dir holds an executable file for every server program.
func hasServerPrograms(dir string) bool {
	for _, name := range serverPrograms {
		fi, err := os.Stat(filepath.Join(dir, name))
		if err != nil || !fi.Mode().IsRegular() || fi.Mode().Perm()&0o111 == 0 {
			return false
		}
	}
	return true
}

// versionedBinDirs lists root/<version>/bin directories, highest version first.
func versionedBinDirs(root string) []string {
	entries, err := os.ReadDir(root)
	if err != nil {
		return nil
	}
	versions := []string{}
	for _, e := range entries {
		if e.IsDir() || e.Type()&os.ModeSymlink != 0 {
			versions = append(versions, e.Name())
		}
	}
	slices.SortFunc(versions, func(a, b string) int { return compareVersions(b, a) })
	dirs := make([]string, 0, len(versions))
	for _, v := range versions {
		dirs = append(dirs, filepath.Join(root, v, "bin"))
	}
	return dirs
}

// compareVersions orders dotted version names numerically ("9.6" < "15" < "16");
// non-numeric parts compare as text after all numeric ones.
func compareVersions(a, b string) int {
	as, bs := strings.Split(a, "."), strings.Split(b, ".")
	for i := 0; i < len(as) || i < len(bs); i++ {
		if i >= len(as) {
			return -1
		}
		if i >= len(bs) {
			return 1
		}
		an, aerr := strconv.Atoi(as[i])
		bn, berr := strconv.Atoi(bs[i])
		switch {
		case aerr == nil && berr == nil:
			if an != bn {
				return an - bn
			}
		case aerr == nil:
			return 1
		case berr == nil:
			return -1
		default:
			if c := strings.Compare(as[i], bs[i]); c != 0 {
				return c
			}
		}
	}
	return 0
}
