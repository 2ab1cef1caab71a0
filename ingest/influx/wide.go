package influx

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"
)

// WideQuery selects the points of one measurement in [From, To), one row
// per series and time with the fields side by side (Flux pivot). Results
// written by dewline (hourly records, alert transitions) are read back
// this way.
type WideQuery struct {
	Measurement string
	Match       map[string]string // tag key -> value; all must match
	Absent      []string          // tag keys the points must not have
	Fields      []string          // only these fields; all when empty
	From, To    time.Time
}

// Row is one row of a wide read: the time, and each column by name (tags
// and fields; a field the point lacks reads "").
type Row struct{ f *fluxCSV }

// Time is the row's _time.
func (r Row) Time() (time.Time, error) { return r.f.time() }

// Get returns column name's text, "" when absent.
func (r Row) Get(name string) string { return r.f.get(name) }

// Columns lists the row's column names, tags and fields included.
func (r Row) Columns() []string { return r.f.names }

// ReadWide streams q's rows to fn, in time order within each series.
func (c *Client) ReadWide(ctx context.Context, q WideQuery, fn func(Row) error) error {
	if q.Measurement == "" {
		return errors.New("read wide: no measurement")
	}
	if !q.From.Before(q.To) {
		return fmt.Errorf("read wide %s: empty period %s..%s", q.Measurement, q.From.Format(time.RFC3339), q.To.Format(time.RFC3339))
	}
	var b strings.Builder
	fmt.Fprintf(&b, "from(bucket: %s)\n  |> range(start: %s, stop: %s)\n", fluxString(c.opt.Bucket), fluxTime(q.From), fluxTime(q.To))
	fmt.Fprintf(&b, "  |> filter(fn: (r) => r._measurement == %s", fluxString(q.Measurement))
	keys := make([]string, 0, len(q.Match))
	for k := range q.Match {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		fmt.Fprintf(&b, " and %s == %s", fluxColumn(k), fluxString(q.Match[k]))
	}
	for _, k := range q.Absent {
		fmt.Fprintf(&b, " and not exists %s", fluxColumn(k))
	}
	b.WriteString(")\n")
	// InfluxDB 1.x includes range()'s stop time: without this a period of
	// N hours read N+1 hourly rows.
	fmt.Fprintf(&b, "  |> filter(fn: (r) => r._time < %s)\n", fluxTime(q.To))
	if len(q.Fields) > 0 {
		b.WriteString("  |> filter(fn: (r) => ")
		for i, f := range q.Fields {
			if i > 0 {
				b.WriteString(" or ")
			}
			fmt.Fprintf(&b, "r._field == %s", fluxString(f))
		}
		b.WriteString(")\n")
	}
	b.WriteString("  |> drop(columns: [\"_start\", \"_stop\"])\n")
	b.WriteString("  |> pivot(rowKey: [\"_time\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n")
	err := c.run(ctx, b.String(), nil, func(f *fluxCSV) (bool, error) {
		return true, fn(Row{f})
	})
	if err != nil {
		var re *RequestError
		if errors.As(err, &re) {
			return fmt.Errorf("read %s: %w", q.Measurement, err)
		}
		return err // fn's own error, as it is
	}
	return nil
}

// Span returns the times of the first and the last point of measurement's
// field (ok false when there is none) among the series whose tags include
// match, looking back to the Unix epoch.
func (c *Client) Span(ctx context.Context, measurement, field string, match map[string]string, now time.Time) (first, last time.Time, ok bool, err error) {
	var pred strings.Builder
	keys := make([]string, 0, len(match))
	for k := range match {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		fmt.Fprintf(&pred, " and %s == %s", fluxColumn(k), fluxString(match[k]))
	}
	for _, pick := range []string{"first", "last"} {
		flux := fmt.Sprintf("from(bucket: %s)\n  |> range(start: %s, stop: %s)\n"+
			"  |> filter(fn: (r) => r._measurement == %s and r._field == %s%s)\n  |> group()\n  |> %s()\n",
			fluxString(c.opt.Bucket), fluxTime(time.Unix(1, 0)), fluxTime(now.Add(24*time.Hour)),
			fluxString(measurement), fluxString(field), pred.String(), pick)
		var t time.Time
		found := false
		err = c.run(ctx, flux, func() { found = false }, func(f *fluxCSV) (bool, error) {
			tt, err := f.time()
			if err != nil {
				return false, err
			}
			t, found = tt, true
			return false, nil
		})
		if err != nil {
			return time.Time{}, time.Time{}, false, fmt.Errorf("read the span of %s: %w", measurement, err)
		}
		if !found {
			return time.Time{}, time.Time{}, false, nil
		}
		if pick == "first" {
			first = t
		} else {
			last = t
		}
	}
	return first, last, true, nil
}
