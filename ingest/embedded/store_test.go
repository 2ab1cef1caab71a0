package embedded

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// t0 is 2024-07-01T14:00:00Z; its Unix time, 1719842400 s, was computed
// with GNU date (date -u -d 2024-07-01T14:00:00Z +%s), not by this code.
var t0 = time.Date(2024, time.July, 1, 14, 0, 0, 0, time.UTC)

const t0Ms = int64(1719842400000)

// fixedNow is the store clock in tests.
var fixedNow = time.Date(2024, time.July, 2, 9, 30, 0, 0, time.UTC)

func testCtx(t *testing.T) context.Context {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute)
	t.Cleanup(cancel)
	return ctx
}

// newStore opens a fresh store in a temporary folder and closes it after
// the test.
func newStore(t *testing.T) (*Store, string) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "dewline.db")
	s, err := Open(testCtx(t), path, Options{Now: func() time.Time { return fixedNow }})
	require.NoError(t, err)
	t.Cleanup(func() { assert.NoError(t, s.Close()) })
	return s, path
}

// plainDB opens path with a plain database/sql connection, as any other
// SQLite client would, without any of the store's settings. It passes a
// file: URI because the driver cuts a plain name at its first '?'.
func plainDB(t *testing.T, path string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite", (&url.URL{Scheme: "file", Path: path}).String())
	require.NoError(t, err)
	t.Cleanup(func() { db.Close() })
	return db
}

func pragmaInt(t *testing.T, q interface {
	QueryRow(string, ...any) *sql.Row
}, name string) int {
	t.Helper()
	var v int
	require.NoError(t, q.QueryRow("PRAGMA "+name).Scan(&v))
	return v
}

func TestStore_Open(t *testing.T) {
	ctx := testCtx(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "sub dir?#", "dewline.db") // characters a URI must escape
	require.NoError(t, os.MkdirAll(filepath.Dir(path), 0o755))

	s, err := Open(ctx, path, Options{})
	require.NoError(t, err)
	assert.Equal(t, path, s.Path())
	_, err = os.Stat(path)
	require.NoError(t, err, "the file is created at the path given, not at an unescaped variant")

	// Settings every pooled connection must carry, checked on a connection
	// of the store's own pool.
	conn, err := s.db.Conn(ctx)
	require.NoError(t, err)
	var mode string
	require.NoError(t, conn.QueryRowContext(ctx, "PRAGMA journal_mode").Scan(&mode))
	assert.Equal(t, "wal", mode)
	var fk, busy int
	require.NoError(t, conn.QueryRowContext(ctx, "PRAGMA foreign_keys").Scan(&fk))
	require.NoError(t, conn.QueryRowContext(ctx, "PRAGMA busy_timeout").Scan(&busy))
	assert.Equal(t, 1, fk)
	assert.Equal(t, 5000, busy, "DefaultBusyTimeout is 5 s")
	require.NoError(t, conn.Close())

	_, err = s.WriteSamples(ctx, "AHU-1 SAT", "temperature", "°C", "°F", []ingest.Sample{{Time: t0, Value: 12.5}})
	require.NoError(t, err)
	require.NoError(t, s.Close())
	require.NoError(t, s.Close(), "closing twice is fine")

	// The header, read by a client that knows nothing of dewline.
	db := plainDB(t, path)
	assert.Equal(t, SchemaVersion, pragmaInt(t, db, "user_version"))
	assert.Equal(t, 0x6465776c, pragmaInt(t, db, "application_id"), `"dewl" in ASCII`)
	require.NoError(t, db.Close())

	// Reopening neither migrates again nor loses data.
	s, err = Open(ctx, path, Options{})
	require.NoError(t, err)
	defer s.Close()
	info, err := s.SeriesInfo(ctx, "AHU-1 SAT")
	require.NoError(t, err)
	assert.Equal(t, 1, info.Count)
}

