package influx

import (
	"context"
	"fmt"
	"sort"
	"strings"
	"time"
)

// StateTime is the timestamp of state points: one fixed instant, so that
// writing a state again replaces it (same measurement, tags and time).
var StateTime = time.Unix(0, 0).UTC()

// ReadState reads the latest string fields of the state points of
// measurement whose tags include match, calling fn with the value of the
// tag key (empty when key is ""), the field and its value. The points are
// those written at StateTime; nothing found is not an error.
func (c *Client) ReadState(ctx context.Context, measurement string, match map[string]string, key string, fn func(keyValue, field, value string) error) error {
	var b strings.Builder
	fmt.Fprintf(&b, "from(bucket: %s)\n  |> range(start: %s, stop: %s)\n", fluxString(c.opt.Bucket),
		fluxTime(StateTime), fluxTime(StateTime.Add(time.Second)))
	fmt.Fprintf(&b, "  |> filter(fn: (r) => r._measurement == %s", fluxString(measurement))
	keys := make([]string, 0, len(match))
	for k := range match {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		fmt.Fprintf(&b, " and %s == %s", fluxColumn(k), fluxString(match[k]))
	}
	b.WriteString(")\n  |> last()\n")
	type row struct{ k, f, v string }
	var rows []row
	err := c.run(ctx, b.String(), func() { rows = rows[:0] }, func(f *fluxCSV) (bool, error) {
		kv := ""
		if key != "" {
			kv = f.get(key)
		}
		rows = append(rows, row{kv, f.get(colField), f.get(colValue)})
		return false, nil
	})
	if err != nil {
		return fmt.Errorf("read %s: %w", measurement, err)
	}
	for _, r := range rows {
		if err := fn(r.k, r.f, r.v); err != nil {
			return err
		}
	}
	return nil
}
