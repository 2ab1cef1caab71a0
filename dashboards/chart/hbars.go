package chart

import (
	"fmt"
	"io"
	"math"
)

const (
	hbarRow      = 22.0 // row pitch
	hbarMaxLabel = 0.4  // labels take at most this share of the width
)

// HBars draws a ranking: one horizontal bar per label, in the order given,
// with the value written at the end of the bar. Negative values extend left
// of zero; a missing value shows a dash. Frame.YLabel names the value axis
// (with its unit); Frame.Height 0 sizes the chart to the rows.
func HBars(w io.Writer, f Frame, labels []string, values []float64, color string) error {
	if len(labels) != len(values) {
		return fmt.Errorf("chart %q: %d labels for %d values; give one label per value", f.Title, len(labels), len(values))
	}
	n := len(values)
	top := 8.0
	if f.Title != "" {
		top += 18
	}
	if f.YLabel != "" {
		top += 16
	} else {
		top += 6
	}
	defH := int(math.Ceil(top + float64(max(n, 1))*hbarRow + 26))
	wd, h, err := f.size(defaultWidth, min(defH, maxSize))
	if err != nil {
		return err
	}
	bottom := h - 26
	if bottom-top < hbarRow*0.5 {
		return fmt.Errorf("chart %q: height %g leaves no room for %d bars; raise Frame.Height or use 0", f.Title, h, n)
	}
	pitch := (bottom - top) / float64(max(n, 1))
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range values {
		if finite(v) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	hasData := lo <= hi
	if !hasData {
		lo, hi = math.NaN(), math.NaN()
	}
	maxLabel := 0.0
	for _, l := range labels {
		maxLabel = math.Max(maxLabel, textWidth(l))
	}
	labelRoom := math.Min(maxLabel, wd*hbarMaxLabel)
	maxRunes := int(labelRoom / charWidth)
	box := plotBox{x0: 8 + labelRoom + 8, y0: top, x1: wd - 48, y1: bottom}
	if box.w() < 20 {
		return fmt.Errorf("chart %q: width %g leaves no room for the bars; raise Frame.Width", f.Title, wd)
	}
	ax := niceAxis(lo, hi, max(2, int(box.w()/80)), true, f.YMin, f.YMax)
	fm := newTickFormat(ax.ticks, ax.step)
	x := linear{ax.lo, ax.hi, box.x0, box.x1}
	col := safeColor(color, ColorBlue)

	var s svgBuf
	label := f.Title
	if label != "" {
		label += ". "
	}
	label += fmt.Sprintf("Ranking of %d items", n)
	if f.YLabel != "" {
		label += " by " + f.YLabel
	}
	openSVG(&s, "hbars", wd, h, f.Title, label)
	if f.Title != "" {
		s.str(`<text class="dlc-title" x="8" y="20" font-size="13" font-weight="600">`)
		s.esc(f.Title)
		s.str(`</text>`)
	}
	if f.YLabel != "" {
		s.str(`<text class="dlc-ylabel"`)
		s.numAttr("x", box.x0)
		s.numAttr("y", top-7)
		s.attr("fill", colorMuted)
		s.str(`>`)
		s.esc(f.YLabel)
		s.str(`</text>`)
	}
	s.str(`<path class="dlc-grid" fill="none" stroke-width="1"`)
	s.attr("stroke", colorGrid)
	s.str(` d="`)
	p := newPath(&s)
	for _, v := range ax.ticks {
		p.moveTo(x.at(v), box.y0)
		p.lineTo(x.at(v), box.y1)
	}
	p.end()
	s.str(`"/><path class="dlc-axis" fill="none" stroke-width="1"`)
	s.attr("stroke", colorAxis)
	s.str(` d="`)
	p = newPath(&s)
	p.moveTo(x.at(math.Max(ax.lo, math.Min(0, ax.hi))), box.y0)
	p.lineTo(x.at(math.Max(ax.lo, math.Min(0, ax.hi))), box.y1)
	p.end()
	s.str(`"/><g class="dlc-xaxis" text-anchor="middle"`)
	s.attr("fill", colorMuted)
	s.str(`>`)
	for _, v := range ax.ticks {
		s.str(`<text`)
		s.numAttr("x", x.at(v))
		s.numAttr("y", box.y1+15)
		s.str(`>`)
		s.esc(fm.label(v))
		s.str(`</text>`)
	}
	s.str(`</g>`)
	if !hasData {
		noData(&s, box)
	}
	clip := clipRect(&s, box)
	barH := math.Min(pitch*0.7, 16)
	x0 := x.at(math.Max(ax.lo, math.Min(0, ax.hi)))
	for i, v := range values {
		yc := box.y0 + (float64(i)+0.5)*pitch
		s.str(`<g class="dlc-hbar">`)
		s.str(`<text class="dlc-hbar-label" text-anchor="end"`)
		s.numAttr("x", box.x0-8)
		s.numAttr("y", yc+4)
		s.str(`>`)
		s.esc(truncate(labels[i], maxRunes))
		s.str(`</text>`)
		if !finite(v) {
			s.str(`<text class="dlc-hbar-value"`)
			s.numAttr("x", x0+4)
			s.numAttr("y", yc+4)
			s.attr("fill", colorMuted)
			s.str(`>–</text></g>`)
			continue
		}
		xv := x.at(v)
		s.str(`<rect`)
		s.numAttr("x", math.Min(x0, xv))
		s.numAttr("y", yc-barH/2)
		s.numAttr("width", math.Abs(xv-x0))
		s.numAttr("height", barH)
		s.attr("fill", col)
		s.attr("clip-path", "url(#"+clip+")")
		s.str(`><title>`)
		s.esc(labels[i] + ": " + compact(v))
		s.str(`</title></rect><text class="dlc-hbar-value"`)
		anchor, tx := "start", math.Min(math.Max(xv, x0), box.x1)+4
		if v < 0 {
			anchor, tx = "end", math.Max(math.Min(xv, x0), box.x0)-4
			if tx < box.x0+20 { // no room left of the bar: write it right of zero
				anchor, tx = "start", x0+4
			}
		}
		s.numAttr("x", tx)
		s.numAttr("y", yc+4)
		s.attr("text-anchor", anchor)
		s.str(`>`)
		s.esc(compact(v))
		s.str(`</text></g>`)
	}
	s.str(`</svg>`)
	return s.flush(w)
}

// truncate shortens s to n runes, ending with an ellipsis when cut.
func truncate(s string, n int) string {
	if n < 2 {
		n = 2
	}
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}
