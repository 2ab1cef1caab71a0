package chart

import (
	"fmt"
	"math"
	"strings"
	"time"
	"unicode/utf8"
)

// Series is one named row of values. NaN (or ±Inf) marks a missing value:
// a gap in a line, nothing in a stack.
type Series struct {
	Name   string    // legend text (escaped on output)
	Class  string    // extra CSS class names for the series' element
	Color  string    // CSS colour; empty picks the next palette colour
	Values []float64 // one value per time
}

// Band is a shaded range between Lo and Hi, for example an uncertainty
// band around a line. A time where either bound is missing leaves a gap.
type Band struct {
	Name   string
	Lo, Hi []float64
	Color  string
}

// Frame holds what every time or value chart shares.
type Frame struct {
	Title  string         // visible heading and accessible name
	YLabel string         // value axis label with its unit, e.g. "Energy, kWh"
	Width  int            // view-box width in user units (0: 720)
	Height int            // view-box height (0: 260; HBars: from the rows)
	Zone   *time.Location // time axis labels in this zone (nil: UTC)
	YMin   *float64       // fixed value axis ends; nil: from the data
	YMax   *float64
}

// Layout constants in user units (the view box scales to the page width).
const (
	defaultWidth  = 720
	defaultHeight = 260
	fontSize      = 11
	titleSize     = 13
	charWidth     = 6.1 // average advance of a sans-serif character at fontSize
	legendRow     = 16
	legendSwatch  = 14
	minSize       = 40
	maxSize       = 10000
	fontFamily    = "system-ui, -apple-system, sans-serif"
)

// textWidth estimates the width of s at fontSize.
func textWidth(s string) float64 { return float64(utf8.RuneCountInString(s)) * charWidth }

// size returns the frame's view-box size with defaults, or an error for
// sizes that cannot make a chart.
func (f Frame) size(defW, defH int) (float64, float64, error) {
	w, h := f.Width, f.Height
	if w == 0 {
		w = defW
	}
	if h == 0 {
		h = defH
	}
	if w < minSize || h < minSize || w > maxSize || h > maxSize {
		return 0, 0, fmt.Errorf("chart %q: size %dx%d is outside %d..%d; set Frame.Width and Frame.Height (or 0 for the default)", f.Title, f.Width, f.Height, minSize, maxSize)
	}
	return float64(w), float64(h), nil
}

func (f Frame) zone() *time.Location {
	if f.Zone == nil {
		return time.UTC
	}
	return f.Zone
}

// legendItem is one entry of a legend; kind chooses the swatch.
type legendItem struct {
	name, color, class string
	kind               byte // 'r' filled box, 'l' line, 'b' band (translucent box), 'd' dashed line, 'c' 's' 't' state markers
}

// legendLayout places the items in rows across width w starting at x0;
// it returns each item's position and the number of rows.
func legendLayout(items []legendItem, x0, w float64) (xs []float64, rows []int, nRows int) {
	x, row := x0, 0
	for _, it := range items {
		iw := legendSwatch + 5 + textWidth(it.name) + 14
		if x > x0 && x+iw > x0+w {
			row++
			x = x0
		}
		xs = append(xs, x)
		rows = append(rows, row)
		x += iw
	}
	if len(items) > 0 {
		nRows = row + 1
	}
	return xs, rows, nRows
}

// drawLegend writes the legend as a group of swatches and labels.
func drawLegend(s *svgBuf, items []legendItem, xs []float64, rows []int, y0 float64) {
	if len(items) == 0 {
		return
	}
	s.str(`<g class="dlc-legend">`)
	for i, it := range items {
		x, y := xs[i], y0+float64(rows[i])*legendRow
		s.str(`<g`)
		s.attr("class", classes("dlc-legend-item", it.class))
		s.str(`>`)
		switch it.kind {
		case 'c', 's', 't':
			markerShape(s, strings.IndexByte("cst", it.kind), x+legendSwatch/2, y-4, 4)
			s.attr("fill", it.color)
			s.str(`/>`)
		case 'l', 'd':
			s.str(`<path d="M`)
			s.num(x)
			s.str(" ")
			s.num(y - 4)
			s.str(`h`)
			s.num(legendSwatch)
			s.str(`"`)
			s.attr("stroke", it.color)
			s.str(` stroke-width="2" fill="none"`)
			if it.kind == 'd' {
				s.str(` stroke-dasharray="4 3"`)
			}
			s.str(`/>`)
		default:
			s.str(`<rect`)
			s.numAttr("x", x)
			s.numAttr("y", y-9)
			s.numAttr("width", legendSwatch)
			s.str(` height="10" rx="2"`)
			s.attr("fill", it.color)
			if it.kind == 'b' {
				s.str(` fill-opacity="0.3"`)
			}
			s.str(`/>`)
		}
		s.str(`<text`)
		s.numAttr("x", x+legendSwatch+5)
		s.numAttr("y", y)
		s.str(`>`)
		s.esc(it.name)
		s.str(`</text></g>`)
	}
	s.str(`</g>`)
}

