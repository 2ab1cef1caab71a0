package influx

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"
)

// SeriesSample is one series found by Discover: its measurement, field and
// tags, and its last values in the window, in time order.
type SeriesSample struct {
	Measurement string
	Field       string
	Tags        map[string]string
	Times       []time.Time
	Values      []float64
}

// Discover lists the series of the bucket that hold numbers in [from, to),
// with up to perSeries of the last values of each, for proposing a point
// map. Measurements dewline writes itself (names starting with "dewline_")
// are left out; so are values that are not numbers (strings), which no
// role can take. Series come sorted by measurement, field and tags.
func (c *Client) Discover(ctx context.Context, from, to time.Time, perSeries int) ([]SeriesSample, error) {
	if !from.Before(to) {
		return nil, fmt.Errorf("discover: empty period %s..%s", from.Format(time.RFC3339), to.Format(time.RFC3339))
	}
	if perSeries <= 0 {
		perSeries = 500
	}
	flux := fmt.Sprintf("from(bucket: %s)\n  |> range(start: %s, stop: %s)\n"+
		"  |> filter(fn: (r) => not (r._measurement =~ /^dewline_/))\n  |> tail(n: %d)\n",
		fluxString(c.opt.Bucket), fluxTime(from), fluxTime(to), perSeries)
	var out []SeriesSample
	idx := map[string]int{}
	err := c.run(ctx, flux, func() { out, idx = nil, map[string]int{} }, func(f *fluxCSV) (bool, error) {
		v, err := f.value()
		if err != nil {
			return false, nil // a string or null: no role takes it
		}
		t, err := f.time()
		if err != nil {
			return false, err
		}
		key := f.get(colMeasurement) + "\x00" + f.get(colField) + "\x00" + f.tags()
		i, ok := idx[key]
		if !ok {
			s := SeriesSample{Measurement: f.get(colMeasurement), Field: f.get(colField), Tags: map[string]string{}}
			for _, n := range f.names {
				switch n {
				case "", "result", "table", colTime, colValue, colMeasurement, colField, colStart, colStop:
					continue
				}
				if val := f.get(n); val != "" {
					s.Tags[n] = val
				}
			}
			i = len(out)
			idx[key] = i
			out = append(out, s)
		}
		out[i].Times = append(out[i].Times, t)
		out[i].Values = append(out[i].Values, v)
		return false, nil
	})
	if err != nil {
		var re *RequestError
		if errors.As(err, &re) {
			return nil, fmt.Errorf("discover series: %w", err)
		}
		return nil, err
	}
	sort.Slice(out, func(i, j int) bool {
		a, b := out[i], out[j]
		if a.Measurement != b.Measurement {
			return a.Measurement < b.Measurement
		}
		if a.Field != b.Field {
			return a.Field < b.Field
		}
		return tagString(a.Tags) < tagString(b.Tags)
	})
	return out, nil
}

func tagString(tags map[string]string) string {
	keys := make([]string, 0, len(tags))
	for k := range tags {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	var b strings.Builder
	for _, k := range keys {
		b.WriteString(k + "=" + tags[k] + ",")
	}
	return b.String()
}
