package ingest

import (
	"fmt"
	"math"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// PointCheck accumulates what one series holds, for "dewline check":
// how many samples, their span and typical spacing, how many are out of
// the role's plausible range, and under which unit the values look typical.
type PointCheck struct {
	Name       string
	Targets    []PointTarget
	N          int
	First      time.Time
	Last       time.Time
	prev       time.Time
	intervals  map[int64]int // seconds between samples -> count
	OutOfRange int
	typical    map[string]int // unit name -> values typical under that unit
}

// NewPointCheck starts the check of the series name, used as ts.
func NewPointCheck(name string, ts []PointTarget) *PointCheck {
	return &PointCheck{Name: name, Targets: ts, intervals: map[int64]int{}, typical: map[string]int{}}
}

// Add counts one raw value (in the unit the series is logged in).
func (p *PointCheck) Add(t time.Time, raw float64) {
	p.N++
	if p.First.IsZero() || t.Before(p.First) {
		p.First = t
	}
	if t.After(p.Last) {
		p.Last = t
	}
	if !p.prev.IsZero() {
		if d := t.Sub(p.prev); d > 0 {
			p.intervals[int64(d.Round(time.Second)/time.Second)]++
		}
	}
	p.prev = t
	t0 := p.Targets[0]
	spec, _ := metrics.LookupRole(string(t0.Role))
	if v := t0.Unit.ToSI(raw); math.IsNaN(v) || math.IsInf(v, 0) || !spec.Plausible(v) {
		p.OutOfRange++
	}
	for _, name := range psychro.UnitNames(t0.Kind) {
		u, _ := psychro.LookupUnit(t0.Kind, name)
		if spec.Typical(u.ToSI(raw)) {
			p.typical[u.Name]++
		}
	}
}

// Interval is the typical (most frequent) spacing of the samples.
func (p *PointCheck) Interval() time.Duration {
	best, bestN := int64(0), 0
	for s, n := range p.intervals {
		if n > bestN || n == bestN && s < best {
			best, bestN = s, n
		}
	}
	return time.Duration(best) * time.Second
}

// UnitNote says when the values look logged in another unit than the configured one.
func (p *PointCheck) UnitNote() string {
	if p.N < 10 {
		return ""
	}
	t0 := p.Targets[0]
	conf := float64(p.typical[t0.Unit.Name]) / float64(p.N)
	best, bestShare := "", conf
	for name, c := range p.typical {
		if share := float64(c) / float64(p.N); share > bestShare+0.3 {
			best, bestShare = name, share
		}
	}
	if best == "" || conf > 0.5 {
		return ""
	}
	return fmt.Sprintf("values look like %s, not %s (%.0f %% typical as %s, %.0f %% as %s)", best, t0.Ref.Unit, 100*bestShare, best, 100*conf, t0.Ref.Unit)
}
