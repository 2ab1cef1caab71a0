package embedded

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"time"

	"github.com/dewline/dewline/metrics"
)

// ReadRecords is ReadHourly for readers that want records: it decodes each
// stored row straight into one metrics.Record, reused from row to row
// (copy it to keep it). With ahu "" it reads every unit, one after the
// other (in name order), each in hour order. Fields the row does not have, and nulls, read as
// NaN; names the record does not know are ignored (a newer writer). It
// decodes the store's own field encoding without encoding/json, which
// makes reading a portfolio's month several times faster.
func (s *Store) ReadRecords(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	if ahu == "" {
		// Unit by unit: each read follows the primary key (ahu, hour_ms),
		// several times faster than the whole period in hour order, which
		// reads the rows in index order, a page at a time at random.
		units, err := s.unitsIn(ctx, from, to)
		if err != nil {
			return err
		}
		for _, u := range units {
			if err := s.ReadRecords(ctx, u, from, to, fn); err != nil {
				return err
			}
		}
		return nil
	}
	rows, err := s.db.QueryContext(ctx, "SELECT ahu, hour_ms, fields, flags FROM hourly WHERE ahu = ? AND hour_ms >= ? AND hour_ms < ? ORDER BY hour_ms",
		ahu, ceilMs(from), ceilMs(to))
	what := "read hourly records for " + quote(ahu)
	if err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	var (
		rec  metrics.Record
		ptrs = rec.FieldPtrs()
		all  = make([]*float64, 0, len(ptrs))
		ahus = map[string]string{} // interned names
	)
	for _, p := range ptrs {
		all = append(all, p)
	}
	for rows.Next() {
		var (
			name          string
			hourMs        int64
			fields, flags sql.RawBytes
		)
		if err = rows.Scan(&name, &hourMs, &fields, &flags); err != nil {
			err = fmt.Errorf("%s: %w", what, err)
			break
		}
		if n, ok := ahus[name]; ok {
			name = n
		} else {
			ahus[name] = name
		}
		for _, p := range all {
			*p = math.NaN()
		}
		rec.AHU, rec.HourStart = name, fromMs(hourMs)
		if err = decodeInto(fields, ptrs); err != nil {
			err = fmt.Errorf("%s: fields of %s %s: %w", what, quote(name), rec.HourStart.Format(time.RFC3339), err)
			break
		}
		rec.Flags = rec.Flags[:0]
		if len(flags) > 2 { // not "[]"
			if err = json.Unmarshal(flags, &rec.Flags); err != nil {
				err = fmt.Errorf("%s: flags of %s %s: %w", what, quote(name), rec.HourStart.Format(time.RFC3339), err)
				break
			}
		}
		if err = fn(&rec); err != nil {
			break
		}
	}
	return readDone(rows, err, what)
}

// decodeInto decodes text as written by appendFields into the fields
// named in ptrs. Anything it does not expect (an escaped key, spaces) is
// handed to decodeFields, the general decoder.
func decodeInto(text []byte, ptrs map[string]*float64) error {
	fast := func() bool {
		i, n := 0, len(text)
		if n < 2 || text[0] != '{' || text[n-1] != '}' {
			return false
		}
		i = 1
		if text[i] == '}' {
			return i == n-1
		}
		for i < n {
			if text[i] != '"' {
				return false
			}
			j := i + 1
			for j < n && text[j] != '"' && text[j] != '\\' {
				j++
			}
			if j >= n || text[j] != '"' || j+1 >= n || text[j+1] != ':' {
				return false
			}
			key := text[i+1 : j]
			k := j + 2
			e := k
			for e < n && text[e] != ',' && text[e] != '}' {
				e++
			}
			if e >= n {
				return false
			}
			var v float64
			if string(text[k:e]) == "null" {
				v = math.NaN()
			} else {
				f, err := strconv.ParseFloat(string(text[k:e]), 64)
				if err != nil {
					return false
				}
				v = f
			}
			if p, ok := ptrs[string(key)]; ok {
				*p = v
			}
			if text[e] == '}' {
				return e == n-1
			}
			i = e + 1
		}
		return false
	}
	if fast() {
		return nil
	}
	m, err := decodeFields(string(text))
	if err != nil {
		return err
	}
	for k, v := range m {
		if p, ok := ptrs[k]; ok {
			*p = v
		}
	}
	return nil
}

// unitsIn lists the air handlers with hours in [from, to), from the
// (hour_ms, ahu) index alone.
func (s *Store) unitsIn(ctx context.Context, from, to time.Time) ([]string, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT DISTINCT ahu FROM hourly WHERE hour_ms >= ? AND hour_ms < ? ORDER BY ahu", ceilMs(from), ceilMs(to))
	if err != nil {
		return nil, fmt.Errorf("list the air handlers with results: %w", err)
	}
	var out []string
	for rows.Next() {
		var a string
		if err := rows.Scan(&a); err != nil {
			return nil, rowsDone(rows, fmt.Errorf("list the air handlers with results: %w", err))
		}
		out = append(out, a)
	}
	if err := rowsDone(rows, nil); err != nil {
		return nil, fmt.Errorf("list the air handlers with results: %w", err)
	}
	return out, nil
}

// HourSpan returns the first and the last stored hour (ok false when the
// store holds none).
func (s *Store) HourSpan(ctx context.Context) (first, last time.Time, ok bool, err error) {
	var lo, hi sql.NullInt64
	if err := s.db.QueryRowContext(ctx, "SELECT MIN(hour_ms), MAX(hour_ms) FROM hourly").Scan(&lo, &hi); err != nil {
		return time.Time{}, time.Time{}, false, fmt.Errorf("read the span of the hourly results: %w", err)
	}
	if !lo.Valid {
		return time.Time{}, time.Time{}, false, nil
	}
	return fromMs(lo.Int64), fromMs(hi.Int64), true, nil
}
