package store

import (
	"context"
	"errors"
	"net"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/terms"
)

// These tests make PostgreSQL itself fail in each way the store classifies (a real
// serialization failure, deadlock, terminated backend, refused connection) and check the
// kind the store gives the error. Companies and licences are invented.

func openInternal(t *testing.T) (*Store, string) {
	t.Helper()
	url := pgtest.NewDatabase(t, "halovet_store", func(ctx context.Context, url string) error {
		_, err := Migrate(ctx, url)
		return err
	})
	st, err := Open(context.Background(), url)
	if err != nil {
		t.Fatalf("open: %v", err)
	}
	t.Cleanup(st.Close)
	return st, url
}

func rawConn(t *testing.T, url string) *pgx.Conn {
	t.Helper()
	c, err := pgx.Connect(context.Background(), url)
	if err != nil {
		t.Fatalf("connect: %v", err)
	}
	t.Cleanup(func() { _ = c.Close(context.Background()) })
	return c
}

func seedLicence(t *testing.T, st *Store) {
	t.Helper()
	ctx := context.Background()
	if err := st.PutCompany(ctx, Company{CompanyID: "XA-1", Name: "Invented Co"}); err != nil {
		t.Fatal(err)
	}
	l := Licence{Number: "L-1", CompanyID: "XA-1", Directions: []terms.Direction{terms.DirectionImport},
		ValidFrom: time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC), ValidTo: time.Date(2026, 12, 31, 0, 0, 0, 0, time.UTC),
		Status: terms.LicenceActive, QuotaLines: []QuotaLine{{LineNumber: 1, AnnexGroup: "C/I", Unit: terms.QuotaODPTonnes, Allocated: num("1")}}}
	if err := st.IssueLicence(ctx, l, "test licence"); err != nil {
		t.Fatal(err)
	}
}

func wantKind(t *testing.T, what string, err, kind error) {
	t.Helper()
	others := []error{ErrNotFound, ErrAlreadyExists, ErrConflict, ErrRetryable, ErrUnavailable, ErrTimeout}
	if !errors.Is(err, kind) {
		t.Fatalf("%s: err %v, want %v", what, err, kind)
	}
	for _, o := range others {
		if o != kind && errors.Is(err, o) {
			t.Fatalf("%s: err %v is %v as well as %v", what, err, o, kind)
		}
	}
}

func TestStoreCallsClassifyConstraintsAndMissingRows(t *testing.T) {
	st, _ := openInternal(t)
	ctx := context.Background()
	seedLicence(t, st)
	l := Licence{Number: "L-1", CompanyID: "XA-1", Directions: []terms.Direction{terms.DirectionImport},
		ValidFrom: time.Now(), ValidTo: time.Now(), Status: terms.LicenceActive}
	wantKind(t, "issuing L-1 twice (unique violation)", st.IssueLicence(ctx, l, ""), ErrAlreadyExists)
	l.Number, l.CompanyID = "L-2", "NO-SUCH-COMPANY"
	wantKind(t, "a licence of an unknown company (foreign key violation)", st.IssueLicence(ctx, l, ""), ErrNotFound)
	_, err := st.GetLicence(ctx, "NOPE")
	wantKind(t, "an unknown licence", err, ErrNotFound)
	_, err = st.GetParty(ctx, "ZZ")
	wantKind(t, "an unknown party", err, ErrNotFound)
	err = st.PutNationalEntries(ctx, []NationalEntry{{Key: "neg", Year: 2025, Type: EntryProduction, Substance: "HCFC-22", Tonnes: num("-1")}})
	wantKind(t, "negative tonnes (check violation)", err, ErrConflict)
}

// serializationFailure makes tx fail with a real serialization failure: tx has read the
// licence row in its snapshot, other then changes and commits it, and tx writes it.
func serializationFailure(ctx context.Context, tx pgx.Tx, other *pgx.Conn) error {
	var s string
	if err := tx.QueryRow(ctx, `SELECT status FROM licences WHERE licence_number = 'L-1'`).Scan(&s); err != nil {
		return err
	}
	if _, err := other.Exec(ctx, `UPDATE licences SET updated_at = now() WHERE licence_number = 'L-1'`); err != nil {
		return err
	}
	_, err := tx.Exec(ctx, `UPDATE licences SET updated_at = now() WHERE licence_number = 'L-1'`)
	return err
}