func TestStore_OpenErrors(t *testing.T) {
	tests := []struct {
		name    string
		prepare func(t *testing.T, path string) // makes the file
		opt     Options
		wantErr error
		wantMsg []string
	}{
		{
			name: "newer schema",
			prepare: func(t *testing.T, path string) {
				s, err := Open(testCtx(t), path, Options{})
				require.NoError(t, err)
				require.NoError(t, s.Close())
				_, err = plainDB(t, path).Exec("PRAGMA user_version = 7")
				require.NoError(t, err)
			},
			wantErr: ErrSchemaNewer,
			wantMsg: []string{"v7", fmt.Sprintf("v%d", SchemaVersion), "upgrade dewline"},
		},
		{
			name: "newer schema read-only",
			prepare: func(t *testing.T, path string) {
				s, err := Open(testCtx(t), path, Options{})
				require.NoError(t, err)
				require.NoError(t, s.Close())
				_, err = plainDB(t, path).Exec(fmt.Sprintf("PRAGMA user_version = %d", SchemaVersion+1))
				require.NoError(t, err)
			},
			opt:     Options{ReadOnly: true},
			wantErr: ErrSchemaNewer,
			wantMsg: []string{fmt.Sprintf("v%d", SchemaVersion+1), "upgrade dewline"},
		},
		{
			name: "other program's tables",
			prepare: func(t *testing.T, path string) {
				_, err := plainDB(t, path).Exec("CREATE TABLE invoices (id INTEGER PRIMARY KEY)")
				require.NoError(t, err)
			},
			wantErr: ErrNotStore,
		},
		{
			name: "other program's application id",
			prepare: func(t *testing.T, path string) {
				_, err := plainDB(t, path).Exec("PRAGMA application_id = 1234")
				require.NoError(t, err)
			},
			wantErr: ErrNotStore,
			wantMsg: []string{"0x4d2"},
		},
		{
			name: "not sqlite",
			prepare: func(t *testing.T, path string) {
				require.NoError(t, os.WriteFile(path, []byte("time,AHU-1 SAT\n2024-07-01 14:00,55.1\n"), 0o644))
			},
			wantMsg: []string{"not a database"},
		},
		{
			name:    "read-only missing file",
			prepare: func(t *testing.T, path string) {},
			opt:     Options{ReadOnly: true},
			wantErr: os.ErrNotExist,
		},
		{
			name: "read-only older schema",
			prepare: func(t *testing.T, path string) {
				_, err := plainDB(t, path).Exec("PRAGMA user_version = 0") // an empty SQLite file
				require.NoError(t, err)
			},
			opt:     Options{ReadOnly: true},
			wantErr: ErrSchemaOlder,
			wantMsg: []string{"v0", "read-write"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "dewline.db")
			tt.prepare(t, path)
			s, err := Open(testCtx(t), path, tt.opt)
			if s != nil {
				s.Close()
			}
			require.Error(t, err)
			if tt.wantErr != nil {
				assert.ErrorIs(t, err, tt.wantErr)
			}
			assert.Contains(t, err.Error(), path, "the error names the file")
			for _, m := range tt.wantMsg {
				assert.Contains(t, err.Error(), m)
			}
		})
	}
}

func TestStore_Migrations(t *testing.T) {
	require.Len(t, migrations, SchemaVersion, "SchemaVersion is the number of migration steps")

	t.Run("upgrade keeps data", func(t *testing.T) {
		ctx := testCtx(t)
		path := filepath.Join(t.TempDir(), "dewline.db")
		s, err := Open(ctx, path, Options{})
		require.NoError(t, err)
		_, err = s.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", []ingest.Sample{{Time: t0, Value: 13}})
		require.NoError(t, err)
		require.NoError(t, s.Close())

		// A later binary with one more step.
		next := append(migrations[:len(migrations):len(migrations)], migration{
			name: "series note",
			sql:  "ALTER TABLE series ADD COLUMN note TEXT NOT NULL DEFAULT ''",
		})
		s, err = open(ctx, path, Options{}, next)
		require.NoError(t, err)
		var n int
		require.NoError(t, s.db.QueryRowContext(ctx, "SELECT count(*) FROM series WHERE note = ''").Scan(&n))
		assert.Equal(t, 1, n)
		info, err := s.SeriesInfo(ctx, "AHU-1 SAT")
		require.NoError(t, err)
		assert.Equal(t, 1, info.Count)
		require.NoError(t, s.Close())
		assert.Equal(t, SchemaVersion+1, pragmaInt(t, plainDB(t, path), "user_version"))

		// And this binary now refuses the upgraded file.
		_, err = Open(ctx, path, Options{})
		assert.ErrorIs(t, err, ErrSchemaNewer)
	})

	t.Run("failed step rolls back", func(t *testing.T) {
		ctx := testCtx(t)
		path := filepath.Join(t.TempDir(), "dewline.db")
		bad := append(migrations[:len(migrations):len(migrations)], migration{
			name: "broken",
			sql:  "CREATE TABLE extra (x INTEGER); INSERT INTO no_such_table VALUES (1)",
		})
		_, err := open(ctx, path, Options{}, bad)
		require.Error(t, err)
		assert.Contains(t, err.Error(), fmt.Sprintf("v%d to v%d (broken)", SchemaVersion, SchemaVersion+1))

		db := plainDB(t, path)
		assert.Equal(t, SchemaVersion, pragmaInt(t, db, "user_version"), "the steps before the broken one stay applied")
		var n int
		require.NoError(t, db.QueryRow("SELECT count(*) FROM sqlite_master WHERE name = 'extra'").Scan(&n))
		assert.Zero(t, n, "the broken step's first statement was rolled back")
	})
}

