package chart

import (
	"fmt"
	"io"
	"math"
)

// Spark draws a small trend line without axes, width x height user units
// (also its size on the page; a stylesheet may resize it through the
// dlc-spark class). Missing values leave gaps; the last value carries a dot.
// Its accessible name gives the last, lowest and highest values.
func Spark(w io.Writer, values []float64, width, height int, color string) error {
	if width < 8 || height < 4 || width > maxSize || height > maxSize {
		return fmt.Errorf("spark: size %dx%d is outside 8x4..%dx%d; pass the size in pixels", width, height, maxSize, maxSize)
	}
	wd, h := float64(width), float64(height)
	lo, hi := math.Inf(1), math.Inf(-1)
	last := math.NaN()
	lastI := -1
	for i, v := range values {
		if finite(v) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
			last, lastI = v, i
		}
	}
	col := safeColor(color, ColorBlue)
	label := "Trend: no data"
	if lastI >= 0 {
		label = "Trend: last " + compact(last) + ", low " + compact(lo) + ", high " + compact(hi)
	}
	var s svgBuf
	s.str(`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 `)
	s.num(wd)
	s.str(" ")
	s.num(h)
	s.str(`"`)
	s.numAttr("width", wd)
	s.numAttr("height", h)
	s.str(` role="img" class="dlc dlc-spark"`)
	s.attr("aria-label", label)
	s.str(`><title>`)
	s.esc(label)
	s.str(`</title>`)
	if lastI < 0 {
		s.str(`<path class="dlc-spark-empty" fill="none" stroke-dasharray="2 2" stroke-width="1"`)
		s.attr("stroke", colorAxis)
		s.str(` d="`)
		p := newPath(&s)
		p.moveTo(1, h/2)
		p.lineTo(wd-1, h/2)
		p.end()
		s.str(`"/></svg>`)
		return s.flush(w)
	}
	const pad = 2.0
	if lo == hi {
		lo, hi = lo-1, hi+1 // a flat line in the middle
	}
	y := linear{lo, hi, h - pad, pad}
	x := linear{0, float64(max(len(values)-1, 1)), pad, wd - pad - 2}
	if len(values) == 1 {
		x = linear{-1, 1, pad, wd - pad - 2}
	}
	s.str(`<path class="dlc-spark-line" fill="none" stroke-width="1.4" stroke-linejoin="round" stroke-linecap="round"`)
	s.attr("stroke", col)
	s.str(` d="`)
	p := newPath(&s)
	for i := 0; i < len(values); {
		if !finite(values[i]) {
			i++
			continue
		}
		p.moveTo(x.at(float64(i)), y.at(values[i]))
		seg := p.segments
		j := i
		for j+1 < len(values) && finite(values[j+1]) {
			j++
			p.lineTo(x.at(float64(j)), y.at(values[j]))
		}
		if p.segments == seg {
			p.dot()
		}
		i = j + 1
	}
	p.end()
	s.str(`"/><circle class="dlc-spark-last" r="2"`)
	s.numAttr("cx", x.at(float64(lastI)))
	s.numAttr("cy", y.at(last))
	s.attr("fill", col)
	s.str(`/></svg>`)
	return s.flush(w)
}
