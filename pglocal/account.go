package pglocal

import (
	"fmt"
	"os"
	"os/user"
	"path/filepath"
	"strconv"
	"syscall"
)

// account is the operating-system identity the server programs run as.
type account struct {
	name     string
	uid, gid uint32
	// cred is nil when the programs run as the calling process's own user.
	cred *syscall.Credential
}

// fallbackAccounts are tried in order when the caller is root and no cluster owner exists yet.
var fallbackAccounts = []string{"postgres", "nobody"}

// selfAccount is the calling process's identity, used when it is not root.
func selfAccount() account {
	name := strconv.Itoa(os.Geteuid())
	if u, err := user.Current(); err == nil {
		name = u.Username
	}
	return account{name: name, uid: uint32(os.Geteuid()), gid: uint32(os.Getegid())}
}

// unprivilegedAccount returns the first existing account of fallbackAccounts.
func unprivilegedAccount() (account, error) {
	for _, name := range fallbackAccounts {
		u, err := user.Lookup(name)
		if err != nil {
			continue
		}
		a, err := accountFromIDs(u.Username, u.Uid, u.Gid)
		if err != nil {
			return account{}, err
		}
		if a.uid == 0 {
			continue
		}
		return a, nil
	}
	return account{}, fmt.Errorf("pglocal: running as root, and PostgreSQL refuses root: no unprivileged account (tried %v) exists; create one (for example: useradd --system postgres) or run as a normal user", fallbackAccounts)
}

// ownerAccount returns an account for the user owning path (an existing cluster's data dir).
func ownerAccount(path string) (account, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return account{}, fmt.Errorf("pglocal: inspect owner of %s: %w", path, err)
	}
	st, ok := fi.Sys().(*syscall.Stat_t)
	if !ok {
		return account{}, fmt.Errorf("pglocal: cannot read the owner of %s on this system", path)
	}
	if st.Uid == 0 {
		return account{}, fmt.Errorf("pglocal: the cluster in %s belongs to root, and PostgreSQL refuses to run as root; chown -R it to an unprivileged user (for example postgres) or remove it", path)
	}
	name := strconv.FormatUint(uint64(st.Uid), 10)
	if u, err := user.LookupId(name); err == nil {
		name = u.Username
	}
	return newAccount(name, st.Uid, st.Gid), nil
}

// accountFromIDs builds an account from decimal uid and gid strings.
func accountFromIDs(name, uid, gid string) (account, error) {
	u, err := strconv.ParseUint(uid, 10, 32)
	if err != nil {
		return account{}, fmt.Errorf("pglocal: account %s has a non-numeric uid %q: %w", name, uid, err)
	}
	g, err := strconv.ParseUint(gid, 10, 32)
	if err != nil {
		return account{}, fmt.Errorf("pglocal: account %s has a non-numeric gid %q: %w", name, gid, err)
	}
	return newAccount(name, uint32(u), uint32(g)), nil
}

// newAccount builds an account the programs switch to, with no supplementary groups.
func newAccount(name string, uid, gid uint32) account {
	return account{name: name, uid: uid, gid: gid, cred: &syscall.Credential{Uid: uid, Gid: gid, Groups: []uint32{}}}
}

// blockedAncestor returns the first existing directory on the way to path that the account
// cannot search (enter), or "" when every existing ancestor is searchable. Missing ancestors
// are skipped: pglocal creates them searchable itself.
func (a account) blockedAncestor(path string) string {
	existing := filepath.Clean(path)
	for {
		if _, err := os.Stat(existing); err == nil {
			break
		}
		parent := filepath.Dir(existing)
		if parent == existing {
			break
		}
		existing = parent
	}
	if real, err := filepath.EvalSymlinks(existing); err == nil {
		existing = real
	}
	// Check existing itself unless it is the target (whose ownership pglocal sets), then
	// every ancestor above it.
	dirs := []string{}
	if existing != filepath.Clean(path) {
		dirs = append(dirs, existing)
	}
	for d := filepath.Dir(existing); ; d = filepath.Dir(d) {
		dirs = append(dirs, d)
		if filepath.Dir(d) == d {
			break
		}
	}
	for _, d := range dirs {
		if !a.canSearch(d) {
			return d
		}
	}
	return ""
}

// canSearch reports whether the account may enter dir, from its mode bits (ACLs and
// supplementary groups are not considered, which errs towards relocating).
func (a account) canSearch(dir string) bool {
	fi, err := os.Stat(dir)
	if err != nil {
		return false
	}
	st, ok := fi.Sys().(*syscall.Stat_t)
	if !ok {
		return true
	}
	mode := uint32(fi.Mode().Perm())
	switch {
	case a.cred == nil && os.Geteuid() == 0:
		return true
	case st.Uid == a.uid:
		return mode&0o100 != 0
	case st.Gid == a.gid:
		return mode&0o010 != 0
	default:
		return mode&0o001 != 0
	}
}
