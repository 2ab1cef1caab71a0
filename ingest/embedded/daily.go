package embedded

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Daily sums: per air handler and local day of the store's zone, the sums
// of metrics.AdditiveFields over the day's stored hours, the number of
// hours and of hours with a data-quality flag. They are derived data: each
// write of hourly rows rebuilds the days it touches in the same
// transaction, and a read-write Open rebuilds any day whose hour count
// disagrees with the hourly table (rows written by a store opened without
// a zone, or before the table existed).

// The day's hours without a cooling input (metrics.CoolingGap), kept in
// its sums beside the additive fields; a day without such hours, or built
// before they were kept, has none of these keys.
const (
	gapHours    = "no_cooling_input_h"
	gapCoil     = "no_cooling_input_coil_total_kwh"
	gapReheat   = "no_cooling_input_reheat_kwh"
	gapReheatIn = "no_cooling_input_reheat_input_kwh"
)

// dayKey is one air handler's local day.
type dayKey struct {
	ahu string
	day int64 // start, Unix ms
}

// localDay returns the start and end of the local day holding t.
func localDay(t time.Time, zone *time.Location) (start, end time.Time) {
	y, m, d := t.In(zone).Date()
	start = time.Date(y, m, d, 0, 0, 0, 0, zone)
	return start, time.Date(y, m, d+1, 0, 0, 0, 0, zone)
}

// rollUpRows rebuilds the days that rows fall in.
func rollUpRows(ctx context.Context, tx *sql.Tx, zone *time.Location, rows []HourRow) error {
	seen := map[dayKey]bool{}
	var keys []dayKey
	for _, r := range rows {
		start, _ := localDay(r.Hour, zone)
		k := dayKey{r.AHU, start.UnixMilli()}
		if !seen[k] {
			seen[k] = true
			keys = append(keys, k)
		}
	}
	return rollUp(ctx, tx, zone, keys)
}

// rollUp recomputes the daily rows of keys from the hourly table.
func rollUp(ctx context.Context, tx *sql.Tx, zone *time.Location, keys []dayKey) error {
	if len(keys) == 0 {
		return nil
	}
	read, err := tx.PrepareContext(ctx, "SELECT fields, flags FROM hourly WHERE ahu = ? AND hour_ms >= ? AND hour_ms < ?")
	if err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	defer read.Close()
	upsert, err := tx.PrepareContext(ctx, `INSERT INTO daily (zone, ahu, day_ms, end_ms, hours, flagged, sums) VALUES (?, ?, ?, ?, ?, ?, ?)
		ON CONFLICT (zone, day_ms, ahu) DO UPDATE SET end_ms = excluded.end_ms, hours = excluded.hours,
			flagged = excluded.flagged, sums = excluded.sums`)
	if err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	defer upsert.Close()
	names := metrics.AdditiveFields()
	vals := make([]float64, len(names))
	ptrs := make(map[string]*float64, len(names))
	for i, n := range names {
		ptrs[n] = &vals[i]
	}
	sums := make(map[string]float64, len(names))
	var rec metrics.Record // the hour's additive fields, for metrics.CoolingGap
	recPtrs := rec.FieldPtrs()
	var buf []byte
	for _, k := range keys {
		start := time.UnixMilli(k.day).In(zone)
		_, end := localDay(start, zone)
		rows, err := read.QueryContext(ctx, k.ahu, k.day, end.UnixMilli())
		if err != nil {
			return fmt.Errorf("daily sums of %s %s: %w", quote(k.ahu), start.Format("2006-01-02"), err)
		}
		clear(sums)
		hours, flagged := 0, 0
		var gap metrics.CoolingGap
		for rows.Next() {
			var fields, flags sql.RawBytes
			if err := rows.Scan(&fields, &flags); err != nil {
				return rowsDone(rows, fmt.Errorf("daily sums: %w", err))
			}
			for i := range vals {
				vals[i] = math.NaN()
			}
			if err := decodeInto(fields, ptrs); err != nil {
				return rowsDone(rows, fmt.Errorf("daily sums of %s %s: %w", quote(k.ahu), start.Format("2006-01-02"), err))
			}
			for i, n := range names {
				*recPtrs[n] = vals[i]
				if v := vals[i]; !math.IsNaN(v) && !math.IsInf(v, 0) {
					sums[n] += v
				}
			}
			gap.Add(&rec)
			hours++
			if len(flags) > 2 {
				var fl []string
				if err := json.Unmarshal(flags, &fl); err != nil {
					return rowsDone(rows, fmt.Errorf("daily sums of %s %s: flags: %w", quote(k.ahu), start.Format("2006-01-02"), err))
				}
				if metrics.QualityFlagged(fl) {
					flagged++ // informational notes are not data-quality flags
				}
			}
		}
		if err := rowsDone(rows, nil); err != nil {
			return fmt.Errorf("daily sums: %w", err)
		}
		if hours == 0 {
			if _, err := tx.ExecContext(ctx, "DELETE FROM daily WHERE zone = ? AND day_ms = ? AND ahu = ?", zone.String(), k.day, k.ahu); err != nil {
				return fmt.Errorf("daily sums: %w", err)
			}
			continue
		}
		// A field no hour had stays out (reads back as unknown).
		if gap.Hours > 0 {
			sums[gapHours], sums[gapCoil], sums[gapReheat], sums[gapReheatIn] = float64(gap.Hours), gap.CoilKWh, gap.ReheatKWh, gap.ReheatInputKWh
		}
		buf = appendFields(buf[:0], sums)
		if _, err := upsert.ExecContext(ctx, zone.String(), k.ahu, k.day, end.UnixMilli(), hours, flagged, string(buf)); err != nil {
			return fmt.Errorf("daily sums of %s %s: %w", quote(k.ahu), start.Format("2006-01-02"), err)
		}
	}
	return nil
}

