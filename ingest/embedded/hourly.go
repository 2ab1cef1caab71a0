package embedded

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
)

// HourRow is one air handler's results for one hour.
type HourRow struct {
	AHU string
	// Hour is the start of the hour; it must lie on a whole UTC hour. It
	// reads back in UTC.
	Hour time.Time
	// Schema is the version of the field set, owned by whoever computes
	// the fields; the store keeps it beside them.
	Schema int
	// Fields maps a field name (unit in the name, e.g. "reheat_kwh") to its
	// value. NaN and ±Inf are stored as JSON null, and null reads back as
	// NaN: "not computed" survives the trip, the sign of an infinity does
	// not.
	Fields map[string]float64
	// Flags are data-quality flags, stored as a JSON array of strings.
	Flags []string
	// Written is when the row was stored; set by the store, ignored by
	// PutHourly.
	Written time.Time
}

// PutHourly stores rows in one transaction. A row for an (AHU, hour)
// already stored replaces it whole: the agent can always re-run a window.
// Rows are validated first, and every problem is reported at once.
func (s *Store) PutHourly(ctx context.Context, rows []HourRow) error {
	if err := validateHours(rows); err != nil {
		return fmt.Errorf("put hourly rows: %w", err)
	}
	return s.write(ctx, "put hourly rows", func(tx *sql.Tx) error {
		return s.putHourly(ctx, tx, rows, s.nowMs())
	})
}

// validateHours checks every row and lists the problems of the first ten
// bad rows, counting the rest.
func validateHours(rows []HourRow) error {
	var p []string
	more := 0
	for i, r := range rows {
		rp := r.problems()
		switch {
		case len(rp) == 0:
		case len(p) == 10:
			more++
		default:
			p = append(p, fmt.Sprintf("row %d (%s %s): %s", i, quote(r.AHU), r.Hour.UTC().Format(time.RFC3339Nano), strings.Join(rp, ", ")))
		}
	}
	if more > 0 {
		p = append(p, fmt.Sprintf("and %d more rows", more))
	}
	return problems(p)
}

func (r HourRow) problems() []string {
	var p []string
	if r.AHU == "" {
		p = append(p, "ahu is empty")
	}
	if !onHour(r.Hour) {
		p = append(p, "hour is not on a whole hour")
	}
	for k := range r.Fields {
		if k == "" {
			p = append(p, "a field name is empty")
		}
	}
	if slices.Contains(r.Flags, "") {
		p = append(p, "a flag is empty")
	}
	return p
}

// onHour reports whether t is a whole UTC hour. Truncate counts from the
// zero time, which is itself a whole UTC hour, as is the Unix epoch.
func onHour(t time.Time) bool { return t.Equal(t.Truncate(time.Hour)) }

// putHourly upserts rows with one prepared statement inside tx.
// putHourly writes rows and, when the store knows the site's zone, the
// daily sums of the days they fall in.
func (s *Store) putHourly(ctx context.Context, tx *sql.Tx, rows []HourRow, nowMs int64) error {
	if err := putHourlyRows(ctx, tx, rows, nowMs); err != nil {
		return err
	}
	if s.zone == nil {
		return nil
	}
	return rollUpRows(ctx, tx, s.zone, rows)
}

func putHourlyRows(ctx context.Context, tx *sql.Tx, rows []HourRow, nowMs int64) error {
	if len(rows) == 0 {
		return nil
	}
	stmt, err := tx.PrepareContext(ctx, `INSERT INTO hourly (ahu, hour_ms, schema, fields, flags, written_ms)
		VALUES (?, ?, ?, ?, ?, ?)
		ON CONFLICT (ahu, hour_ms) DO UPDATE SET
			schema = excluded.schema, fields = excluded.fields,
			flags = excluded.flags, written_ms = excluded.written_ms`)
	if err != nil {
		return fmt.Errorf("prepare: %w", err)
	}
	defer stmt.Close()
	var buf []byte
	for _, r := range rows {
		buf = appendFields(buf[:0], r.Fields)
		flags, err := json.Marshal(nonNil(r.Flags))
		if err != nil {
			return fmt.Errorf("encode flags of %s %s: %w", quote(r.AHU), r.Hour.UTC().Format(time.RFC3339), err)
		}
		_, err = stmt.ExecContext(ctx, r.AHU, toMs(r.Hour), r.Schema, string(buf), string(flags), nowMs)
		if err != nil {
			return fmt.Errorf("write %s %s: %w", quote(r.AHU), r.Hour.UTC().Format(time.RFC3339), err)
		}
	}
	return nil
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}

