package embedded

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"time"
)

// schemaV6 keeps a series' samples in one row per UTC day (a block, see
// block.go) instead of one row per sample: a year of one-minute readings
// of a point is 365 rows, not 525,600, which makes import and read-back
// many times faster and the file several times smaller. n, first_ms and
// last_ms repeat what the block holds, so counts and spans are read
// without decoding it. The old samples table is packed into blocks and
// dropped by packSamples in the same transaction.
const schemaV6 = `
CREATE TABLE sample_blocks (
	series_id INTEGER NOT NULL REFERENCES series(id) ON DELETE CASCADE,
	day_ms    INTEGER NOT NULL CHECK (day_ms % 86400000 = 0),
	n         INTEGER NOT NULL CHECK (n > 0),
	first_ms  INTEGER NOT NULL CHECK (first_ms >= day_ms AND first_ms <= last_ms),
	last_ms   INTEGER NOT NULL CHECK (last_ms < day_ms + 86400000),
	data      BLOB    NOT NULL,
	PRIMARY KEY (series_id, day_ms)
);
`

// packSamples moves every row of the v5 samples table into day blocks and
// drops the table. It streams the rows in key order, so memory holds one
// block at a time. A row that is not a finite number (written by hand or
// by another program) fails the step, naming the series and the time; the
// transaction rolls back and the file stays at v5, unchanged.
func packSamples(ctx context.Context, tx *sql.Tx) error {
	rows, err := tx.QueryContext(ctx, `SELECT x.series_id, s.name, x.ts_ms, x.value
		FROM samples x JOIN series s ON s.id = x.series_id ORDER BY x.series_id, x.ts_ms`)
	if err != nil {
		return fmt.Errorf("read samples: %w", err)
	}
	ins, err := tx.PrepareContext(ctx, insertBlockSQL)
	if err != nil {
		return rowsDone(rows, fmt.Errorf("prepare block insert: %w", err))
	}
	defer ins.Close()
	var (
		pts    []point
		buf    []byte
		curID  int64 = -1
		curDay int64
		id, ms int64
		name   string
		raw    any
	)
	flush := func() error {
		if len(pts) == 0 {
			return nil
		}
		buf = appendBlock(buf[:0], curDay, pts)
		if _, err := ins.ExecContext(ctx, curID, curDay, len(pts), pts[0].ms, pts[len(pts)-1].ms, buf); err != nil {
			return fmt.Errorf("write block of series %d, day %s: %w", curID, fromMs(curDay).Format(time.DateOnly), err)
		}
		pts = pts[:0]
		return nil
	}
	for rows.Next() {
		if err := rows.Scan(&id, &name, &ms, &raw); err != nil {
			return rowsDone(rows, fmt.Errorf("read samples: %w", err))
		}
		v, ok := finiteNumber(raw)
		if !ok {
			return rowsDone(rows, fmt.Errorf("series %s at %s holds %#v, not a finite number: %w; delete or correct that row with sqlite3 (table samples) and open the file again",
				quote(name), fromMs(ms).Format(time.RFC3339Nano), raw, ErrInvalid))
		}
		if day := dayOf(ms); id != curID || day != curDay {
			if err := flush(); err != nil {
				return rowsDone(rows, err)
			}
			curID, curDay = id, day
		}
		pts = append(pts, point{ms: ms, v: v})
	}
	if err := rowsDone(rows, nil); err != nil {
		return fmt.Errorf("read samples: %w", err)
	}
	if err := flush(); err != nil {
		return err
	}
	if _, err := tx.ExecContext(ctx, "DROP TABLE samples"); err != nil {
		return fmt.Errorf("drop the samples table: %w", err)
	}
	return nil
}

// finiteNumber reads a stored value: REAL, or INTEGER where SQLite kept a
// whole number as one.
func finiteNumber(raw any) (float64, bool) {
	var v float64
	switch x := raw.(type) {
	case float64:
		v = x
	case int64:
		v = float64(x)
	default:
		return 0, false
	}
	return v, !math.IsNaN(v) && !math.IsInf(v, 0)
}