// rollUpMissing rebuilds the days whose stored hour count disagrees with
// the hourly table. A quick count comparison usually shows nothing to do.
func (s *Store) rollUpMissing(ctx context.Context) error {
	zone := s.zone.String()
	var hourly, daily int64
	if err := s.db.QueryRowContext(ctx, "SELECT count(*) FROM hourly").Scan(&hourly); err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	if err := s.db.QueryRowContext(ctx, "SELECT coalesce(sum(hours), 0) FROM daily WHERE zone = ?", zone).Scan(&daily); err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	if hourly == daily {
		return nil
	}
	want := map[dayKey]int{}
	rows, err := s.db.QueryContext(ctx, "SELECT ahu, hour_ms FROM hourly")
	if err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	for rows.Next() {
		var ahu string
		var ms int64
		if err := rows.Scan(&ahu, &ms); err != nil {
			return rowsDone(rows, fmt.Errorf("daily sums: %w", err))
		}
		start, _ := localDay(time.UnixMilli(ms), s.zone)
		want[dayKey{ahu, start.UnixMilli()}]++
	}
	if err := rowsDone(rows, nil); err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	have := map[dayKey]int{}
	rows, err = s.db.QueryContext(ctx, "SELECT ahu, day_ms, hours FROM daily WHERE zone = ?", zone)
	if err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	for rows.Next() {
		var k dayKey
		var n int
		if err := rows.Scan(&k.ahu, &k.day, &n); err != nil {
			return rowsDone(rows, fmt.Errorf("daily sums: %w", err))
		}
		have[k] = n
	}
	if err := rowsDone(rows, nil); err != nil {
		return fmt.Errorf("daily sums: %w", err)
	}
	var stale []dayKey
	for k, n := range want {
		if have[k] != n {
			stale = append(stale, k)
		}
	}
	for k := range have {
		if _, ok := want[k]; !ok {
			stale = append(stale, k)
		}
	}
	const batch = 500
	for i := 0; i < len(stale); i += batch {
		part := stale[i:min(i+batch, len(stale))]
		if err := s.write(ctx, "rebuild daily sums", func(tx *sql.Tx) error { return rollUp(ctx, tx, s.zone, part) }); err != nil {
			return err
		}
	}
	return nil
}

