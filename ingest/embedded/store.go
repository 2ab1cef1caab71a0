package embedded

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"time"

	"modernc.org/sqlite" // registers the pure-Go "sqlite" database/sql driver
)

// driverName is the database/sql name modernc.org/sqlite registers.
const driverName = "sqlite"

// DefaultBusyTimeout is how long a statement waits for another process's
// write lock before it fails with SQLITE_BUSY.
const DefaultBusyTimeout = 5 * time.Second

// Options adjusts Open. The zero value opens read-write with the defaults.
type Options struct {
	// ReadOnly opens an existing store without ever writing to it (for
	// "dewline serve" and checks). The file must exist and be at this
	// binary's schema version; every write method returns ErrReadOnly.
	ReadOnly bool
	// BusyTimeout is how long to wait for another process holding the write
	// lock; DefaultBusyTimeout when zero.
	BusyTimeout time.Duration
	// Now stamps created_ms, written_ms and updated_ms; time.Now when nil.
	Now func() time.Time
	// DayZone, when set, is the site's zone: every write of hourly rows
	// keeps the daily sums of their local days up to date, and a
	// read-write Open builds those missing for rows written without it.
	DayZone *time.Location
	// Site is the id of the site opening the file. One file holds one
	// site: a file that holds another site's results is refused with
	// ErrOtherSite; a read-write open of a file that names no site yet
	// claims it. Empty skips the check (tests, tools).
	Site string
}

// Store is one dewline store file. Its methods are safe for concurrent use:
// writes are serialised inside the process, and reads run in parallel with
// them on their own pooled connections (WAL mode).
type Store struct {
	db        *sql.DB
	path      string
	abs       string
	readOnly  bool
	immutable bool // read-only in a folder it cannot write: read as a snapshot
	now       func() time.Time
	zone      *time.Location // DayZone

	// writeMu serialises this process's write transactions, so they queue
	// in Go instead of meeting SQLite's lock and busy_timeout.
	writeMu sync.Mutex

	// stmts are prepared reads, kept for the store's life: preparing
	// (parsing and planning the SQL) costs more than running a read of a
	// day of samples.
	stmtMu sync.Mutex
	stmts  map[string]*sql.Stmt

	closeOnce sync.Once
	closeErr  error
}

// Open opens the store at path. Read-write, it creates a missing file (not
// its folder) and migrates an older file to SchemaVersion, each step in its
// own transaction. A file written by a newer dewline is refused with
// ErrSchemaNewer; an SQLite file that is not a dewline store with
// ErrNotStore.
func Open(ctx context.Context, path string, opt Options) (*Store, error) {
	return open(ctx, path, opt, migrations)
}

// open is Open with the migration list as a parameter, so tests can show a
// later binary upgrading a file without touching the package's list.
func open(ctx context.Context, path string, opt Options, steps []migration) (*Store, error) {
	if path == "" {
		return nil, fmt.Errorf("open store: empty path: %w", ErrInvalid)
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("open store %s: %w", path, err)
	}
	if opt.ReadOnly {
		// SQLite would say only "unable to open database file".
		if _, err := os.Stat(abs); err != nil {
			return nil, fmt.Errorf("open store %s read-only: %w", path, err)
		}
	}
	if opt.BusyTimeout <= 0 {
		opt.BusyTimeout = DefaultBusyTimeout
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}

	db, err := sql.Open(driverName, dsn(abs, opt, false))
	if err != nil {
		return nil, fmt.Errorf("open store %s: %w", path, err)
	}
	s := &Store{db: db, path: path, abs: abs, readOnly: opt.ReadOnly, now: opt.Now, zone: opt.DayZone}
	// A ping opens the first connection, which runs the DSN's PRAGMAs: a
	// file that is not SQLite fails here.
	err = pingBusy(ctx, db, opt.BusyTimeout)
	if err == nil && opt.ReadOnly {
		err = checkVersion(ctx, db, len(steps))
	}
	if err != nil && opt.ReadOnly && cannotWriteBeside(err) {
		// A WAL file needs its -shm beside it, which a reader creates when
		// it is missing; in a folder this process cannot write it cannot,
		// and no writer has the file open (it would have made the -shm).
		// Read the file as it is: immutable.
		db.Close()
		if db, err = sql.Open(driverName, dsn(abs, opt, true)); err != nil {
			return nil, fmt.Errorf("open store %s: %w", path, err)
		}
		s.db, s.immutable = db, true
		if err = db.PingContext(ctx); err == nil {
			err = checkVersion(ctx, db, len(steps))
		}
	}
	if err == nil && !opt.ReadOnly {
		err = migrate(ctx, db, steps)
	}
	if err != nil {
		db.Close()
		return nil, fmt.Errorf("open store %s: %w", path, err)
	}
	if opt.Site != "" && len(steps) >= 4 {
		if err := s.claimSite(ctx, opt.Site); err != nil {
			db.Close()
			return nil, fmt.Errorf("open store %s: %w", path, err)
		}
	}
	if s.zone != nil && !opt.ReadOnly && len(steps) >= 3 {
		if err := s.rollUpMissing(ctx); err != nil {
			db.Close()
			return nil, fmt.Errorf("open store %s: %w", path, err)
		}
	}
	return s, nil
}

