package chart

import (
	"fmt"
	"io"
	"math"
	"time"
)

// barGapMinPitch is the bar pitch (user units) from which bars are drawn
// apart with a gap; narrower bars (a month of hours) touch and each series
// becomes one band per run of hours, which is what keeps 720 hours small.
const barGapMinPitch = 4.0

// StackedBars draws one bar per time, times[i] to times[i]+step, with the
// series stacked in order (the first at the bottom). Positive values stack
// upward from zero and negative values downward; a missing value counts as
// nothing. times must be strictly increasing; every series needs one value
// per time.
func StackedBars(w io.Writer, f Frame, times []time.Time, step time.Duration, stacks []Series) error {
	if step <= 0 {
		return fmt.Errorf("chart %q: bar step %v must be positive (one hour for hourly energy)", f.Title, step)
	}
	if err := checkTimes(f.Title, times); err != nil {
		return err
	}
	for i, sr := range stacks {
		if len(sr.Values) != len(times) {
			return fmt.Errorf("chart %q: series %d (%q) has %d values for %d times; give one value per time", f.Title, i, sr.Name, len(sr.Values), len(times))
		}
	}
	n := len(times)
	// Cumulative stacks: pos[k][i] is the top of series k's positive part.
	pos := make([][]float64, len(stacks)+1)
	neg := make([][]float64, len(stacks)+1)
	for k := range pos {
		pos[k] = make([]float64, n)
		neg[k] = make([]float64, n)
	}
	lo, hi := math.NaN(), math.NaN()
	hasData := false
	for k, sr := range stacks {
		for i, v := range sr.Values {
			p, q := pos[k][i], neg[k][i]
			if finite(v) {
				hasData = true
				if v > 0 {
					p += v
				} else {
					q += v
				}
			}
			pos[k+1][i], neg[k+1][i] = p, q
		}
	}
	if hasData {
		lo, hi = 0, 0
		for i := 0; i < n; i++ {
			hi = math.Max(hi, pos[len(stacks)][i])
			lo = math.Min(lo, neg[len(stacks)][i])
		}
	}
	t0, t1 := time.Unix(0, 0).UTC(), time.Unix(0, 0).UTC().Add(step)
	if n > 0 {
		t0, t1 = times[0], times[n-1].Add(step)
	}
	items := make([]legendItem, len(stacks))
	colors := make([]string, len(stacks))
	var nm []string
	for k, sr := range stacks {
		colors[k] = safeColor(sr.Color, autoColor(k))
		items[k] = legendItem{name: sr.Name, color: colors[k], class: sr.Class, kind: 'r'}
		nm = append(nm, sr.Name)
	}
	c, err := newXYChart(f, t0, t1, lo, hi, true, items)
	if err != nil {
		return err
	}
	var s svgBuf
	s.b = make([]byte, 0, 4096+n*len(stacks)*20)
	span := ""
	if n > 0 {
		span = spanLabel(t0, t1, c.f.zone())
	}
	c.openData(&s, f.Title, "stacked", "Stacked bars", nm, span, hasData)
	// Bar edges in user units; a bar is adjacent to the previous one when
	// it starts where that one ends.
	x0 := make([]float64, n)
	x1 := make([]float64, n)
	for i, t := range times {
		x0[i], x1[i] = c.xt(t), c.xt(t.Add(step))
	}
	gap := 0.0
	if n > 0 && c.box.w()/float64(n) >= barGapMinPitch {
		gap = math.Min(2, 0.2*c.box.w()/float64(n))
	}
	for k, sr := range stacks {
		s.str(`<path`)
		s.attr("class", classes("dlc-bars", sr.Class))
		s.attr("fill", colors[k])
		s.str(` d="`)
		p := newPath(&s)
		bars := barRuns{x0: x0, x1: x1, times: times, step: step, gap: gap, y: c.y.at}
		bars.draw(p, pos[k], pos[k+1])
		bars.draw(p, neg[k], neg[k+1])
		p.endTitled(sr.Name)
	}
	s.str(`</g></svg>`)
	return s.flush(w)
}

// barRuns draws one layer (between lower and upper cumulative values) as
// polygons over runs of adjacent bars where the layer is not empty.
type barRuns struct {
	x0, x1 []float64
	times  []time.Time
	step   time.Duration
	gap    float64
	y      func(float64) float64
}

func (b barRuns) draw(p *pathData, lower, upper []float64) {
	n := len(lower)
	for i := 0; i < n; {
		if upper[i] == lower[i] {
			i++
			continue
		}
		j := i // run [i, j]
		for j+1 < n && b.gap == 0 && upper[j+1] != lower[j+1] && b.times[j+1].Equal(b.times[j].Add(b.step)) {
			j++
		}
		h := b.gap / 2
		// Top edge left to right, then bottom edge right to left.
		p.moveTo(b.x0[i]+h, b.y(upper[i]))
		for k := i; k <= j; k++ {
			p.lineTo(b.x0[k]+h, b.y(upper[k]))
			p.lineTo(b.x1[k]-h, b.y(upper[k]))
		}
		for k := j; k >= i; k-- {
			p.lineTo(b.x1[k]-h, b.y(lower[k]))
			p.lineTo(b.x0[k]+h, b.y(lower[k]))
		}
		p.close()
		i = j + 1
	}
}
