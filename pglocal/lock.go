package pglocal

import (
	"errors"
	"fmt"
	"os"
	"syscall"
	"time"
)

// ErrInUse marks a Start refused because another live process holds the cluster.
var ErrInUse = errors.New("the cluster is in use by another process")

// dirLock is an exclusive flock(2) on the data directory itself, held by the process that
// started (or adopted) the cluster until Stop. The kernel drops it when that process ends,
// however it ends, so a lock that cannot be taken always means a live owner. Go opens files
// close-on-exec, so the server and the watchdog never inherit it.
type dirLock struct{ f *os.File }

// lockWait is how long lockDir keeps trying. A lock just given up can stay held for a
// moment by a child process forked at that instant, until it execs and its close-on-exec
// copy of the descriptor goes; a live owner holds it far longer.
const lockWait = 2 * time.Second

// lockDir takes the lock on dir, trying for up to lockWait.
func lockDir(dir string) (*dirLock, error) {
	f, err := os.Open(dir)
	if err != nil {
		return nil, fmt.Errorf("pglocal: open data dir to lock it: %w", err)
	}
	deadline := time.Now().Add(lockWait)
	for {
		err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		if !errors.Is(err, syscall.EWOULDBLOCK) || time.Now().After(deadline) {
			break
		}
		time.Sleep(50 * time.Millisecond)
	}
	if err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, fmt.Errorf("%w: another halovet process (or test) runs the server on %s and will stop it when it ends; "+
				"stop that process, connect to its server with --database-url, or give another data directory", ErrInUse, dir)
		}
		return nil, fmt.Errorf("pglocal: lock data dir %s: %w", dir, err)
	}
	return &dirLock{f: f}, nil
}

// release gives the lock up; calling it on nil or twice is harmless.
func (l *dirLock) release() {
	if l == nil || l.f == nil {
		return
	}
	l.f.Close()
	l.f = nil
}
