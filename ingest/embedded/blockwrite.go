package embedded

import (
	"cmp"
	"context"
	"database/sql"
	"fmt"
	"slices"
	"time"

	"github.com/dewline/dewline/ingest"
)

// insertBlockSQL writes a day block, replacing the one stored for the day.
const insertBlockSQL = `INSERT INTO sample_blocks (series_id, day_ms, n, first_ms, last_ms, data)
	VALUES (?, ?, ?, ?, ?, ?)
	ON CONFLICT (series_id, day_ms) DO UPDATE SET
	n = excluded.n, first_ms = excluded.first_ms, last_ms = excluded.last_ms, data = excluded.data`

// blockWriter writes samples into day blocks within one transaction,
// reusing its statements and buffers from series to series.
type blockWriter struct {
	insert, days     *sql.Stmt
	load             *sql.Stmt
	pts, old, merged []point
	stored           map[int64]bool
	buf              []byte
}

func newBlockWriter(ctx context.Context, tx *sql.Tx) (*blockWriter, error) {
	w := &blockWriter{stored: map[int64]bool{}}
	var err error
	if w.insert, err = tx.PrepareContext(ctx, insertBlockSQL); err != nil {
		return nil, fmt.Errorf("prepare block insert: %w", err)
	}
	if w.days, err = tx.PrepareContext(ctx,
		"SELECT day_ms FROM sample_blocks WHERE series_id = ? AND day_ms >= ? AND day_ms <= ?"); err != nil {
		w.close()
		return nil, fmt.Errorf("prepare block look-up: %w", err)
	}
	if w.load, err = tx.PrepareContext(ctx,
		"SELECT n, data FROM sample_blocks WHERE series_id = ? AND day_ms = ?"); err != nil {
		w.close()
		return nil, fmt.Errorf("prepare block read: %w", err)
	}
	return w, nil
}

func (w *blockWriter) close() {
	for _, st := range []*sql.Stmt{w.insert, w.days, w.load} {
		if st != nil {
			st.Close()
		}
	}
}

// write stores samples in the series' day blocks. A day that already has
// a block is read, merged (a new sample replaces a stored one at the same
// millisecond) and written back whole; a new day is written as it comes.
func (w *blockWriter) write(ctx context.Context, seriesID int64, samples []ingest.Sample) error {
	if len(samples) == 0 {
		return nil
	}
	w.pts = sortedPoints(w.pts[:0], samples)
	pts := w.pts
	if err := w.storedDays(ctx, seriesID, dayOf(pts[0].ms), dayOf(pts[len(pts)-1].ms)); err != nil {
		return err
	}
	for len(pts) > 0 {
		day := dayOf(pts[0].ms)
		k := 1
		for k < len(pts) && pts[k].ms < day+dayMs {
			k++
		}
		block := pts[:k]
		pts = pts[k:]
		if w.stored[day] {
			var err error
			if block, err = w.mergeStored(ctx, seriesID, day, block); err != nil {
				return err
			}
		}
		w.buf = appendBlock(w.buf[:0], day, block)
		if _, err := w.insert.ExecContext(ctx, seriesID, day, len(block), block[0].ms, block[len(block)-1].ms, w.buf); err != nil {
			return fmt.Errorf("write the samples of %s: %w", fromMs(day).Format(time.DateOnly), err)
		}
	}
	return nil
}

// storedDays notes which days from first to last (day starts) already
// have a block.
func (w *blockWriter) storedDays(ctx context.Context, seriesID, first, last int64) error {
	clear(w.stored)
	rows, err := w.days.QueryContext(ctx, seriesID, first, last)
	if err != nil {
		return fmt.Errorf("look up stored days: %w", err)
	}
	var day int64
	for rows.Next() {
		if err := rows.Scan(&day); err != nil {
			return rowsDone(rows, fmt.Errorf("look up stored days: %w", err))
		}
		w.stored[day] = true
	}
	if err := rowsDone(rows, nil); err != nil {
		return fmt.Errorf("look up stored days: %w", err)
	}
	return nil
}

// mergeStored returns the day's stored samples merged with pts (sorted,
// one per millisecond); pts wins where both have a time.
func (w *blockWriter) mergeStored(ctx context.Context, seriesID, day int64, pts []point) ([]point, error) {
	var (
		n    int
		data []byte
	)
	if err := w.load.QueryRowContext(ctx, seriesID, day).Scan(&n, &data); err != nil {
		return nil, fmt.Errorf("read the stored samples of %s: %w", fromMs(day).Format(time.DateOnly), err)
	}
	old, err := decodeBlock(w.old[:0], day, n, data)
	w.old = old
	if err != nil {
		return nil, fmt.Errorf("read the stored samples of %s: %w", fromMs(day).Format(time.DateOnly), err)
	}
	m := w.merged[:0]
	i, j := 0, 0
	for i < len(old) || j < len(pts) {
		switch {
		case j == len(pts) || (i < len(old) && old[i].ms < pts[j].ms):
			m = append(m, old[i])
			i++
		case i == len(old) || pts[j].ms < old[i].ms:
			m = append(m, pts[j])
			j++
		default: // the same millisecond: the new sample replaces the stored one
			m = append(m, pts[j])
			i++
			j++
		}
	}
	w.merged = m
	return m, nil
}

// sortedPoints appends samples to dst as points in increasing time, one
// per millisecond: of samples within the same millisecond the later in
// the slice is kept. Samples already in order (an export usually is) are
// only copied.
func sortedPoints(dst []point, samples []ingest.Sample) []point {
	sorted := true
	for i, sm := range samples {
		ms := toMs(sm.Time)
		if i > 0 && ms <= dst[len(dst)-1].ms {
			sorted = false
		}
		dst = append(dst, point{ms: ms, v: sm.Value})
	}
	if sorted {
		return dst
	}
	slices.SortStableFunc(dst, func(a, b point) int { return cmp.Compare(a.ms, b.ms) })
	out := dst[:0]
	for i, p := range dst {
		if i+1 < len(dst) && dst[i+1].ms == p.ms {
			continue // a later sample of the same millisecond follows
		}
		out = append(out, p)
	}
	return out
}
