package ingest

import (
	"fmt"
	"math"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Series is one role's samples for alignment: SI values in time order. It
// should start up to Stale before the first hour, so the value logged just
// before the hour can hold into it.
type Series struct {
	Role    metrics.Role
	Stale   time.Duration // how long a sample may hold; 0 takes the role's default
	Samples []Sample
}

// Align puts each role's samples onto a grid of step and calls fn once per
// hour from the hour of from, for hours hours, in order. A sample holds
// from its time until the next sample, but never longer than its stale
// limit; the value of a step is the one holding at the step's midpoint, so
// interval logs on the minute and change-of-value logs at odd seconds both
// land where they belong. Samples that are NaN, infinite or outside the
// role's physical range are excluded and counted; they also end the hold of
// the sample before them, because at that moment the true value is unknown.
// Nothing is clipped or filled. step must divide an hour.
func Align(ahu string, from time.Time, hours int, step time.Duration, series []Series, fn func(*metrics.Hour) error) error {
	if step <= 0 || time.Hour%step != 0 {
		return fmt.Errorf("align %s: grid step %v does not divide an hour", ahu, step)
	}
	n := int(time.Hour / step)
	start := from.UTC().Truncate(time.Hour)
	type cursor struct {
		s     Series
		spec  metrics.RoleSpec
		stale time.Duration
		i     int // index of the next sample not yet consumed
		cur   Sample
		good  bool // cur is a usable value
		has   bool // cur has been set
		// in-hour counters
		inHour, bad, nonFinite int
	}
	cs := make([]*cursor, 0, len(series))
	for _, s := range series {
		spec, ok := metrics.LookupRole(string(s.Role))
		if !ok {
			return fmt.Errorf("align %s: unknown role %q", ahu, s.Role)
		}
		if !sort.SliceIsSorted(s.Samples, func(a, b int) bool { return s.Samples[a].Time.Before(s.Samples[b].Time) }) {
			sorted := append([]Sample(nil), s.Samples...)
			sort.SliceStable(sorted, func(a, b int) bool { return sorted[a].Time.Before(sorted[b].Time) })
			s.Samples = sorted
		}
		c := &cursor{s: s, spec: spec, stale: s.Stale}
		if c.stale <= 0 {
			c.stale = spec.Stale
		}
		cs = append(cs, c)
	}
	for h := 0; h < hours; h++ {
		hs := start.Add(time.Duration(h) * time.Hour)
		he := hs.Add(time.Hour)
		hour := &metrics.Hour{
			AHU: ahu, Start: hs, Step: step,
			Values:  make(map[metrics.Role][]float64, len(cs)),
			Quality: make(map[metrics.Role]metrics.RoleQuality, len(cs)),
		}
		for _, c := range cs {
			vals := make([]float64, n)
			c.inHour, c.bad, c.nonFinite = 0, 0, 0
			present := 0
			for i := 0; i < n; i++ {
				mid := hs.Add(time.Duration(i)*step + step/2)
				// Consume every sample at or before the midpoint.
				for c.i < len(c.s.Samples) && !c.s.Samples[c.i].Time.After(mid) {
					smp := c.s.Samples[c.i]
					c.i++
					inside := !smp.Time.Before(hs) && smp.Time.Before(he)
					finite := !math.IsNaN(smp.Value) && !math.IsInf(smp.Value, 0)
					plausible := finite && c.spec.Plausible(smp.Value)
					if inside {
						c.inHour++
						if !finite {
							c.nonFinite++
						} else if !plausible {
							c.bad++
						}
					}
					c.cur, c.good, c.has = smp, plausible, true
				}
				if c.has && c.good && mid.Sub(c.cur.Time) <= c.stale {
					vals[i] = c.cur.Value
					present++
				} else {
					vals[i] = math.NaN()
				}
			}
			// Count the samples after the last midpoint but inside the hour.
			for j := c.i; j < len(c.s.Samples) && c.s.Samples[j].Time.Before(he); j++ {
				smp := c.s.Samples[j]
				c.inHour++
				if math.IsNaN(smp.Value) || math.IsInf(smp.Value, 0) {
					c.nonFinite++
				} else if !c.spec.Plausible(smp.Value) {
					c.bad++
				}
			}
			hour.Values[c.s.Role] = vals
			hour.Quality[c.s.Role] = metrics.RoleQuality{
				Coverage:   float64(present) / float64(n),
				Samples:    c.inHour,
				OutOfRange: c.bad,
				NotFinite:  c.nonFinite,
			}
		}
		if err := fn(hour); err != nil {
			return err
		}
	}
	return nil
}
