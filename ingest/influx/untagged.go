package influx

import (
	"context"
	"fmt"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest/store"
)

var _ store.UntaggedAdopter = (*Backend)(nil)

// Results written before they carried the site tag (dewline_hourly and
// dewline_alert tagged by ahu only) are read by no site: every read of
// results matches the site tag. UntaggedResults finds them and
// AdoptUntagged copies them, once, into the series of the site that wrote
// them ("dewline adopt"). The untagged points stay where they are
// (InfluxDB 1.8 offers no delete through the API dewline uses), unread.

// resultSchema is how the points of a result measurement are rebuilt from
// a wide row: which columns are tags and which string fields; every other
// column that is not Flux's own is a float field.
type resultSchema struct {
	measurement string
	tags        []string
	strings     []string
}

var resultSchemas = []resultSchema{
	{measurement: MeasurementHourly, tags: []string{"ahu"}, strings: []string{"flags", "missing"}},
	{measurement: MeasurementAlert, tags: []string{"ahu", "kind", "severity", "status"}, strings: []string{"id", "reason", "start", "end"}},
}

// UntaggedResults returns, per air handler, the number of hours in
// dewline_hourly that carry no site tag (written before results were
// tagged), looking back to the Unix epoch.
func (b *Backend) UntaggedResults(ctx context.Context, now time.Time) (map[string]int, error) {
	flux := fmt.Sprintf("from(bucket: %s)\n  |> range(start: %s, stop: %s)\n"+
		"  |> filter(fn: (r) => r._measurement == %s and r._field == \"coverage\" and not exists r.site)\n  |> count()\n",
		fluxString(b.c.opt.Bucket), fluxTime(time.Unix(1, 0)), fluxTime(now.Add(24*time.Hour)), fluxString(MeasurementHourly))
	out := map[string]int{}
	err := b.c.run(ctx, flux, func() { clear(out) }, func(f *fluxCSV) (bool, error) {
		n, err := f.value()
		if err != nil {
			return false, fmt.Errorf("count: %w", err)
		}
		out[f.get("ahu")] += int(n)
		return false, nil
	})
	if err != nil {
		return nil, fmt.Errorf("look for results without the site tag: %w", err)
	}
	return out, nil
}

// AdoptUntagged copies the results without a site tag into this site's
// series (the backend's Site): the same points, tagged. It refuses,
// writing nothing, when the untagged results name an air handler not in
// ahus (the configured ones): then they were written by another site, or
// the wrong configuration was given. A point the site already has at the
// same time is newer and is kept. Running it again copies the same points
// again, which changes nothing.
func (b *Backend) AdoptUntagged(ctx context.Context, ahus []string, now time.Time) (store.Adopted, error) {
	known := map[string]bool{}
	for _, a := range ahus {
		known[a] = true
	}
	site := SiteTag(b.opt.Site)
	var pts []Point
	var done store.Adopted
	for _, sc := range resultSchemas {
		// The site's own points, by series and time, so that none is replaced.
		have := map[string]bool{}
		err := b.c.ReadWide(ctx, WideQuery{Measurement: sc.measurement, Match: map[string]string{"site": site},
			From: time.Unix(1, 0), To: now.Add(24 * time.Hour)}, func(row Row) error {
			t, err := row.Time()
			if err != nil {
				return err
			}
			have[seriesKey(row, sc.tags, t)] = true
			return nil
		})
		if err != nil {
			return store.Adopted{}, err
		}
		var foreign []string
		err = b.c.ReadWide(ctx, WideQuery{Measurement: sc.measurement, Absent: []string{"site"},
			From: time.Unix(1, 0), To: now.Add(24 * time.Hour)}, func(row Row) error {
			t, err := row.Time()
			if err != nil {
				return err
			}
			if ahu := row.Get("ahu"); !known[ahu] {
				if !contains(foreign, ahu) {
					foreign = append(foreign, ahu)
				}
				return nil
			}
			if have[seriesKey(row, sc.tags, t)] {
				done.Kept++
				return nil
			}
			p, err := pointFromRow(sc, row, site, t)
			if err != nil {
				return err
			}
			pts = append(pts, p)
			if sc.measurement == MeasurementHourly {
				done.Hours++
			} else {
				done.Transitions++
			}
			return nil
		})
		if err != nil {
			return store.Adopted{}, err
		}
		if len(foreign) > 0 {
			sort.Strings(foreign)
			return store.Adopted{}, fmt.Errorf("%s holds results without a site tag for air handlers %s, which site %q does not have: "+
				"nothing was copied; run this with the configuration of the site that wrote them", sc.measurement, strings.Join(foreign, ", "), site)
		}
	}
	if err := b.c.WritePoints(ctx, pts); err != nil {
		return store.Adopted{}, fmt.Errorf("copy results into site %q: %w", site, err)
	}
	return done, nil
}

// seriesKey names a point by its tags in order and its time.
func seriesKey(row Row, tags []string, t time.Time) string {
	var k strings.Builder
	for _, tag := range tags {
		k.WriteString(row.Get(tag))
		k.WriteByte(0)
	}
	k.WriteString(strconv.FormatInt(t.UnixNano(), 10))
	return k.String()
}

// pointFromRow rebuilds a wide row of sc's measurement as a point tagged site.
func pointFromRow(sc resultSchema, row Row, site string, t time.Time) (Point, error) {
	p := Point{Measurement: sc.measurement, Tags: map[string]string{"site": site}, Fields: map[string]float64{},
		Strings: map[string]string{}, Time: t}
	for _, tag := range sc.tags {
		p.Tags[tag] = row.Get(tag)
	}
	for _, col := range row.Columns() {
		if col == "" || col == "result" || col == "table" || strings.HasPrefix(col, "_") ||
			contains(sc.tags, col) || col == "site" {
			continue
		}
		v := row.Get(col)
		if contains(sc.strings, col) {
			p.Strings[col] = v
			continue
		}
		if v == "" {
			continue // a field this point lacks
		}
		f, err := strconv.ParseFloat(v, 64)
		if err != nil {
			return Point{}, fmt.Errorf("read %s: %s at %s field %s: %q is not a number", sc.measurement, row.Get("ahu"), t.Format(time.RFC3339), col, v)
		}
		p.Fields[col] = f
	}
	return p, nil
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