func TestStore_ReadOnly(t *testing.T) {
	ctx := testCtx(t)
	rw, path := newStore(t)
	_, err := rw.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", []ingest.Sample{{Time: t0, Value: 13}})
	require.NoError(t, err)

	// Opened while the writer is still open, as "dewline serve" would be.
	ro, err := Open(ctx, path, Options{ReadOnly: true})
	require.NoError(t, err)
	defer ro.Close()
	assert.True(t, ro.ReadOnly())

	var got []ingest.Sample
	require.NoError(t, ro.ReadSeries(ctx, metrics.PointRef{Point: "AHU-1 SAT"}, t0, t0.Add(time.Hour),
		func(s ingest.Sample) error { got = append(got, s); return nil }))
	assert.Equal(t, []ingest.Sample{{Time: t0, Value: 13}}, got)

	writes := []struct {
		name string
		do   func() error
	}{
		{"samples", func() error {
			_, err := ro.WriteSamples(ctx, "x", "", "", "", nil)
			return err
		}},
		{"hourly", func() error { return ro.PutHourly(ctx, []HourRow{{AHU: "AHU-1", Hour: t0}}) }},
		{"checkpoint", func() error { return ro.SetCheckpoint(ctx, "AHU-1", t0) }},
	}
	for _, w := range writes {
		assert.ErrorIs(t, w.do(), ErrReadOnly, w.name)
	}

	// Even past the Go-level check, the connection itself cannot write.
	_, err = ro.db.ExecContext(ctx, "DELETE FROM sample_blocks")
	assert.Error(t, err)

	// And with no writer left (its close removed the -wal and -shm files).
	require.NoError(t, ro.Close())
	require.NoError(t, rw.Close())
	for _, suffix := range []string{"-wal", "-shm"} {
		_, err := os.Stat(path + suffix)
		require.ErrorIs(t, err, os.ErrNotExist, suffix)
	}
	ro, err = Open(ctx, path, Options{ReadOnly: true})
	require.NoError(t, err)
	defer ro.Close()
	info, err := ro.SeriesInfo(ctx, "AHU-1 SAT")
	require.NoError(t, err)
	assert.Equal(t, 1, info.Count)
}

