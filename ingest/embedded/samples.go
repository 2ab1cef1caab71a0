package embedded

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// SeriesInfo describes one stored series. First and Last are zero when the
// series holds no samples.
type SeriesInfo struct {
	Name       string
	Kind       string // what the series measures, e.g. a role name; free text
	UnitSI     string // unit of the stored values, as psychro names it
	SourceUnit string // unit the export logged, before conversion
	Count      int
	First      time.Time
	Last       time.Time
}

// insertChunk is how many samples one INSERT statement carries. Multi-row
// VALUES amortise the per-statement cost of database/sql and the driver,
// which dominates single-row inserts; 256 rows bind 768 parameters, far
// below SQLite's limit of 32766.
const insertChunk = 256

// upsertSamplesSQL returns the upsert for n samples. ON CONFLICT ... DO
// UPDATE keeps the row and replaces its value, so a re-import never
// duplicates; within one statement a later duplicate time wins.
func upsertSamplesSQL(n int) string {
	var b strings.Builder
	b.WriteString("INSERT INTO samples (series_id, ts_ms, value) VALUES ")
	for i := range n {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString("(?,?,?)")
	}
	b.WriteString(" ON CONFLICT (series_id, ts_ms) DO UPDATE SET value = excluded.value")
	return b.String()
}

var upsertChunkSQL = upsertSamplesSQL(insertChunk)

// WriteSamples stores samples under the series name, creating the series on
// first use, in one transaction: either all samples are written or none.
// A sample whose time is already stored has its value replaced, so
// re-importing a file changes nothing. Times are kept to the millisecond;
// a sub-millisecond part is truncated, and two samples within the same
// millisecond keep the later one in the slice.
//
// kind, unitSI and sourceUnit describe the series; empty ones leave the
// stored description as it is. A unitSI different from the stored one is
// refused with ErrUnitMismatch, so one series never mixes units.
//
// Every value must be finite: NaN or ±Inf is refused with ErrNotFinite,
// naming the series and the time, before anything is written (SQLite would
// store NaN as NULL, which the samples table does not allow).
func (s *Store) WriteSamples(ctx context.Context, name string, kind, unitSI, sourceUnit string, samples []ingest.Sample) (written int, err error) {
	what := "write samples for " + quote(name)
	if name == "" {
		return 0, fmt.Errorf("write samples: empty series name: %w", ErrInvalid)
	}
	if err := checkFinite(samples); err != nil {
		return 0, fmt.Errorf("%s: %w", what, err)
	}
	err = s.write(ctx, what, func(tx *sql.Tx) error {
		id, err := upsertSeries(ctx, tx, name, kind, unitSI, sourceUnit, s.nowMs())
		if err != nil {
			return err
		}
		return insertSamples(ctx, tx, id, samples, insertChunk)
	})
	if err != nil {
		return 0, err
	}
	return len(samples), nil
}

// checkFinite reports the first non-finite sample and how many there are.
func checkFinite(samples []ingest.Sample) error {
	bad, first := 0, -1
	for i, sm := range samples {
		if math.IsNaN(sm.Value) || math.IsInf(sm.Value, 0) {
			if first < 0 {
				first = i
			}
			bad++
		}
	}
	if bad == 0 {
		return nil
	}
	sm := samples[first]
	return fmt.Errorf("sample %d at %s is %v (%d of %d samples not finite): %w",
		first, sm.Time.UTC().Format(time.RFC3339Nano), sm.Value, bad, len(samples), ErrNotFinite)
}