func TestInTxRetriesASerializationFailure(t *testing.T) {
	st, url := openInternal(t)
	seedLicence(t, st)
	other := rawConn(t, url)
	ctx := context.Background()
	attempts := 0
	err := st.inTx(ctx, repeatableRead, func(tx pgx.Tx) error {
		attempts++
		if attempts == 1 {
			return serializationFailure(ctx, tx, other)
		}
		_, err := tx.Exec(ctx, `UPDATE licences SET updated_at = now() WHERE licence_number = 'L-1'`)
		return err
	})
	if err != nil || attempts != 2 {
		t.Fatalf("inTx after one serialization failure: err %v after %d attempts; want success on attempt 2", err, attempts)
	}
}

func TestInTxGivesUpOnRepeatedSerializationFailuresAsRetryable(t *testing.T) {
	st, url := openInternal(t)
	seedLicence(t, st)
	other := rawConn(t, url)
	ctx := context.Background()
	attempts := 0
	err := st.inTx(ctx, repeatableRead, func(tx pgx.Tx) error {
		attempts++
		return serializationFailure(ctx, tx, other)
	})
	wantKind(t, "serialization failure on every attempt", err, ErrRetryable)
	if attempts != maxTxAttempts {
		t.Fatalf("attempts %d, want %d", attempts, maxTxAttempts)
	}
}

func TestDeadlockIsRetryable(t *testing.T) {
	st, url := openInternal(t)
	seedLicence(t, st)
	ctx := context.Background()
	a, b := rawConn(t, url), rawConn(t, url)
	ta, err := a.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer func() { _ = ta.Rollback(ctx) }()
	tb, err := b.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer func() { _ = tb.Rollback(ctx) }()
	// a locks the licence, b its quota line; then each wants the other's row.
	if _, err := ta.Exec(ctx, `SELECT 1 FROM licences WHERE licence_number = 'L-1' FOR UPDATE`); err != nil {
		t.Fatal(err)
	}
	if _, err := tb.Exec(ctx, `SELECT 1 FROM quota_lines WHERE licence_number = 'L-1' FOR UPDATE`); err != nil {
		t.Fatal(err)
	}
	errA := make(chan error, 1)
	go func() {
		_, err := ta.Exec(ctx, `SELECT 1 FROM quota_lines WHERE licence_number = 'L-1' FOR UPDATE`)
		errA <- err
	}()
	waitForLockWait(t, a.PgConn().PID(), url)
	// b closes the cycle; the detector runs after deadlock_timeout and aborts one of them.
	_, errB := tb.Exec(ctx, `SELECT 1 FROM licences WHERE licence_number = 'L-1' FOR UPDATE`)
	if errB != nil {
		_ = tb.Rollback(ctx) // b was chosen: its locks go, and a's statement ends
	}
	err = <-errA
	if errB != nil {
		err = errB
	}
	wantKind(t, "deadlock", classified(err), ErrRetryable)
}