// dsn builds a file: URI for the driver. The URI form is needed for
// mode=ro; url.URL escapes '?', '#' and '%' in the path, which SQLite
// decodes again. Every pooled connection runs these settings when it opens:
//
//   - journal_mode=WAL: readers never block the writer nor the writer them;
//   - synchronous=NORMAL: the usual pairing with WAL; a power cut may lose
//     the last commits but never corrupts the file;
//   - foreign_keys=1: SQLite leaves them off unless asked, per connection;
//   - busy_timeout: wait for another process's write lock;
//   - _txlock=immediate: a write transaction takes the write lock at BEGIN,
//     so it cannot fail half-way when a read lock cannot be upgraded.
//
// immutable (read-only only) tells SQLite the file cannot change, so it
// needs no -shm: for a file in a folder the reader cannot write.
func dsn(abs string, opt Options, immutable bool) string {
	u := url.URL{Scheme: "file", Path: filepath.ToSlash(abs)}
	q := "_busy_timeout=" + strconv.FormatInt(opt.BusyTimeout.Milliseconds(), 10) + "&_foreign_keys=1"
	if opt.ReadOnly {
		// No journal_mode: switching a file to WAL is a write.
		q += "&mode=ro"
		if immutable {
			q += "&immutable=1"
		}
	} else {
		q += "&_journal_mode=WAL&_synchronous=NORMAL&_txlock=immediate"
	}
	return u.String() + "?" + q
}

// busyRetry is how long pingBusy waits between attempts.
const busyRetry = 10 * time.Millisecond

// pingBusy opens the first connection, trying again for up to timeout
// while the file is busy. Switching a new file to WAL, as the first
// connection does, needs a lock that SQLite does not wait for: with
// another process creating the same file at that moment (two agents
// starting at once) it fails with SQLITE_BUSY at once, whatever the busy
// timeout. Attempts are counted, not timed, so the store reads no clock.
func pingBusy(ctx context.Context, db *sql.DB, timeout time.Duration) error {
	for left := int(timeout / busyRetry); ; left-- {
		err := db.PingContext(ctx)
		if err == nil || left <= 0 || !isBusy(err) {
			return err
		}
		t := time.NewTimer(busyRetry)
		select {
		case <-ctx.Done():
			t.Stop()
			return err
		case <-t.C:
		}
	}
}

// isBusy reports an SQLite error SQLITE_BUSY, with any extended code.
func isBusy(err error) bool {
	var se *sqlite.Error
	return errors.As(err, &se) && se.Code()&0xff == 5
}

// cannotWriteBeside reports an SQLite error of a reader that could not
// create the files beside a WAL database (SQLITE_READONLY or
// SQLITE_CANTOPEN, with any extended code).
func cannotWriteBeside(err error) bool {
	var se *sqlite.Error
	if !errors.As(err, &se) {
		return false
	}
	code := se.Code() & 0xff
	return code == 8 || code == 14 // SQLITE_READONLY, SQLITE_CANTOPEN
}

// Path returns the path the store was opened with.
func (s *Store) Path() string { return s.path }

// Immutable reports whether a read-only store is read as a snapshot
// because its folder cannot be written (see Open): results written later
// are seen after the store is opened again.
func (s *Store) Immutable() bool { return s.immutable }