// upsertSeries returns the id of the named series, creating it or filling
// in its description.
func upsertSeries(ctx context.Context, tx *sql.Tx, name, kind, unitSI, sourceUnit string, nowMs int64) (int64, error) {
	var (
		id               int64
		oldKind, oldUnit string
		oldSource        string
	)
	err := tx.QueryRowContext(ctx,
		"SELECT id, kind, unit_si, source_unit FROM series WHERE name = ?", name).
		Scan(&id, &oldKind, &oldUnit, &oldSource)
	switch {
	case errors.Is(err, sql.ErrNoRows):
		err = tx.QueryRowContext(ctx,
			`INSERT INTO series (name, kind, unit_si, source_unit, created_ms) VALUES (?, ?, ?, ?, ?) RETURNING id`,
			name, kind, unitSI, sourceUnit, nowMs).Scan(&id)
		if err != nil {
			return 0, fmt.Errorf("create series: %w", err)
		}
		return id, nil
	case err != nil:
		return 0, fmt.Errorf("look up series: %w", err)
	}
	if unitSI != "" && oldUnit != "" && unitSI != oldUnit {
		return 0, fmt.Errorf("series holds %q, samples are in %q: %w", oldUnit, unitSI, ErrUnitMismatch)
	}
	if (kind == "" || kind == oldKind) && (unitSI == "" || unitSI == oldUnit) && (sourceUnit == "" || sourceUnit == oldSource) {
		return id, nil
	}
	_, err = tx.ExecContext(ctx, `UPDATE series SET
		kind = coalesce(nullif(?, ''), kind),
		unit_si = coalesce(nullif(?, ''), unit_si),
		source_unit = coalesce(nullif(?, ''), source_unit)
		WHERE id = ?`, kind, unitSI, sourceUnit, id)
	if err != nil {
		return 0, fmt.Errorf("update series: %w", err)
	}
	return id, nil
}

// insertSamples upserts samples in chunks of chunk rows through one
// prepared statement, and the remainder through a second. chunk is a
// parameter only so the benchmark can time single-row statements.
func insertSamples(ctx context.Context, tx *sql.Tx, seriesID int64, samples []ingest.Sample, chunk int) error {
	args := make([]any, 0, 3*chunk)
	exec := func(stmt *sql.Stmt, part []ingest.Sample) error {
		args = args[:0]
		for _, sm := range part {
			args = append(args, seriesID, toMs(sm.Time), sm.Value)
		}
		if _, err := stmt.ExecContext(ctx, args...); err != nil {
			return fmt.Errorf("insert samples from %s: %w", part[0].Time.UTC().Format(time.RFC3339Nano), err)
		}
		return nil
	}
	full := len(samples) / chunk * chunk
	if full > 0 {
		q := upsertChunkSQL
		if chunk != insertChunk {
			q = upsertSamplesSQL(chunk)
		}
		stmt, err := tx.PrepareContext(ctx, q)
		if err != nil {
			return fmt.Errorf("prepare insert: %w", err)
		}
		defer stmt.Close()
		for i := 0; i < full; i += chunk {
			if err := exec(stmt, samples[i:i+chunk]); err != nil {
				return err
			}
		}
	}
	if rest := samples[full:]; len(rest) > 0 {
		stmt, err := tx.PrepareContext(ctx, upsertSamplesSQL(len(rest)))
		if err != nil {
			return fmt.Errorf("prepare insert: %w", err)
		}
		defer stmt.Close()
		if err := exec(stmt, rest); err != nil {
			return err
		}
	}
	return nil
}

// ReadSeries calls fn with the samples of ref's series (ref.Name()) whose
// time t satisfies from <= t < to, in time order, streaming them from the
// file: memory does not grow with the window. Times come back in UTC at
// millisecond precision. An error from fn stops the read and is returned
// as it is. A series never imported is an error matching ErrUnknownSeries;
// a known series with nothing in the window calls fn zero times.
func (s *Store) ReadSeries(ctx context.Context, ref metrics.PointRef, from, to time.Time, fn func(ingest.Sample) error) error {
	name := ref.Name()
	var id int64
	err := s.db.QueryRowContext(ctx, "SELECT id FROM series WHERE name = ?", name).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return unknownSeries(name)
	}
	if err != nil {
		return fmt.Errorf("read series %s: %w", quote(name), err)
	}
	rows, err := s.db.QueryContext(ctx,
		"SELECT ts_ms, value FROM samples WHERE series_id = ? AND ts_ms >= ? AND ts_ms < ? ORDER BY ts_ms",
		id, ceilMs(from), ceilMs(to))
	if err != nil {
		return fmt.Errorf("read series %s: %w", quote(name), err)
	}
	var (
		ms int64
		v  float64
	)
	for rows.Next() {
		if err = rows.Scan(&ms, &v); err != nil {
			err = fmt.Errorf("read series %s: %w", quote(name), err)
			break
		}
		if err = fn(ingest.Sample{Time: fromMs(ms), Value: v}); err != nil {
			break
		}
	}
	return readDone(rows, err, "read series "+quote(name))
}

