package ingest

import (
	"fmt"
	"io"
	"math"
	"sort"
	"text/tabwriter"
	"time"

	"github.com/dewline/dewline/metrics"
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
	look       *unitLook // under which unit the values look typical
	tally      unitTally
	spec       metrics.RoleSpec // the first target's role
}

// NewPointCheck starts the check of the series name, used as ts.
func NewPointCheck(name string, ts []PointTarget) *PointCheck {
	spec, _ := metrics.LookupRole(string(ts[0].Role))
	look := newUnitLook(spec, ts[0].Unit.Name)
	return &PointCheck{Name: name, Targets: ts, intervals: map[int64]int{}, look: look, tally: look.tally(), spec: spec}
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
	if v := p.Targets[0].Unit.ToSI(raw); math.IsNaN(v) || math.IsInf(v, 0) || !p.spec.Plausible(v) {
		p.OutOfRange++
	}
	p.look.add(&p.tally, raw)
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

// UnitNote says when the values look logged in another unit than the
// configured one (the rule of unitLook, which the analysis applies hour by
// hour too).
func (p *PointCheck) UnitNote() string {
	best, bestShare, conf, ok := p.look.other(p.tally)
	if !ok {
		return ""
	}
	return fmt.Sprintf("values look like %s, not %s (%.0f %% typical as %s, %.0f %% as %s)", best.Name, p.Targets[0].Ref.Unit, 100*bestShare, best.Name, 100*conf, p.Targets[0].Ref.Unit)
}

// WritePointChecks writes the checks as a table, a row per air handler
// and role, times in loc, and counts the points that need a look.
func WritePointChecks(w io.Writer, loc *time.Location, checks map[string]*PointCheck) (needLook int, err error) {
	type row struct {
		ahu, role string
		pc        *PointCheck
	}
	var rows []row
	for _, pc := range checks {
		for _, t := range pc.Targets {
			rows = append(rows, row{t.AHU, string(t.Role), pc})
		}
	}
	sort.Slice(rows, func(i, j int) bool {
		if rows[i].ahu != rows[j].ahu {
			return rows[i].ahu < rows[j].ahu
		}
		return rows[i].role < rows[j].role
	})
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "air handler\trole\tpoint\tunit\tsamples\tfirst\tlast\tinterval\tout of range\tnote")
	problems := 0
	for _, r := range rows {
		pc := r.pc
		note := pc.UnitNote()
		first, last, iv, oor := "-", "-", "-", "-"
		if pc.N > 0 {
			first = pc.First.In(loc).Format("2006-01-02 15:04")
			last = pc.Last.In(loc).Format("2006-01-02 15:04")
			if d := pc.Interval(); d > 0 {
				iv = d.String()
			}
			oor = fmt.Sprintf("%.1f%%", 100*float64(pc.OutOfRange)/float64(pc.N))
		} else {
			note = "no samples found"
		}
		if note != "" || pc.N > 0 && pc.OutOfRange > pc.N/100 {
			problems++
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\n", r.ahu, r.role, pc.Name, pc.Targets[0].Ref.Unit, pc.N, first, last, iv, oor, note)
	}
	if err := tw.Flush(); err != nil {
		return 0, err
	}
	if problems > 0 {
		fmt.Fprintf(w, "%d point(s) need a look (see the note and out-of-range columns)\n", problems)
	}
	return problems, nil
}
