package influx

import (
	"context"
	"fmt"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
)

// PointStats is what CheckPoint found for a point in a window.
type PointStats struct {
	Count       int       // samples in [from, to)
	First, Last time.Time // times of the first and last of them; zero when Count is 0
	Series      int       // series with samples in the window; more than 1 means the point's tags leave one out
}

// The widest window InfluxDB stores: its minimum and maximum timestamps.
const (
	minTime = "1677-09-21T00:12:43.145224194Z"
	maxTime = "2262-04-11T23:47:16.854775806Z"
)

// CheckPoint counts the samples of ref in [from, to) and finds the first
// and last of them, for "dewline check". A point that has no samples in the
// window but exists at some other time gives Count 0 and no error. A point
// that matches no series at any time gives an error wrapping
// ErrNoSuchPoint that says which part does not match: the measurement, the
// field, or the tags.
func (c *Client) CheckPoint(ctx context.Context, ref metrics.PointRef, from, to time.Time) (PointStats, error) {
	if !from.Before(to) {
		return PointStats{}, fmt.Errorf("check window [%s, %s) is empty; from must be before to", fluxTime(from), fluxTime(to))
	}
	loc, err := locate(ref)
	if err != nil {
		return PointStats{}, err
	}

	// Counted per series and summed here: no sorting or regrouping on the
	// server. The _time filter keeps a sample at `to` out on InfluxDB 1.x,
	// whose range() includes its stop time.
	flux := fmt.Sprintf(`data = from(bucket: %s)
  |> range(start: %s, stop: %s)
  |> filter(fn: (r) => %s)
  |> filter(fn: (r) => r._time < %s)
data |> count() |> yield(name: "count")
data |> first() |> yield(name: "first")
data |> last() |> yield(name: "last")
`, fluxString(c.opt.Bucket), fluxTime(from), fluxTime(to), loc.predicate(), fluxTime(to))

	var st PointStats
	err = c.run(ctx, flux, func() { st = PointStats{} }, func(f *fluxCSV) (bool, error) {
		switch f.result {
		case "count":
			n, err := f.value()
			if err != nil {
				return false, fmt.Errorf("count: %w", err)
			}
			if n > 0 {
				st.Count += int(n)
				st.Series++
			}
		case "first", "last":
			t, err := f.time()
			if err != nil {
				return false, err
			}
			if f.result == "first" && (st.First.IsZero() || t.Before(st.First)) {
				st.First = t
			}
			if f.result == "last" && t.After(st.Last) {
				st.Last = t
			}
		}
		return false, nil
	})
	if err != nil {
		return PointStats{}, fmt.Errorf("check point %q (%s): %w", loc.name, loc.describe(), err)
	}
	if st.Count > 0 {
		return st, nil
	}
	return st, c.pointExists(ctx, loc)
}

// pointExists looks, over all time, for the point's measurement, then its
// field, then its tags, and returns an error wrapping ErrNoSuchPoint that
// names the first that is missing, or nil when the point exists.
//
// Each probe lists the tag keys of the matching series (keys() |>
// keep(columns: ["_value"]) |> distinct()), which InfluxDB answers from its
// series index without reading samples; an empty answer means no series
// matches. Every probe has a condition on _field: without one, InfluxDB 1.8
// lists its built-in columns even for a measurement that does not exist.
// (Listing _measurement values instead is answered empty by 1.8.) On 1.x
// fields belong to a measurement, not to a series, so the tags probe finds
// series with the tags in a measurement that has the field.
func (c *Client) pointExists(ctx context.Context, loc location) error {
	probe := func(name, pred string) string {
		return fmt.Sprintf(`from(bucket: %s)
  |> range(start: %s, stop: %s)
  |> filter(fn: (r) => %s)
  |> keys()
  |> keep(columns: ["_value"])
  |> distinct()
  |> yield(name: %q)
`, fluxString(c.opt.Bucket), minTime, maxTime, pred, name)
	}
	field := location{measurement: loc.measurement, field: loc.field}
	flux := probe("measurement", "r._measurement == "+fluxString(loc.measurement)+` and r._field =~ /.*/`) +
		probe("field", field.predicate()) +
		probe("tags", loc.predicate())
	found := map[string]bool{}
	err := c.run(ctx, flux, nil, func(f *fluxCSV) (bool, error) {
		found[f.result] = true
		return false, nil
	})
	if err != nil {
		return fmt.Errorf("check point %q (%s): %w", loc.name, loc.describe(), err)
	}
	var why string
	switch {
	case !found["measurement"]:
		why = fmt.Sprintf("measurement %q does not exist", loc.measurement)
	case !found["field"]:
		why = fmt.Sprintf("measurement %q has no field %q", loc.measurement, loc.field)
	case !found["tags"]:
		var tags []string
		for _, k := range loc.keys {
			tags = append(tags, fmt.Sprintf("%q=%q", k, loc.tags[k]))
		}
		why = fmt.Sprintf("measurement %q has field %q, but no series with tags %s", loc.measurement, loc.field, strings.Join(tags, ", "))
	default:
		return nil
	}
	return fmt.Errorf("point %q: %s in bucket %q: %w", loc.name, why, c.opt.Bucket, ErrNoSuchPoint)
}