// Check reports whether the store still answers: its file is where it was
// opened and its header reads as this binary's schema. It is cheap enough
// for a readiness probe (no table scan).
func (s *Store) Check(ctx context.Context) error {
	if _, err := os.Stat(s.abs); err != nil {
		return fmt.Errorf("store %s: %w", s.path, err)
	}
	if err := checkVersion(ctx, s.db, len(migrations)); err != nil {
		return fmt.Errorf("store %s: %w", s.path, err)
	}
	var n int
	if err := s.db.QueryRowContext(ctx, "SELECT count(*) FROM (SELECT 1 FROM hourly LIMIT 1)").Scan(&n); err != nil {
		return fmt.Errorf("store %s: %w", s.path, err)
	}
	return nil
}

// ReadOnly reports whether the store was opened read-only.
func (s *Store) ReadOnly() bool { return s.readOnly }

// Close closes the file. Calling it again returns nil. Reads still
// streaming on other goroutines finish before the connections close.
func (s *Store) Close() error {
	first := false
	s.closeOnce.Do(func() {
		first = true
		s.stmtMu.Lock()
		for _, st := range s.stmts {
			st.Close()
		}
		s.stmts = nil
		s.stmtMu.Unlock()
		if err := s.db.Close(); err != nil {
			s.closeErr = fmt.Errorf("close store %s: %w", s.path, err)
		}
	})
	if !first {
		return nil
	}
	return s.closeErr
}

// prepared returns the statement for q, prepared on first use.
func (s *Store) prepared(ctx context.Context, q string) (*sql.Stmt, error) {
	s.stmtMu.Lock()
	defer s.stmtMu.Unlock()
	if st, ok := s.stmts[q]; ok {
		return st, nil
	}
	st, err := s.db.PrepareContext(ctx, q)
	if err != nil {
		return nil, err
	}
	if s.stmts == nil {
		s.stmts = map[string]*sql.Stmt{}
	}
	s.stmts[q] = st
	return st, nil
}

// write runs fn in one write transaction: serialised within the process,
// committed when fn returns nil and rolled back otherwise (a cancelled ctx
// rolls back too). what names the operation in the returned error.
func (s *Store) write(ctx context.Context, what string, fn func(tx *sql.Tx) error) error {
	if s.readOnly {
		return fmt.Errorf("%s: %w", what, ErrReadOnly)
	}
	s.writeMu.Lock()
	defer s.writeMu.Unlock()
	tx, err := s.db.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("%s: begin: %w", what, err)
	}
	if err := fn(tx); err != nil {
		// The rollback error adds nothing the caller can act on; the
		// transaction is gone either way.
		_ = tx.Rollback()
		return fmt.Errorf("%s: %w", what, err)
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("%s: commit: %w", what, err)
	}
	return nil
}

// nowMs is the store clock in Unix milliseconds.
func (s *Store) nowMs() int64 { return s.now().UnixMilli() }

// toMs returns t in Unix milliseconds, truncating (flooring) any
// sub-millisecond part: time.UnixMilli floors because its nanosecond part is
// never negative, also before 1970.
func toMs(t time.Time) int64 { return t.UnixMilli() }

// ceilMs returns the first whole millisecond at or after t. Window bounds use
// it so that, with stored times floored to the millisecond, from <= t < to
// selects exactly the stored times ts with ceilMs(from) <= ts < ceilMs(to).
func ceilMs(t time.Time) int64 {
	ms := t.UnixMilli()
	if t.Nanosecond()%int(time.Millisecond) != 0 {
		ms++
	}
	return ms
}

// fromMs turns stored Unix milliseconds back into a UTC time.
func fromMs(ms int64) time.Time { return time.UnixMilli(ms).UTC() }

// nullMs reads a nullable millisecond column: NULL is the zero time.
func nullMs(v sql.NullInt64) time.Time {
	if !v.Valid {
		return time.Time{}
	}
	return fromMs(v.Int64)
}

// msOrNull stores the zero time as NULL.
func msOrNull(t time.Time) any {
	if t.IsZero() {
		return nil
	}
	return toMs(t)
}

// readDone ends a read that handed rows to a callback: the callback's
// error (err) comes back as it is, the cursor's wrapped with what.
func readDone(rows *sql.Rows, err error, what string) error {
	if err != nil {
		return rowsDone(rows, err)
	}
	if err := rowsDone(rows, nil); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return nil
}

// rowsDone closes rows and returns the first of err and the iteration's own
// error, so a callback's error wins over the cursor's.
func rowsDone(rows *sql.Rows, err error) error {
	cerr := rows.Close()
	if err != nil {
		return err
	}
	if rerr := rows.Err(); rerr != nil {
		return rerr
	}
	return cerr
}