// appendFields encodes fields as a JSON object with sorted keys (so equal
// rows give equal text), writing NaN and ±Inf as null: encoding/json
// refuses them outright.
func appendFields(b []byte, fields map[string]float64) []byte {
	keys := make([]string, 0, len(fields))
	for k := range fields {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	b = append(b, '{')
	for i, k := range keys {
		if i > 0 {
			b = append(b, ',')
		}
		kb, _ := json.Marshal(k) // a string always encodes
		b = append(b, kb...)
		b = append(b, ':')
		v := fields[k]
		if math.IsNaN(v) || math.IsInf(v, 0) {
			b = append(b, "null"...)
			continue
		}
		// 'g' with the shortest exact digits; its exponent form (1e+21)
		// is valid JSON.
		b = strconv.AppendFloat(b, v, 'g', -1, 64)
	}
	return append(b, '}')
}

// decodeFields is appendFields' inverse: null becomes NaN.
func decodeFields(text string) (map[string]float64, error) {
	var raw map[string]*float64
	if err := json.Unmarshal([]byte(text), &raw); err != nil {
		return nil, err
	}
	out := make(map[string]float64, len(raw))
	for k, v := range raw {
		if v == nil {
			out[k] = math.NaN()
			continue
		}
		out[k] = *v
	}
	return out, nil
}

// ReadHourly calls fn with the stored rows whose hour h satisfies
// from <= h < to, for one AHU or, with ahu "", for all, in (hour, AHU)
// order, streaming them from the file. An error from fn stops the read and
// is returned as it is.
func (s *Store) ReadHourly(ctx context.Context, ahu string, from, to time.Time, fn func(HourRow) error) error {
	const cols = "SELECT ahu, hour_ms, schema, fields, flags, written_ms FROM hourly"
	var (
		rows *sql.Rows
		err  error
	)
	if ahu == "" {
		rows, err = s.db.QueryContext(ctx, cols+" WHERE hour_ms >= ? AND hour_ms < ? ORDER BY hour_ms, ahu",
			ceilMs(from), ceilMs(to))
	} else {
		rows, err = s.db.QueryContext(ctx, cols+" WHERE ahu = ? AND hour_ms >= ? AND hour_ms < ? ORDER BY hour_ms",
			ahu, ceilMs(from), ceilMs(to))
	}
	what := "read hourly rows"
	if ahu != "" {
		what += " for " + quote(ahu)
	}
	if err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	for rows.Next() {
		var (
			r               HourRow
			hourMs, written int64
			fields, flags   string
		)
		if err = rows.Scan(&r.AHU, &hourMs, &r.Schema, &fields, &flags, &written); err != nil {
			err = fmt.Errorf("%s: %w", what, err)
			break
		}
		r.Hour, r.Written = fromMs(hourMs), fromMs(written)
		if r.Fields, err = decodeFields(fields); err != nil {
			err = fmt.Errorf("%s: fields of %s %s: %w", what, quote(r.AHU), r.Hour.Format(time.RFC3339), err)
			break
		}
		if err = json.Unmarshal([]byte(flags), &r.Flags); err != nil {
			err = fmt.Errorf("%s: flags of %s %s: %w", what, quote(r.AHU), r.Hour.Format(time.RFC3339), err)
			break
		}
		if len(r.Flags) == 0 {
			r.Flags = nil // as written: no flags
		}
		if err = fn(r); err != nil {
			break
		}
	}
	return readDone(rows, err, what)
}