// SampleSpan returns the times of the first and the last stored sample of
// ref's series; ok is false when it has none or was never imported.
func (s *Store) SampleSpan(ctx context.Context, ref metrics.PointRef) (first, last time.Time, ok bool, err error) {
	var lo, hi sql.NullInt64
	err = s.db.QueryRowContext(ctx, `SELECT min(x.ts_ms), max(x.ts_ms) FROM series s JOIN samples x ON x.series_id = s.id
		WHERE s.name = ?`, ref.Name()).Scan(&lo, &hi)
	if err != nil {
		return time.Time{}, time.Time{}, false, fmt.Errorf("span of series %s: %w", quote(ref.Name()), err)
	}
	if !lo.Valid || !hi.Valid {
		return time.Time{}, time.Time{}, false, nil
	}
	return fromMs(lo.Int64), fromMs(hi.Int64), true, nil
}

// unknownSeries is the error for a series that is not in the store.
func unknownSeries(name string) error {
	return fmt.Errorf("series %s: %w in the embedded store; load it with \"dewline import\"", quote(name), ErrUnknownSeries)
}

// seriesInfoSQL aggregates per series; LEFT JOIN keeps series without
// samples (count 0, NULL bounds).
const seriesInfoSQL = `SELECT s.name, s.kind, s.unit_si, s.source_unit,
	count(x.ts_ms), min(x.ts_ms), max(x.ts_ms)
	FROM series s LEFT JOIN samples x ON x.series_id = s.id`

// SeriesInfo describes the named series; ErrUnknownSeries when it is not
// stored. Count scans the series' samples, so it costs time in proportion
// to their number (about a millisecond per 100k).
func (s *Store) SeriesInfo(ctx context.Context, name string) (SeriesInfo, error) {
	row := s.db.QueryRowContext(ctx, seriesInfoSQL+" WHERE s.name = ? GROUP BY s.id", name)
	info, err := scanSeriesInfo(row)
	if errors.Is(err, sql.ErrNoRows) {
		return SeriesInfo{}, unknownSeries(name)
	}
	if err != nil {
		return SeriesInfo{}, fmt.Errorf("series info %s: %w", quote(name), err)
	}
	return info, nil
}

// ListSeries describes every stored series, by name.
func (s *Store) ListSeries(ctx context.Context) ([]SeriesInfo, error) {
	rows, err := s.db.QueryContext(ctx, seriesInfoSQL+" GROUP BY s.id ORDER BY s.name")
	if err != nil {
		return nil, fmt.Errorf("list series: %w", err)
	}
	var out []SeriesInfo
	for rows.Next() {
		info, err := scanSeriesInfo(rows)
		if err != nil {
			return nil, fmt.Errorf("list series: %w", rowsDone(rows, err))
		}
		out = append(out, info)
	}
	if err := rowsDone(rows, nil); err != nil {
		return nil, fmt.Errorf("list series: %w", err)
	}
	return out, nil
}

// scanner is *sql.Row or *sql.Rows.
type scanner interface{ Scan(dest ...any) error }

func scanSeriesInfo(r scanner) (SeriesInfo, error) {
	var (
		info        SeriesInfo
		first, last sql.NullInt64
	)
	if err := r.Scan(&info.Name, &info.Kind, &info.UnitSI, &info.SourceUnit, &info.Count, &first, &last); err != nil {
		return SeriesInfo{}, err
	}
	info.First, info.Last = nullMs(first), nullMs(last)
	return info, nil
}

// quote prints a name for an error message, showing empty and odd names.
func quote(name string) string { return fmt.Sprintf("%q", name) }