// waitForLockWait waits until the backend pid is waiting for a lock.
func waitForLockWait(t *testing.T, pid uint32, url string) {
	t.Helper()
	c := rawConn(t, url)
	for range 500 {
		var waiting bool
		if err := c.QueryRow(context.Background(),
			`SELECT coalesce(wait_event_type = 'Lock', false) FROM pg_stat_activity WHERE pid = $1`, int32(pid)).Scan(&waiting); err != nil {
			t.Fatal(err)
		}
		if waiting {
			return
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Fatalf("backend %d never waited for a lock", pid)
}

// A store call whose backend is terminated while it waits (pg_terminate_backend, what an
// administrator or a failover does) is unavailable, not an internal error.
func TestTerminatedBackendIsUnavailable(t *testing.T) {
	st, url := openInternal(t)
	seedLicence(t, st)
	ctx := context.Background()
	holder := rawConn(t, url)
	tx, err := holder.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer func() { _ = tx.Rollback(ctx) }()
	if _, err := tx.Exec(ctx, `SELECT 1 FROM licences WHERE licence_number = 'L-1' FOR UPDATE`); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() {
		_, err := st.SetLicenceStatus(ctx, StatusChange{Number: "L-1", Status: terms.LicenceSuspended, EffectiveOn: time.Now(), Reason: "test"})
		done <- err
	}()
	// Find the store's backend waiting for the row lock, and terminate it.
	admin := rawConn(t, url)
	var pid int32
	for range 500 {
		err := admin.QueryRow(ctx, `SELECT pid FROM pg_stat_activity
		    WHERE datname = current_database() AND wait_event_type = 'Lock' AND pid <> $1`,
			int32(holder.PgConn().PID())).Scan(&pid)
		if err == nil {
			break
		}
		if !errors.Is(err, pgx.ErrNoRows) {
			t.Fatal(err)
		}
		time.Sleep(10 * time.Millisecond)
	}
	if pid == 0 {
		t.Fatal("the store's call never waited for the row lock")
	}
	if _, err := admin.Exec(ctx, `SELECT pg_terminate_backend($1)`, pid); err != nil {
		t.Fatal(err)
	}
	wantKind(t, "SetLicenceStatus on a terminated backend", <-done, ErrUnavailable)
}

func TestRefusedConnectionIsUnavailable(t *testing.T) {
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	addr := lis.Addr().String()
	_ = lis.Close() // nothing listens there now
	_, err = Open(context.Background(), "postgres://postgres@"+addr+"/halovet?connect_timeout=5")
	wantKind(t, "Open on a closed port", err, ErrUnavailable)
}

func TestCallerCancellationIsNotADatabaseError(t *testing.T) {
	st, _ := openInternal(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	_, err := st.ListParties(ctx)
	if !errors.Is(err, context.Canceled) || errors.Is(err, ErrUnavailable) {
		t.Fatalf("a cancelled call: err %v, want context.Canceled and not ErrUnavailable", err)
	}
}

// Two first setups naming different reporting Parties at once on an empty register: one
// names the reporting Party, the other is refused (PutParty never moves the role), and
// exactly one Party holds it afterwards. Parties are invented.
func TestConcurrentReportingPartiesSerialise(t *testing.T) {
	st, _ := openInternal(t)
	ctx := context.Background()
	for round := range 10 {
		if _, err := st.pool.Exec(ctx, `DELETE FROM parties`); err != nil {
			t.Fatal(err)
		}
		errs := make(chan error, 2)
		for _, code := range []string{"XA", "XB"} {
			go func() {
				errs <- st.PutParty(ctx, Party{CountryCode: code, Name: "invented", PartyType: terms.PartyTypeArticle5,
					HFCGroup: terms.HFCGroupA5Group1, ReportingParty: true})
			}()
		}
		var ok, refused int
		for range 2 {
			switch err := <-errs; {
			case err == nil:
				ok++
			case errors.Is(err, ErrConflict):
				refused++
			default:
				t.Fatalf("round %d: PutParty: %v", round, err)
			}
		}
		if ok != 1 || refused != 1 {
			t.Fatalf("round %d: %d succeeded and %d were refused, want 1 and 1", round, ok, refused)
		}
		var n int
		if err := st.pool.QueryRow(ctx, `SELECT count(*) FROM parties WHERE reporting_party`).Scan(&n); err != nil || n != 1 {
			t.Fatalf("round %d: %d reporting parties (err %v), want 1", round, n, err)
		}
	}
}

// TestStatementTimeoutIsTimeout: a statement PostgreSQL cancels for its statement_timeout
// (SQLSTATE 57014) is ErrTimeout, not an unclassified (Internal) error; a cancellation by
// the caller's own context stays a context error.
func TestStatementTimeoutIsTimeout(t *testing.T) {
	t.Parallel()
	_, url := openInternal(t)
	st, err := OpenWith(context.Background(), url, OpenOptions{StatementTimeout: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	_, err = st.pool.Exec(context.Background(), `SELECT pg_sleep(10)`)
	wantKind(t, "pg_sleep past statement_timeout", classified(err), ErrTimeout)

	ctx, cancel := context.WithTimeout(context.Background(), 100*time.Millisecond)
	defer cancel()
	def, err := Open(context.Background(), url)
	if err != nil {
		t.Fatal(err)
	}
	defer def.Close()
	_, err = def.pool.Exec(ctx, `SELECT pg_sleep(10)`)
	if err = classified(err); errors.Is(err, ErrTimeout) || !errors.Is(err, context.DeadlineExceeded) {
		t.Errorf("caller's deadline: %v; want a context deadline error, not ErrTimeout", err)
	}
}