// openSVG writes the root element with its view box, accessible name and
// <title>. kind is added to the root's classes (dlc dlc-<kind>).
func openSVG(s *svgBuf, kind string, w, h float64, title, label string) {
	s.str(`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 `)
	s.num(w)
	s.str(" ")
	s.num(h)
	s.str(`" width="100%" role="img"`)
	s.attr("class", "dlc dlc-"+kind)
	s.attr("aria-label", label)
	s.attr("font-family", fontFamily)
	s.str(` font-size="11"`)
	s.attr("fill", colorInk)
	s.str(`><title>`)
	if title == "" {
		title = label
	}
	s.esc(title)
	s.str(`</title>`)
}

// plotBox is the rectangle of the data area.
type plotBox struct{ x0, y0, x1, y1 float64 }

func (p plotBox) w() float64 { return p.x1 - p.x0 }
func (p plotBox) h() float64 { return p.y1 - p.y0 }

// clipRect writes a clip path for the plot box and returns its id (derived
// from the geometry, so equal ids always mean equal rectangles).
func clipRect(s *svgBuf, p plotBox) string {
	var g svgBuf
	g.num(p.x0)
	g.str(" ")
	g.num(p.y0)
	g.str(" ")
	g.num(p.w())
	g.str(" ")
	g.num(p.h())
	id := contentID("dlc-clip-", string(g.b))
	s.str(`<defs><clipPath`)
	s.attr("id", id)
	s.str(`><rect`)
	s.numAttr("x", p.x0)
	s.numAttr("y", p.y0)
	s.numAttr("width", p.w())
	s.numAttr("height", p.h())
	s.str(`/></clipPath></defs>`)
	return id
}

// xyChart is the shared frame of the time charts: title, legend, value axis
// on the left, time axis at the bottom.
type xyChart struct {
	f      Frame
	w, h   float64
	box    plotBox
	y      linear
	yAxis  axis
	yFmt   tickFormat
	t0, t1 time.Time
	x      linear // seconds since t0 -> user units
	items  []legendItem
	legX   []float64
	legRow []int
	legY   float64
}

// newXYChart lays out a time chart. lo and hi are the data range (NaN when
// there is no data); zero forces 0 into the value axis.
func newXYChart(f Frame, t0, t1 time.Time, lo, hi float64, zero bool, items []legendItem) (*xyChart, error) {
	w, h, err := f.size(defaultWidth, defaultHeight)
	if err != nil {
		return nil, err
	}
	c := &xyChart{f: f, w: w, h: h, t0: t0, t1: t1, items: items}
	top := 8.0
	if f.Title != "" {
		top += 18
	}
	c.legX, c.legRow, _ = legendLayout(items, 8, w-16)
	nRows := 0
	for _, r := range c.legRow {
		nRows = max(nRows, r+1)
	}
	c.legY = top + 10
	top += float64(nRows) * legendRow
	if f.YLabel != "" {
		top += 16
	} else {
		top += 8
	}
	bottom := h - 34
	if bottom-top < 20 {
		return nil, fmt.Errorf("chart %q: height %g leaves no room for the plot; raise Frame.Height", f.Title, h)
	}
	c.yAxis = niceAxis(lo, hi, max(2, int((bottom-top)/40)), zero, f.YMin, f.YMax)
	c.yFmt = newTickFormat(c.yAxis.ticks, c.yAxis.step)
	labelW := 0.0
	for _, t := range c.yAxis.ticks {
		labelW = math.Max(labelW, textWidth(c.yFmt.label(t)))
	}
	left := math.Min(math.Max(36, labelW+14), w*0.4)
	c.box = plotBox{x0: left, y0: top, x1: w - 14, y1: bottom}
	if c.box.w() < 20 {
		return nil, fmt.Errorf("chart %q: width %g leaves no room for the plot; raise Frame.Width", f.Title, w)
	}
	c.y = linear{c.yAxis.lo, c.yAxis.hi, c.box.y1, c.box.y0}
	span := t1.Sub(t0).Seconds()
	c.x = linear{0, span, c.box.x0, c.box.x1}
	return c, nil
}

// xt returns the x of an instant.
func (c *xyChart) xt(t time.Time) float64 { return c.x.at(t.Sub(c.t0).Seconds()) }

// head writes the root, title, legend, grid and axes.
// openData writes the chart's head with its accessible label (the title,
// what it draws, the series named, the span), the no-data notice when
// nothing is drawn, and opens the clipped group of the data.
func (c *xyChart) openData(s *svgBuf, title, kind, what string, nm []string, span string, hasData bool) {
	label := title
	if label != "" {
		label += ". "
	}
	label += what
	if l := names(nm); l != "" {
		label += " of " + l
	}
	if span != "" {
		label += ", " + span
	}
	c.head(s, kind, label)
	if !hasData {
		noData(s, c.box)
	}
	clip := clipRect(s, c.box)
	s.str(`<g class="dlc-data"`)
	s.attr("clip-path", "url(#"+clip+")")
	s.str(`>`)
}