// DayRow is one air handler's local day of sums.
type DayRow struct {
	AHU      string
	Day, End time.Time
	Hours    int
	Flagged  int
	// Sums holds the day's sums in the additive fields of a record (the
	// rest NaN; a field no hour had is NaN too). Reused between rows.
	Sums *metrics.Record
	// NoCoolingInput is the day's hours without a cooling input.
	NoCoolingInput metrics.CoolingGap
}

// ReadDays calls fn with the daily sums of every air handler for the local
// days of the store's zone within [from, to) (both local midnights), and
// reports whether they are complete: their hours add up to the hourly rows
// stored in the period. When they are not (no zone, another zone, days not
// yet built), it calls fn for nothing and returns false, and the caller
// reads the hours instead.
func (s *Store) ReadDays(ctx context.Context, from, to time.Time, fn func(DayRow) error) (complete bool, err error) {
	if s.zone == nil {
		return false, nil
	}
	zone := s.zone.String()
	var hourly, daily int64
	if err := s.db.QueryRowContext(ctx, "SELECT count(*) FROM hourly WHERE hour_ms >= ? AND hour_ms < ?", ceilMs(from), ceilMs(to)).Scan(&hourly); err != nil {
		return false, fmt.Errorf("read daily sums: %w", err)
	}
	if err := s.db.QueryRowContext(ctx, "SELECT coalesce(sum(hours), 0) FROM daily WHERE zone = ? AND day_ms >= ? AND end_ms <= ?", zone, toMs(from), toMs(to)).Scan(&daily); err != nil {
		return false, fmt.Errorf("read daily sums: %w", err)
	}
	if hourly != daily {
		return false, nil
	}
	rows, err := s.db.QueryContext(ctx, "SELECT ahu, day_ms, end_ms, hours, flagged, sums FROM daily WHERE zone = ? AND day_ms >= ? AND end_ms <= ? ORDER BY ahu, day_ms",
		zone, toMs(from), toMs(to))
	if err != nil {
		return false, fmt.Errorf("read daily sums: %w", err)
	}
	var rec metrics.Record
	ptrs := rec.FieldPtrs()
	var gap [4]float64
	for i, k := range []string{gapHours, gapCoil, gapReheat, gapReheatIn} {
		ptrs[k] = &gap[i]
	}
	all := make([]*float64, 0, len(ptrs))
	for _, p := range ptrs {
		all = append(all, p)
	}
	for rows.Next() {
		var (
			d        DayRow
			day, end int64
			sums     sql.RawBytes
		)
		if err := rows.Scan(&d.AHU, &day, &end, &d.Hours, &d.Flagged, &sums); err != nil {
			return false, rowsDone(rows, fmt.Errorf("read daily sums: %w", err))
		}
		for _, p := range all {
			*p = math.NaN()
		}
		if err := decodeInto(sums, ptrs); err != nil {
			return false, rowsDone(rows, fmt.Errorf("read daily sums of %s: %w", quote(d.AHU), err))
		}
		if gap[0] > 0 {
			d.NoCoolingInput = metrics.CoolingGap{Hours: int(gap[0]), CoilKWh: gap[1], ReheatKWh: gap[2], ReheatInputKWh: gap[3]}
		}
		d.Day, d.End = time.UnixMilli(day).In(s.zone), time.UnixMilli(end).In(s.zone)
		rec.AHU, rec.HourStart = d.AHU, d.Day.UTC()
		d.Sums = &rec
		if err := fn(d); err != nil {
			return false, rowsDone(rows, err)
		}
	}
	if err := rowsDone(rows, nil); err != nil {
		return false, fmt.Errorf("read daily sums: %w", err)
	}
	return true, nil
}