// TestStore_PlainSQL shows the file is ordinary SQLite: a second, plain
// database/sql connection runs the query documented in doc.go.
func TestStore_PlainSQL(t *testing.T) {
	ctx := testCtx(t)
	s, path := newStore(t)
	_, err := s.WriteSamples(ctx, "AHU-1 SAT", "temperature", "°C", "°F", []ingest.Sample{
		{Time: t0.Add(time.Minute), Value: 12.75},
		{Time: t0, Value: 12.5},
	})
	require.NoError(t, err)
	require.NoError(t, s.PutHourly(ctx, []HourRow{{AHU: "AHU-1", Hour: t0, Schema: 1,
		Fields: map[string]float64{"reheat_kwh": 3.25}}}))

	db := plainDB(t, path)
	rows, err := db.Query(`
	  SELECT s.name, date(b.day_ms/1000, 'unixepoch') AS day, b.n,
	    datetime(b.first_ms/1000, 'unixepoch') AS first, datetime(b.last_ms/1000, 'unixepoch') AS last, s.unit_si
	  FROM sample_blocks b JOIN series s ON s.id = b.series_id
	  WHERE s.name = 'AHU-1 SAT' ORDER BY b.day_ms`)
	require.NoError(t, err)
	type row struct {
		name, day         string
		n                 int
		first, last, unit string
	}
	var got []row
	for rows.Next() {
		var r row
		require.NoError(t, rows.Scan(&r.name, &r.day, &r.n, &r.first, &r.last, &r.unit))
		got = append(got, r)
	}
	require.NoError(t, rows.Err())
	// SQLite's own date() and datetime() text for the day and the two
	// sample times.
	assert.Equal(t, []row{
		{"AHU-1 SAT", "2024-07-01", 2, "2024-07-01 14:00:00", "2024-07-01 14:01:00", "°C"},
	}, got)

	var (
		hour   string
		reheat float64
	)
	require.NoError(t, db.QueryRow(`SELECT datetime(hour_ms/1000, 'unixepoch'), json_extract(fields, '$.reheat_kwh')
	  FROM hourly ORDER BY hour_ms, ahu`).Scan(&hour, &reheat))
	assert.Equal(t, "2024-07-01 14:00:00", hour)
	assert.Equal(t, 3.25, reheat)
}

// TestStore_Concurrent runs one writer and several readers at once (go test
// -race checks the Go side); every read must see whole batches only,
// because each batch is one transaction.
func TestStore_Concurrent(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	const (
		batches = 20
		perBat  = 500
	)
	ref := metrics.PointRef{Point: "AHU-1 SAT"}
	_, err := s.WriteSamples(ctx, ref.Name(), "", "°C", "", nil) // so readers never see "unknown"
	require.NoError(t, err)

	var wg sync.WaitGroup
	stop := make(chan struct{})
	readErrs := make(chan error, 4)
	for range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				select {
				case <-stop:
					return
				default:
				}
				n := 0
				err := s.ReadSeries(ctx, ref, t0, t0.Add(24*time.Hour), func(ingest.Sample) error { n++; return nil })
				if err == nil && n%perBat != 0 {
					err = fmt.Errorf("read %d samples, not a multiple of the batch size %d", n, perBat)
				}
				if err != nil {
					readErrs <- err
					return
				}
			}
		}()
	}
	for b := range batches {
		batch := make([]ingest.Sample, perBat)
		for i := range batch {
			batch[i] = ingest.Sample{Time: t0.Add(time.Duration(b*perBat+i) * time.Second), Value: float64(i)}
		}
		_, err := s.WriteSamples(ctx, ref.Name(), "", "°C", "", batch)
		require.NoError(t, err)
	}
	close(stop)
	wg.Wait()
	close(readErrs)
	for err := range readErrs {
		assert.NoError(t, err)
	}
	info, err := s.SeriesInfo(ctx, ref.Name())
	require.NoError(t, err)
	assert.Equal(t, batches*perBat, info.Count)
}

func TestStore_CancelledContext(t *testing.T) {
	s, _ := newStore(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	_, err := s.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", []ingest.Sample{{Time: t0, Value: 1}})
	assert.True(t, errors.Is(err, context.Canceled), "got %v", err)
	_, err = s.SeriesInfo(testCtx(t), "AHU-1 SAT")
	assert.ErrorIs(t, err, ErrUnknownSeries, "nothing was written")
}

// TestStore_OpenAtOnce: several processes (here, separate pools) creating
// the same new file at the same moment all open it. The first connection
// of each switches the file to WAL, which SQLite refuses at once, without
// the busy timeout, while another holds the lock; Open tries again.
func TestStore_OpenAtOnce(t *testing.T) {
	for i := range 30 {
		path := filepath.Join(t.TempDir(), "dewline.db")
		var wg sync.WaitGroup
		errs := make([]error, 3)
		for k := range errs {
			wg.Add(1)
			go func() {
				defer wg.Done()
				s, err := Open(testCtx(t), path, Options{})
				if err == nil {
					err = s.Close()
				}
				errs[k] = err
			}()
		}
		wg.Wait()
		for k, err := range errs {
			require.NoError(t, err, "round %d, opener %d", i, k)
		}
	}
}
