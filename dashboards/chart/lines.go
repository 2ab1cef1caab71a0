package chart

import (
	"fmt"
	"io"
	"math"
	"time"
)

// Lines draws each series as a line through its values at times, with a
// gap wherever a value is missing and a dot for a value alone between gaps;
// bands are drawn under the lines. times must be strictly increasing;
// every series and band bound needs one value per time.
func Lines(w io.Writer, f Frame, times []time.Time, lines []Series, bands []Band) error {
	if err := checkTimes(f.Title, times); err != nil {
		return err
	}
	n := len(times)
	for i, sr := range lines {
		if len(sr.Values) != n {
			return fmt.Errorf("chart %q: line %d (%q) has %d values for %d times; give one value per time", f.Title, i, sr.Name, len(sr.Values), n)
		}
	}
	for i, b := range bands {
		if len(b.Lo) != n || len(b.Hi) != n {
			return fmt.Errorf("chart %q: band %d (%q) has %d low and %d high values for %d times; give one of each per time", f.Title, i, b.Name, len(b.Lo), len(b.Hi), n)
		}
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	see := func(v float64) {
		if finite(v) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	for _, sr := range lines {
		for _, v := range sr.Values {
			see(v)
		}
	}
	for _, b := range bands {
		for i := range b.Lo {
			if finite(b.Lo[i]) && finite(b.Hi[i]) {
				see(b.Lo[i])
				see(b.Hi[i])
			}
		}
	}
	hasData := lo <= hi
	if !hasData {
		lo, hi = math.NaN(), math.NaN()
	}
	// Time domain: first to last instant; a single instant gets an hour
	// either side so that its dot sits in the middle.
	t0, t1 := time.Unix(0, 0).UTC(), time.Unix(3600, 0).UTC()
	if n > 0 {
		t0, t1 = times[0], times[n-1]
		if n == 1 {
			t0, t1 = t0.Add(-time.Hour), t1.Add(time.Hour)
		}
	}
	var items []legendItem
	var nm []string
	colors := make([]string, len(lines))
	for k, sr := range lines {
		colors[k] = safeColor(sr.Color, autoColor(k))
		items = append(items, legendItem{name: sr.Name, color: colors[k], class: sr.Class, kind: 'l'})
		nm = append(nm, sr.Name)
	}
	bandColors := make([]string, len(bands))
	for k, b := range bands {
		bandColors[k] = safeColor(b.Color, autoColor(len(lines)+k))
		if b.Name != "" {
			items = append(items, legendItem{name: b.Name, color: bandColors[k], kind: 'b'})
		}
	}
	c, err := newXYChart(f, t0, t1, lo, hi, false, items)
	if err != nil {
		return err
	}
	var s svgBuf
	s.b = make([]byte, 0, 4096+n*(len(lines)+2*len(bands))*9)
	span := ""
	if n > 0 {
		span = spanLabel(times[0], times[n-1], c.f.zone())
	}
	c.openData(&s, f.Title, "lines", "Lines", nm, span, hasData)
	xs := make([]float64, n)
	for i, t := range times {
		xs[i] = c.xt(t)
	}
	for k, b := range bands {
		s.str(`<path class="dlc-band" fill-opacity="0.22"`)
		s.attr("fill", bandColors[k])
		s.str(` d="`)
		p := newPath(&s)
		for i := 0; i < n; {
			if !finite(b.Lo[i]) || !finite(b.Hi[i]) {
				i++
				continue
			}
			j := i
			for j+1 < n && finite(b.Lo[j+1]) && finite(b.Hi[j+1]) {
				j++
			}
			p.moveTo(xs[i], c.y.at(b.Hi[i]))
			for k := i + 1; k <= j; k++ {
				p.lineTo(xs[k], c.y.at(b.Hi[k]))
			}
			for k := j; k >= i; k-- {
				p.lineTo(xs[k], c.y.at(b.Lo[k]))
			}
			p.close()
			i = j + 1
		}
		p.endTitled(b.Name)
	}
	for k, sr := range lines {
		s.str(`<path`)
		s.attr("class", classes("dlc-line", sr.Class))
		s.str(` fill="none" stroke-width="1.6" stroke-linejoin="round" stroke-linecap="round"`)
		s.attr("stroke", colors[k])
		s.str(` d="`)
		p := newPath(&s)
		for i := 0; i < n; {
			if !finite(sr.Values[i]) {
				i++
				continue
			}
			p.moveTo(xs[i], c.y.at(sr.Values[i]))
			seg := p.segments
			j := i
			for j+1 < n && finite(sr.Values[j+1]) {
				j++
				p.lineTo(xs[j], c.y.at(sr.Values[j]))
			}
			if p.segments == seg { // a lone value, or all in one spot
				p.dot()
			}
			i = j + 1
		}
		p.endTitled(sr.Name)
	}
	s.str(`</g></svg>`)
	return s.flush(w)
}
