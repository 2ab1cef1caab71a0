package embedded

import (
	"math"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// writeRowSamples stores samples as a file before schema v6 held them, one
// row each in the samples table, with plain SQL: the series is created
// when missing.
func writeRowSamples(t *testing.T, path, name string, samples []ingest.Sample) {
	t.Helper()
	db := plainDB(t, path)
	_, err := db.Exec("INSERT OR IGNORE INTO series (name, unit_si, created_ms) VALUES (?, '°C', 0)", name)
	require.NoError(t, err)
	for _, sm := range samples {
		_, err := db.Exec(`INSERT INTO samples (series_id, ts_ms, value)
			VALUES ((SELECT id FROM series WHERE name = ?), ?, ?)`, name, sm.Time.UnixMilli(), sm.Value)
		require.NoError(t, err)
	}
	require.NoError(t, db.Close())
}

// TestStore_PackSamples opens a v5 file, whose samples are one row each,
// and reads every sample back after the upgrade packed them into day
// blocks: values bit for bit (the smallest subnormal, the largest float64,
// whole numbers SQLite keeps as integers; not -0, which the samples table
// already kept as 0), times to the
// millisecond, across days and series; then the samples table is gone.
func TestStore_PackSamples(t *testing.T) {
	ctx := testCtx(t)
	path := filepath.Join(t.TempDir(), "dewline.db")
	s, err := open(ctx, path, Options{}, migrations[:5])
	require.NoError(t, err)
	require.NoError(t, s.Close())

	odd := []float64{0, 5e-324, math.MaxFloat64, 13, -40.125, 0.1, 0.1, 1e300}
	var a, b []ingest.Sample
	for i := range 3000 { // 50 h at one minute: three UTC days from 14:00
		a = append(a, ingest.Sample{Time: t0.Add(time.Duration(i) * time.Minute), Value: 20 + float64(i%37)/8})
	}
	for i, v := range odd {
		// Irregular times, one of them before 1970.
		b = append(b, ingest.Sample{Time: t0.Add(time.Duration(i*i*7919) * time.Millisecond), Value: v})
	}
	before1970 := ingest.Sample{Time: time.Date(1969, 12, 31, 23, 59, 59, 1e6, time.UTC), Value: 7}
	writeRowSamples(t, path, "a", a)
	writeRowSamples(t, path, "b", append([]ingest.Sample{before1970}, b...))

	s, err = Open(ctx, path, Options{})
	require.NoError(t, err)
	defer s.Close()
	assert.Equal(t, a, collect(t, s, metrics.PointRef{Point: "a"}, t0, t0.Add(100*time.Hour)))
	gotB := collect(t, s, metrics.PointRef{Point: "b"}, before1970.Time, t0.Add(time.Hour))
	require.Len(t, gotB, len(odd)+1)
	assert.Equal(t, before1970, gotB[0])
	for i, v := range odd {
		assert.Equal(t, math.Float64bits(v), math.Float64bits(gotB[i+1].Value), "value %d (%v) bit for bit", i, v)
		assert.Equal(t, b[i].Time, gotB[i+1].Time)
	}
	info, err := s.SeriesInfo(ctx, "a")
	require.NoError(t, err)
	assert.Equal(t, SeriesInfo{Name: "a", UnitSI: "°C", Count: 3000, First: t0, Last: t0.Add(2999 * time.Minute)}, info)

	db := plainDB(t, path)
	var n int
	require.NoError(t, db.QueryRow("SELECT count(*) FROM sqlite_master WHERE name = 'samples'").Scan(&n))
	assert.Zero(t, n, "the samples table is dropped")
	require.NoError(t, db.QueryRow("SELECT count(*) FROM sample_blocks").Scan(&n))
	assert.Equal(t, 3+2, n, "a: 10 h on t0's day, 24 h, 16 h; b: 1969-12-31 and t0's day")
}

// TestStore_PackSamplesFails: a v5 file holding a value that is not a
// number (put there by hand) cannot be packed; the upgrade says which
// sample and how to fix it, and leaves the file at v5 with every row.
func TestStore_PackSamplesFails(t *testing.T) {
	ctx := testCtx(t)
	path := filepath.Join(t.TempDir(), "dewline.db")
	s, err := open(ctx, path, Options{}, migrations[:5])
	require.NoError(t, err)
	require.NoError(t, s.Close())
	var in []ingest.Sample
	for i := range 2000 {
		in = append(in, ingest.Sample{Time: t0.Add(time.Duration(i) * time.Minute), Value: float64(i)})
	}
	writeRowSamples(t, path, "AHU-1 SAT", in)
	bad := t0.Add(1500 * time.Minute) // 2024-07-02T15:00Z
	_, err = plainDB(t, path).Exec("UPDATE samples SET value = 'n/a' WHERE ts_ms = ?", bad.UnixMilli())
	require.NoError(t, err)

	_, err = Open(ctx, path, Options{})
	require.Error(t, err)
	for _, m := range []string{"v5 to v6", `"AHU-1 SAT"`, "2024-07-02T15:00:00Z", `"n/a"`, "sqlite3", "left at v5"} {
		assert.Contains(t, err.Error(), m)
	}

	db := plainDB(t, path)
	assert.Equal(t, 5, pragmaInt(t, db, "user_version"))
	var n int
	require.NoError(t, db.QueryRow("SELECT count(*) FROM samples").Scan(&n))
	assert.Equal(t, 2000, n, "every row is still there")
	require.NoError(t, db.QueryRow("SELECT count(*) FROM sqlite_master WHERE name = 'sample_blocks'").Scan(&n))
	assert.Zero(t, n, "the new table was rolled back")

	// Corrected by hand, the file upgrades.
	_, err = db.Exec("UPDATE samples SET value = 1500 WHERE ts_ms = ?", bad.UnixMilli())
	require.NoError(t, err)
	s, err = Open(ctx, path, Options{})
	require.NoError(t, err)
	defer s.Close()
	assert.Equal(t, in, collect(t, s, metrics.PointRef{Point: "AHU-1 SAT"}, t0, t0.Add(48*time.Hour)))
}
