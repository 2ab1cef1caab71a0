package embedded

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
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
// naming the series and the time, before anything is written (a block
// could hold them, but nothing downstream expects them).
func (s *Store) WriteSamples(ctx context.Context, name string, kind, unitSI, sourceUnit string, samples []ingest.Sample) (written int, err error) {
	return s.WriteBatch(ctx, []SeriesSamples{{Name: name, Kind: kind, UnitSI: unitSI, SourceUnit: sourceUnit, Samples: samples}})
}

// SeriesSamples is one series' share of a WriteBatch: its name, its
// description as WriteSamples takes it, and its samples.
type SeriesSamples struct {
	Name, Kind, UnitSI, SourceUnit string
	Samples                        []ingest.Sample
}

// WriteBatch is WriteSamples for several series in one transaction: either
// every sample of every series is written or none. A series may appear
// more than once; its later samples win at equal times. It returns the
// number of samples written.
func (s *Store) WriteBatch(ctx context.Context, batch []SeriesSamples) (written int, err error) {
	what := "write samples"
	if len(batch) == 1 {
		what = "write samples for " + quote(batch[0].Name)
	}
	for _, ss := range batch {
		if ss.Name == "" {
			return 0, fmt.Errorf("%s: empty series name: %w", what, ErrInvalid)
		}
		if err := checkFinite(ss.Samples); err != nil {
			return 0, fmt.Errorf("write samples for %s: %w", quote(ss.Name), err)
		}
	}
	err = s.write(ctx, what, func(tx *sql.Tx) error {
		w, err := newBlockWriter(ctx, tx)
		if err != nil {
			return err
		}
		defer w.close()
		for _, ss := range batch {
			id, err := upsertSeries(ctx, tx, ss.Name, ss.Kind, ss.UnitSI, ss.SourceUnit, s.nowMs())
			if err != nil {
				if len(batch) > 1 {
					return fmt.Errorf("series %s: %w", quote(ss.Name), err)
				}
				return err
			}
			if err := w.write(ctx, id, ss.Samples); err != nil {
				return fmt.Errorf("series %s: %w", quote(ss.Name), err)
			}
			written += len(ss.Samples)
		}
		return nil
	})
	if err != nil {
		return 0, err
	}
	return written, nil
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

// ReadSeries calls fn with the samples of ref's series (ref.Name()) whose
// time t satisfies from <= t < to, in time order, streaming them from the
// file: memory does not grow with the window. Times come back in UTC at
// millisecond precision. An error from fn stops the read and is returned
// as it is. A series never imported is an error matching ErrUnknownSeries;
// a known series with nothing in the window calls fn zero times.
func (s *Store) ReadSeries(ctx context.Context, ref metrics.PointRef, from, to time.Time, fn func(ingest.Sample) error) error {
	name := ref.Name()
	lo, hi := ceilMs(from), ceilMs(to)
	st, err := s.prepared(ctx, readBlocksSQL)
	if err != nil {
		return fmt.Errorf("read series %s: %w", quote(name), err)
	}
	rows, err := st.QueryContext(ctx, dayOf(lo), hi, lo, name)
	if err != nil {
		return fmt.Errorf("read series %s: %w", quote(name), err)
	}
	var (
		known bool
		day   sql.NullInt64
		n     int
		data  sql.RawBytes
	)
	for rows.Next() {
		known = true
		if err = rows.Scan(&day, &n, &data); err != nil {
			err = fmt.Errorf("read series %s: %w", quote(name), err)
			break
		}
		if !day.Valid || hi <= lo {
			continue
		}
		if err = emitBlock(day.Int64, n, data, lo, hi, fn); err != nil {
			if errors.Is(err, errCorruptBlock) {
				err = fmt.Errorf("read series %s: day %s: %w", quote(name), fromMs(day.Int64).Format(time.DateOnly), err)
			}
			break
		}
	}
	if err != nil {
		return rowsDone(rows, err)
	}
	if err = rowsDone(rows, nil); err != nil {
		return fmt.Errorf("read series %s: %w", quote(name), err)
	}
	if !known {
		return unknownSeries(name)
	}
	return nil
}

// emitBlock calls fn with the block's samples in [lo, hi).
func emitBlock(day int64, n int, data []byte, lo, hi int64, fn func(ingest.Sample) error) error {
	br, err := openBlock(day, n, data)
	if err != nil {
		return err
	}
	for br.more() {
		p, err := br.next()
		if err != nil {
			return err
		}
		if p.ms >= hi {
			return nil // the rest is later still
		}
		if p.ms < lo {
			continue
		}
		if err := fn(ingest.Sample{Time: fromMs(p.ms), Value: p.v}); err != nil {
			return err
		}
	}
	return br.end()
}

// readBlocksSQL finds a series and its blocks that may hold samples of a
// window [lo, hi): from the day of lo, ending at or after lo, starting
// before hi. A series without such blocks is one row of NULLs, an unknown
// series no row.
const readBlocksSQL = `SELECT b.day_ms, coalesce(b.n, 0), b.data FROM series s
	LEFT JOIN sample_blocks b ON b.series_id = s.id AND b.day_ms >= ?1 AND b.day_ms < ?2 AND b.last_ms >= ?3
	WHERE s.name = ?4 ORDER BY b.day_ms`

// SampleSpan returns the times of the first and the last stored sample of
// ref's series; ok is false when it has none or was never imported.
func (s *Store) SampleSpan(ctx context.Context, ref metrics.PointRef) (first, last time.Time, ok bool, err error) {
	var lo, hi sql.NullInt64
	err = s.db.QueryRowContext(ctx, `SELECT min(b.first_ms), max(b.last_ms) FROM series s JOIN sample_blocks b ON b.series_id = s.id
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
	coalesce(sum(b.n), 0), min(b.first_ms), max(b.last_ms)
	FROM series s LEFT JOIN sample_blocks b ON b.series_id = s.id`

// SeriesInfo describes the named series; ErrUnknownSeries when it is not
// stored. It reads one row per stored day of the series, not its samples.
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
