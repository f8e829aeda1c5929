// Package pglocal runs a private PostgreSQL cluster from the machine's own server binaries
// (initdb, pg_ctl, postgres), for `halovet serve`/`demo` without --database-url and for tests
// without TEST_DATABASE_URL.
//
// # Running as root
//
// initdb, pg_ctl and postgres refuse to run as root. When the calling process runs as root,
// pglocal runs them as an unprivileged account instead (and DefaultDataDir is RootDataDir,
// which that account can reach): the owner of an existing cluster, else
// the `postgres` account when it exists, else `nobody`. The data directory is chowned to that
// account. When that account cannot reach the requested data directory because a parent
// directory is not searchable by it (for example /root, mode 0700), pglocal does not change
// the parent's permissions: it puts the cluster in os.TempDir()/halovet-pg-<uid>-<hash>
// instead, where <uid> is the caller's user id and <hash> is derived from the requested path
// (so the same request finds the same cluster again), and says so on Options.Log.
// Cluster.DataDir reports the directory actually used.
//
// # Lifetime
//
// A started cluster belongs to the process that started it. Besides Cluster.Stop, a small
// watchdog shell process stops the server (pg_ctl stop -m fast) when the starting process
// exits without calling Stop, for example when it is killed. The starting process holds an
// exclusive lock (flock) on the data directory until Stop or its end, so a second Start on
// a directory whose owner still lives fails with ErrInUse rather than sharing a server the
// owner will stop. If a server from a run that is gone is still running on the data
// directory, Start adopts it; a postmaster.pid left by a server that is gone is removed.
package pglocal
