package pglocal

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"syscall"
)

// RootDataDir is the default data directory when halovet runs as root: a system place that
// the unprivileged account PostgreSQL runs as can reach (a home directory such as /root,
// mode 0700, is not), so the cluster lives where it is said to live.
const RootDataDir = "/var/lib/halovet/postgres"

// DefaultDataDir returns where halovet keeps its private cluster when no directory is given:
// $XDG_DATA_HOME/halovet/postgres when XDG_DATA_HOME is an absolute path, else
// RootDataDir when running as root, else ~/.local/share/halovet/postgres.
func DefaultDataDir() (string, error) {
	return defaultDataDir(os.Geteuid())
}

func defaultDataDir(euid int) (string, error) {
	if x := os.Getenv("XDG_DATA_HOME"); filepath.IsAbs(x) {
		return filepath.Join(x, "halovet", "postgres"), nil
	}
	if euid == 0 {
		return RootDataDir, nil
	}
	home, err := os.UserHomeDir()
	if err != nil {
		return "", fmt.Errorf("pglocal: no home directory for the default data dir (set XDG_DATA_HOME or give a data dir): %w", err)
	}
	return filepath.Join(home, ".local", "share", "halovet", "postgres"), nil
}

// placement is where a cluster lives and which account runs its programs.
type placement struct {
	dir  string
	acct account
}

// initialised reports whether dir holds a cluster made by initdb.
func initialised(dir string) bool {
	_, err := os.Stat(filepath.Join(dir, "PG_VERSION"))
	return err == nil
}

// place decides the data directory and the account for a requested directory (absolute),
// creating the directory when absent. See the package doc for the rules when running as root.
func place(requested string, logf func(format string, args ...any)) (placement, error) {
	if os.Geteuid() != 0 {
		if err := os.MkdirAll(requested, 0o700); err != nil {
			return placement{}, fmt.Errorf("pglocal: create data dir: %w", err)
		}
		return placement{dir: requested, acct: selfAccount()}, nil
	}
	if initialised(requested) {
		owner, err := ownerAccount(requested)
		if err != nil {
			return placement{}, err
		}
		blocked := owner.blockedAncestor(requested)
		if blocked == "" {
			return placement{dir: requested, acct: owner}, nil
		}
		return relocate(requested, owner, blocked, logf)
	}
	acct, err := unprivilegedAccount()
	if err != nil {
		return placement{}, err
	}
	if blocked := acct.blockedAncestor(requested); blocked != "" {
		return relocate(requested, acct, blocked, logf)
	}
	if err := prepareDir(requested, acct, false); err != nil {
		return placement{}, err
	}
	return placement{dir: requested, acct: acct}, nil
}

// relocate puts the cluster for requested under a world-searchable temporary directory,
// named after the caller's uid and a hash of requested so a later run finds it again.
func relocate(requested string, acct account, blocked string, logf func(string, ...any)) (placement, error) {
	sum := sha256.Sum256([]byte(requested))
	name := fmt.Sprintf("halovet-pg-%d-%s", os.Geteuid(), hex.EncodeToString(sum[:])[:12])
	bases := []string{os.TempDir(), "/tmp", "/var/tmp"}
	for _, base := range bases {
		dir := filepath.Join(base, name)
		if initialised(dir) {
			owner, err := ownerAccount(dir)
			if err != nil {
				return placement{}, err
			}
			acct = owner
		}
		if acct.blockedAncestor(dir) != "" {
			continue
		}
		if err := prepareDir(dir, acct, true); err != nil {
			return placement{}, err
		}
		logf("running as root: PostgreSQL runs as %s (uid %d), which cannot enter %s, so the cluster for %s lives in %s instead",
			acct.name, acct.uid, blocked, requested, dir)
		return placement{dir: dir, acct: acct}, nil
	}
	return placement{}, fmt.Errorf("pglocal: running as root: account %s (uid %d) cannot enter %s, and none of %v is usable for a relocated cluster; choose a data dir outside %s",
		acct.name, acct.uid, blocked, bases, blocked)
}

// prepareDir creates dir (mode 0700) and any missing parents (mode 0755), and hands dir to
// acct unless it already holds a cluster. With shared set (dir sits in a world-writable
// place), a dir that exists must be a real directory owned by root or acct.
func prepareDir(dir string, acct account, shared bool) error {
	missing := []string{}
	for d := filepath.Dir(dir); ; d = filepath.Dir(d) {
		if _, err := os.Stat(d); err == nil || filepath.Dir(d) == d {
			break
		}
		missing = append(missing, d)
	}
	for i := len(missing) - 1; i >= 0; i-- {
		if err := os.Mkdir(missing[i], 0o755); err != nil && !errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("pglocal: create parent of data dir: %w", err)
		}
		if err := os.Chmod(missing[i], 0o755); err != nil {
			return fmt.Errorf("pglocal: make parent of data dir searchable: %w", err)
		}
	}
	if err := os.Mkdir(dir, 0o700); err != nil && !errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("pglocal: create data dir: %w", err)
	}
	fi, err := os.Lstat(dir)
	if err != nil {
		return fmt.Errorf("pglocal: inspect data dir: %w", err)
	}
	if !fi.IsDir() {
		return fmt.Errorf("pglocal: data dir %s is not a directory (mode %s)", dir, fi.Mode())
	}
	if st, ok := fi.Sys().(*syscall.Stat_t); ok && shared && st.Uid != 0 && st.Uid != acct.uid {
		return fmt.Errorf("pglocal: %s already exists and belongs to uid %d, not to root or %s; remove it", dir, st.Uid, acct.name)
	}
	if initialised(dir) || acct.cred == nil {
		return nil
	}
	if err := os.Chown(dir, int(acct.uid), int(acct.gid)); err != nil {
		return fmt.Errorf("pglocal: hand data dir to %s: %w", acct.name, err)
	}
	if err := os.Chmod(dir, 0o700); err != nil {
		return fmt.Errorf("pglocal: set data dir mode: %w", err)
	}
	return nil
}