func (c *xyChart) head(s *svgBuf, kind, label string) {
	openSVG(s, kind, c.w, c.h, c.f.Title, label)
	if c.f.Title != "" {
		s.str(`<text class="dlc-title" x="8" y="20" font-size="13" font-weight="600">`)
		s.esc(c.f.Title)
		s.str(`</text>`)
	}
	drawLegend(s, c.items, c.legX, c.legRow, c.legY)
	if c.f.YLabel != "" {
		s.str(`<text class="dlc-ylabel"`)
		s.numAttr("x", 8)
		s.numAttr("y", c.box.y0-7)
		s.attr("fill", colorMuted)
		s.str(`>`)
		s.esc(c.f.YLabel)
		s.str(`</text>`)
	}
	ticks := timeTicks(c.t0, c.t1, c.f.zone(), max(2, int(c.box.w()/70)))
	// Grid: one path for all lines.
	s.str(`<path class="dlc-grid" fill="none" stroke-width="1"`)
	s.attr("stroke", colorGrid)
	s.str(` d="`)
	p := newPath(s)
	for _, v := range c.yAxis.ticks {
		y := c.y.at(v)
		p.moveTo(c.box.x0, y)
		p.lineTo(c.box.x1, y)
	}
	for _, t := range ticks {
		x := c.xt(t.t)
		p.moveTo(x, c.box.y0)
		p.lineTo(x, c.box.y1)
	}
	p.end()
	s.str(`"/>`)
	// Axis lines: the bottom of the plot, and zero when it is inside.
	s.str(`<path class="dlc-axis" fill="none" stroke-width="1"`)
	s.attr("stroke", colorAxis)
	s.str(` d="`)
	p = newPath(s)
	p.moveTo(c.box.x0, c.box.y1)
	p.lineTo(c.box.x1, c.box.y1)
	if c.yAxis.lo < 0 && c.yAxis.hi > 0 {
		y0 := c.y.at(0)
		p.moveTo(c.box.x0, y0)
		p.lineTo(c.box.x1, y0)
	}
	p.end()
	s.str(`"/>`)
	// Value axis labels.
	s.str(`<g class="dlc-yaxis" text-anchor="end"`)
	s.attr("fill", colorMuted)
	s.str(`>`)
	for _, v := range c.yAxis.ticks {
		s.str(`<text`)
		s.numAttr("x", c.box.x0-6)
		s.numAttr("y", c.y.at(v)+4)
		s.str(`>`)
		s.esc(c.yFmt.label(v))
		s.str(`</text>`)
	}
	s.str(`</g>`)
	// Time axis labels.
	s.str(`<g class="dlc-xaxis" text-anchor="middle"`)
	s.attr("fill", colorMuted)
	s.str(`>`)
	for _, t := range ticks {
		x := c.xt(t.t)
		// Labels that would cross the edge of the view box are aligned to it.
		half := math.Max(textWidth(t.label), textWidth(t.second)) / 2
		anchor := ""
		switch {
		case x+half > c.w-2:
			anchor = "end"
		case x-half < 2:
			anchor = "start"
		}
		for i, text := range []string{t.label, t.second} {
			if text == "" {
				continue
			}
			s.str(`<text`)
			if i == 1 {
				s.str(` class="dlc-xaxis-date"`)
			}
			s.numAttr("x", x)
			s.numAttr("y", c.box.y1+14+13*float64(i))
			if anchor != "" {
				s.attr("text-anchor", anchor)
			}
			s.str(`>`)
			s.esc(text)
			s.str(`</text>`)
		}
	}
	s.str(`</g>`)
}

// noData writes a centred note when a chart has nothing to draw.
func noData(s *svgBuf, b plotBox) {
	s.str(`<text class="dlc-nodata" text-anchor="middle"`)
	s.numAttr("x", (b.x0+b.x1)/2)
	s.numAttr("y", (b.y0+b.y1)/2)
	s.attr("fill", colorMuted)
	s.str(`>No data</text>`)
}

// names lists series names for an accessible label.
func names(list []string) string {
	var out []string
	for _, n := range list {
		if n != "" {
			out = append(out, n)
		}
	}
	return strings.Join(out, ", ")
}

// spanLabel describes a time range in the chart's zone.
func spanLabel(t0, t1 time.Time, loc *time.Location) string {
	const layout = "2 Jan 2006 15:04"
	return t0.In(loc).Format(layout) + " to " + t1.In(loc).Format(layout) + " " + t1.In(loc).Format("MST")
}

// checkTimes validates a time column: non-empty is not required, but the
// instants must be strictly increasing.
func checkTimes(title string, times []time.Time) error {
	for i := 1; i < len(times); i++ {
		if !times[i].After(times[i-1]) {
			return fmt.Errorf("chart %q: times[%d] (%s) is not after times[%d] (%s); sort the hours and drop duplicates",
				title, i, times[i].UTC().Format(time.RFC3339), i-1, times[i-1].UTC().Format(time.RFC3339))
		}
	}
	return nil
}
