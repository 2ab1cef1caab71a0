package chart

import (
	"math"
	"strconv"

	"github.com/dewline/dewline/psychro"
)

// render writes the whole chart; g has been validated by geom.
func (g *psyGeom) render(s *svgBuf) {
	c := g.c
	pLabel := fixedString(g.p/1000, 3) + " kPa"
	if c.IP {
		pLabel = fixedString(psychro.PaToPsi(g.p), 3) + " psia"
	}
	label := c.Title
	if label != "" {
		label += ". "
	}
	label += "Psychrometric chart at " + pLabel + ", dry bulb " + fixedString(g.toT(g.tLo), 1) + " to " +
		fixedString(g.toT(g.tHi), 1) + " " + g.tUnit()
	if n := len(c.Paths); n > 0 {
		label += ", " + strconv.Itoa(n) + " processes"
	}
	openSVG(s, "psy", g.w, g.h, c.Title, label)
	if c.Title != "" {
		s.str(`<text class="dlc-title" x="8" y="20" font-size="13" font-weight="600">`)
		s.esc(c.Title)
		s.str(`</text>`)
	}
	s.str(`<text class="dlc-psy-pressure" text-anchor="end"`)
	s.numAttr("x", g.w-8)
	s.str(` y="20"`)
	s.attr("fill", colorMuted)
	s.str(`>`)
	s.esc("Barometric pressure " + pLabel)
	s.str(`</text>`)
	drawLegend(s, g.items, g.legX, g.legRow, g.legY)
	clip := clipRect(s, g.box)
	xt := g.xTicks()
	g.grid(s, xt)
	g.rhCurves(s)
	if c.Lines == LinesWetBulb {
		g.wetBulbLines(s, xt)
	} else {
		var avoid []box
		for _, l := range g.satLabels(xt) {
			avoid = append(avoid, l.box)
		}
		g.enthalpyLines(s, avoid)
	}
	g.saturation(s, xt)
	g.axes(s, xt)
	g.target(s)
	g.paths(s, clip)
	s.str(`</svg>`)
}

// xTicks returns the dry-bulb ticks in the label unit.
func (g *psyGeom) xTicks() axis {
	lo, hi := g.toT(g.tLo), g.toT(g.tHi)
	f0, f1 := lo, hi
	return niceAxis(lo, hi, max(2, int(g.box.w()/80)), false, &f0, &f1)
}

func (g *psyGeom) wTicks() axis {
	lo, hi := 0.0, g.toW(g.wMax)
	return niceAxis(lo, hi, max(2, int(g.box.h()/40)), false, &lo, &hi)
}

// satRange returns the dry-bulb interval where f(t), increasing in t, lies
// at or below wMax, from tLo; ok is false when it is above wMax already at tLo.
func (g *psyGeom) below(f func(float64) float64) (float64, bool) {
	if !(f(g.tLo) <= g.wMax) {
		return 0, false
	}
	if f(g.tHi) <= g.wMax {
		return g.tHi, true
	}
	return bisect(g.tLo, g.tHi, func(t float64) bool { return f(t) <= g.wMax }), true
}

// curveTolPx is how far (user units) a drawn curve may depart from the
// true one between its vertices.
const curveTolPx = 0.08

// sample draws f over [a, b] as a polyline that departs from the curve by
// at most curveTolPx between vertices: the interval is cut into pieces of
// at most coarse °C, and a piece is halved while its middle lies farther
// than the tolerance from its chord. The curves are smooth (saturation,
// RH, enthalpy and wet-bulb lines), so checking the middle is enough.
func (g *psyGeom) sample(p *pathData, a, b, coarse float64, f func(float64) float64) {
	x, y := g.pos(a, f(a))
	p.moveTo(x, y)
	n := max(1, int(math.Ceil((b-a)/coarse-1e-9)))
	t0, x0, y0 := a, x, y
	for i := 1; i <= n; i++ {
		t1 := a + (b-a)*float64(i)/float64(n)
		x1, y1 := g.pos(t1, f(t1))
		g.refine(p, t0, x0, y0, t1, x1, y1, f, 0)
		t0, x0, y0 = t1, x1, y1
	}
}

func (g *psyGeom) refine(p *pathData, t0, x0, y0, t1, x1, y1 float64, f func(float64) float64, depth int) {
	tm := 0.5 * (t0 + t1)
	xm, ym := g.pos(tm, f(tm))
	if depth < 10 && math.Abs(ym-0.5*(y0+y1)) > curveTolPx {
		g.refine(p, t0, x0, y0, tm, xm, ym, f, depth+1)
		g.refine(p, tm, xm, ym, t1, x1, y1, f, depth+1)
		return
	}
	p.lineTo(x1, y1)
}

// grid draws vertical dry-bulb lines up to the saturation curve and
// horizontal humidity-ratio lines from it (that is, from the dew point of
// each line's humidity ratio) to the right edge.
func (g *psyGeom) grid(s *svgBuf, xt axis) {
	s.str(`<path class="dlc-grid" fill="none" stroke-width="1"`)
	s.attr("stroke", colorGrid)
	s.str(` d="`)
	p := newPath(s)
	for _, v := range xt.ticks {
		t := g.fromT(v)
		if t <= g.tLo+1e-9 || t >= g.tHi-1e-9 {
			continue
		}
		x, y0 := g.pos(t, 0)
		_, y1 := g.pos(t, math.Min(g.ws(t), g.wMax))
		p.moveTo(x, y0)
		p.lineTo(x, y1)
	}
	for _, v := range g.wTicks().ticks {
		w := g.fromW(v)
		if w <= 0 || w >= g.wMax {
			continue
		}
		t0 := g.tLo
		if td, err := psychro.DewPointFromHumRatio(w, g.p); err == nil {
			t0 = math.Max(t0, td)
		}
		if t0 >= g.tHi {
			continue
		}
		x0, y := g.pos(t0, w)
		x1, _ := g.pos(g.tHi, w)
		p.moveTo(x0, y)
		p.lineTo(x1, y)
	}
	p.end()
	s.str(`"/>`)
}

// rhFunc returns W(t) at relative humidity rh (psychro.HumRatioFromRH);
// +Inf where the state cannot exist (boiling).
func (g *psyGeom) rhFunc(rh float64) func(float64) float64 {
	return func(t float64) float64 {
		w, err := psychro.HumRatioFromRH(t, rh, g.p)
		if err != nil {
			return math.Inf(1)
		}
		return w
	}
}

// rhCurve draws one constant-RH curve and returns its end.
func (g *psyGeom) rhCurve(s *svgBuf, rh float64, class, stroke, width, dash string) (float64, bool) {
	f := g.rhFunc(rh)
	end, ok := g.below(f)
	if !ok || end <= g.tLo {
		return 0, false
	}
	s.str(`<path`)
	s.attr("class", class)
	s.str(` data-rh="`)
	s.fixed(rh*100, 1)
	s.str(`" fill="none"`)
	s.attr("stroke", stroke)
	s.attr("stroke-width", width)
	if dash != "" {
		s.attr("stroke-dasharray", dash)
	}
	s.str(` d="`)
	p := newPath(s)
	g.sample(p, g.tLo, end, 5, f)
	p.end()
	s.str(`"/>`)
	return end, true
}

// halo gives labels on lines a white outline behind the glyphs so that they
// stay legible; set on a group, it is inherited by its texts.
const halo = ` stroke="#fff" stroke-width="3" stroke-linejoin="round" paint-order="stroke"`

// plainText opens a <text> at (x, y).
func plainText(s *svgBuf, x, y float64) {
	s.str(`<text`)
	s.numAttr("x", x)
	s.numAttr("y", y)
}

// haloText opens a <text> with its own halo.
func haloText(s *svgBuf, class string, x, y float64, anchor string) {
	s.str(`<text`)
	s.attr("class", class)
	s.numAttr("x", x)
	s.numAttr("y", y)
	if anchor != "" {
		s.attr("text-anchor", anchor)
	}
	s.str(` stroke="#fff" stroke-width="3" stroke-linejoin="round" paint-order="stroke"`)
}

func (g *psyGeom) rhCurves(s *svgBuf) {
	s.str(`<g class="dlc-psy-rhs">`)
	type lab struct{ rh, end float64 }
	var labels []lab
	for k := 1; k <= 9; k++ {
		rh := float64(k) / 10
		if end, ok := g.rhCurve(s, rh, "dlc-psy-rh", colorPsyLine, "0.8", ""); ok {
			labels = append(labels, lab{rh: rh, end: end})
		}
	}
	s.str(`</g><g class="dlc-psy-rh-labels" font-size="9" text-anchor="middle"` + halo)
	s.attr("fill", colorMuted)
	s.str(`>`)
	for _, l := range labels {
		f := g.rhFunc(l.rh)
		// Along the upper part of the curve, where the curves are apart.
		t := g.tLo + 0.82*(l.end-g.tLo)
		x, y := g.pos(t, f(t))
		xa, ya := g.pos(t-0.5, f(t-0.5))
		xb, yb := g.pos(t+0.5, f(t+0.5))
		ang := math.Atan2(yb-ya, xb-xa) * 180 / math.Pi
		plainText(s, x, y-2)
		s.str(` transform="rotate(`)
		s.fixed(ang, 1)
		s.str(" ")
		s.num(x)
		s.str(" ")
		s.num(y)
		s.str(`)">`)
		s.str(strconv.Itoa(int(math.Round(l.rh * 100))))
		s.str(`%</text>`)
	}
	s.str(`</g>`)
}

// diagSegment is the part of a falling line W = f(t) inside the chart and
// under saturation: from its start (on the saturation curve, the top edge
// or the left edge) to where it reaches W = 0 or the right edge.
type diagSegment struct {
	a, b  float64 // dry-bulb ends
	start byte    // 's' on the saturation curve, 't' top edge, 'l' left edge
}

func (g *psyGeom) segment(f func(float64) float64, from float64) (diagSegment, bool) {
	a := math.Max(g.tLo, from)
	if a >= g.tHi {
		return diagSegment{}, false
	}
	seg := diagSegment{start: 'l'}
	if from > g.tLo {
		seg.start = 's' // a wet-bulb line starts at saturation at its own temperature
	}
	// Start: the later of the saturation crossing and the top crossing.
	if f(a) > g.ws(a) {
		if f(g.tHi) > g.ws(g.tHi) {
			return diagSegment{}, false
		}
		a = bisect(a, g.tHi, func(t float64) bool { return f(t) > g.ws(t) })
		seg.start = 's'
	}
	if f(a) > g.wMax {
		if f(g.tHi) > g.wMax {
			return diagSegment{}, false
		}
		a = bisect(a, g.tHi, func(t float64) bool { return f(t) > g.wMax })
		seg.start = 't'
	}
	b := g.tHi
	if f(b) < 0 {
		if f(a) < 0 {
			return diagSegment{}, false
		}
		b = bisect(a, g.tHi, func(t float64) bool { return f(t) >= 0 })
	}
	if b-a < 1e-6 {
		return diagSegment{}, false
	}
	seg.a, seg.b = a, b
	return seg, true
}

// enthalpyLines draws constant-enthalpy lines (psychro.Enthalpy, or
// psychro.EnthalpyIP on IP charts) every 10 kJ/kg or 5 Btu/lb, labelled
// beyond the saturation curve.
func (g *psyGeom) enthalpyLines(s *svgBuf, avoid []box) {
	step := 10.0
	if g.c.IP {
		step = 5
	}
	hLo := g.enthalpy(g.tLo, 0)
	hHi := g.enthalpy(g.tHi, g.wMax)
	g.diagLines(s, "dlc-psy-h", "data-h", step, math.Ceil(hLo/step)*step, hHi, avoid, func(h float64) (func(float64) float64, float64) {
		return func(t float64) float64 { return g.wOfH(h, t) }, g.tLo
	})
}

// wetBulbLines draws constant wet-bulb lines at the dry-bulb tick step
// (psychro.HumRatioFromWetBulb, or its IP form on IP charts); they start on
// the saturation curve at their own temperature, whose label there serves both.
func (g *psyGeom) wetBulbLines(s *svgBuf, xt axis) {
	g.diagLines(s, "dlc-psy-wb", "data-twb", xt.step, math.Ceil(g.toT(g.tLo)/xt.step)*xt.step, g.toT(g.tSatTop), nil, func(v float64) (func(float64) float64, float64) {
		twb := g.fromT(v)
		return func(t float64) float64 { return g.wOfWetBulb(t, twb) }, twb
	})
}

// diagLines draws a family of falling lines, one per value from v0 to v1.
func (g *psyGeom) diagLines(s *svgBuf, class, dataAttr string, step, v0, v1 float64, avoid []box, line func(v float64) (func(float64) float64, float64)) {
	type lab struct{ v, x, y float64 }
	var labels []lab
	s.str(`<g`)
	s.attr("class", class+"s")
	s.str(` fill="none" stroke-width="0.8" stroke-dasharray="5 3"`)
	s.attr("stroke", colorPsyLine)
	s.str(`>`)
	dec := decimalsFor(step)
	for k := 0; k < maxTicks*2; k++ {
		v := v0 + float64(k)*step
		if v > v1+1e-9 {
			break
		}
		f, from := line(v)
		seg, ok := g.segment(f, from)
		if !ok {
			continue
		}
		s.str(`<path`)
		s.attr("class", class)
		s.str(" " + dataAttr + `="`)
		s.fixed(v, dec)
		s.str(`" d="`)
		p := newPath(s)
		g.sample(p, seg.a, seg.b, 10, func(t float64) float64 { return math.Max(0, f(t)) })
		p.end()
		s.str(`"/>`)
		if dataAttr == "data-h" {
			if l, ok := g.diagLabel(seg, f, avoid); ok {
				labels = append(labels, lab{v: v, x: l[0], y: l[1]})
			}
		}
	}
	s.str(`</g>`)
	if dataAttr == "data-twb" {
		return // the saturation labels name the wet bulbs
	}
	s.str(`<g class="dlc-psy-h-labels" font-size="9" text-anchor="middle"` + halo)
	s.attr("fill", colorMuted)
	s.str(`>`)
	for _, l := range labels {
		plainText(s, l.x, l.y)
		s.str(`>`)
		s.fixed(l.v, dec)
		s.str(`</text>`)
	}
	s.str(`</g>`)
}

// saturation draws the saturation curve (psychro.SatHumRatio at the chart's
// pressure) from the left edge to the top or right edge, with its
// temperature at each dry-bulb tick: the dew point of that humidity ratio.
func (g *psyGeom) saturation(s *svgBuf, xt axis) {
	s.str(`<path class="dlc-psy-sat" fill="none" stroke-width="2"`)
	s.attr("stroke", colorSat)
	s.str(` d="`)
	p := newPath(s)
	g.sample(p, g.tLo, g.tSatTop, 5, g.ws)
	p.end()
	s.str(`"/><g class="dlc-psy-sat-labels" font-size="9" text-anchor="end"` + halo)
	s.attr("fill", colorSat)
	s.str(`>`)
	for _, l := range g.satLabels(xt) {
		plainText(s, l.x, l.y)
		s.str(`>`)
		s.esc(l.text)
		s.str(`</text>`)
	}
	s.str(`</g>`)
}

// box is a label's extent, for keeping labels apart.
type box struct{ x0, y0, x1, y1 float64 }

func (b box) overlaps(o box) bool {
	const pad = 2
	return b.x0 < o.x1+pad && o.x0 < b.x1+pad && b.y0 < o.y1+pad && o.y0 < b.y1+pad
}

type satLabel struct {
	x, y float64 // text anchor (end) and baseline
	text string
	box  box
}

// satLabels places the saturation temperatures at the dry-bulb ticks, just
// outside the curve (the left edge has no room).
func (g *psyGeom) satLabels(xt axis) []satLabel {
	var out []satLabel
	dec := decimalsFor(xt.step)
	for _, v := range xt.ticks {
		t := g.fromT(v)
		if t <= g.tLo+1e-9 || t > g.tSatTop+1e-9 {
			continue
		}
		x, y := g.pos(t, g.ws(t))
		l := satLabel{x: x - 3, y: y - 2, text: fixedString(v, dec)}
		l.box = box{l.x - textWidth(l.text)*9/fontSize, l.y - 8, l.x, l.y}
		out = append(out, l)
	}
	return out
}

// diagLabel places the label of an enthalpy line: beyond its start on the
// saturation curve, along the line, clear of the saturation labels; or just
// under the top edge. Lines that enter from the left edge get none.
func (g *psyGeom) diagLabel(seg diagSegment, f func(float64) float64, avoid []box) ([2]float64, bool) {
	xa, ya := g.pos(seg.a, f(seg.a))
	switch seg.start {
	case 't':
		return [2]float64{xa + 10, ya + 12}, xa+20 < g.box.x1
	case 's':
	default:
		return [2]float64{}, false
	}
	xb, yb := g.pos(seg.a+0.5, f(seg.a+0.5))
	d := math.Hypot(xb-xa, yb-ya)
	if d == 0 {
		return [2]float64{}, false
	}
	ux, uy := (xa-xb)/d, (ya-yb)/d // up and left, away from the curve
	for _, off := range []float64{22, 32, 42} {
		x, y := xa+ux*off, ya+uy*off+3
		b := box{x - 9, y - 8, x + 9, y}
		if b.x0 < g.box.x0+2 || b.y0 < g.box.y0 || b.x1 > g.box.x1 {
			return [2]float64{}, false
		}
		clear := true
		for _, o := range avoid {
			if b.overlaps(o) {
				clear = false
				break
			}
		}
		if clear {
			return [2]float64{x, y}, true
		}
	}
	return [2]float64{}, false
}

// axes draws the bottom (dry bulb) and right (humidity ratio) axes.
func (g *psyGeom) axes(s *svgBuf, xt axis) {
	b := g.box
	s.str(`<path class="dlc-axis" fill="none" stroke-width="1"`)
	s.attr("stroke", colorAxis)
	s.str(` d="`)
	p := newPath(s)
	_, ySat := g.pos(g.tLo, g.ws(g.tLo))
	p.moveTo(b.x0, ySat)
	p.lineTo(b.x0, b.y1)
	p.lineTo(b.x1, b.y1)
	p.lineTo(b.x1, b.y0)
	if g.tSatTop < g.tHi {
		x, _ := g.pos(g.tSatTop, g.wMax)
		p.lineTo(x, b.y0)
	}
	for _, v := range xt.ticks {
		x, _ := g.pos(g.fromT(v), 0)
		p.moveTo(x, b.y1)
		p.lineTo(x, b.y1+4)
	}
	wt := g.wTicks()
	for _, v := range wt.ticks {
		_, y := g.pos(0, g.fromW(v))
		p.moveTo(b.x1, y)
		p.lineTo(b.x1+4, y)
	}
	p.end()
	s.str(`"/><g class="dlc-xaxis" text-anchor="middle"`)
	s.attr("fill", colorMuted)
	s.str(`>`)
	xf := newTickFormat(xt.ticks, xt.step)
	for _, v := range xt.ticks {
		x, _ := g.pos(g.fromT(v), 0)
		s.str(`<text`)
		s.numAttr("x", x)
		s.numAttr("y", b.y1+15)
		s.str(`>`)
		s.esc(xf.label(v))
		s.str(`</text>`)
	}
	s.str(`<text class="dlc-axis-title"`)
	s.numAttr("x", (b.x0+b.x1)/2)
	s.numAttr("y", b.y1+32)
	s.str(`>`)
	s.esc("Dry-bulb temperature, " + g.tUnit())
	s.str(`</text></g><g class="dlc-yaxis" text-anchor="start"`)
	s.attr("fill", colorMuted)
	s.str(`>`)
	wf := newTickFormat(wt.ticks, wt.step)
	for _, v := range wt.ticks {
		_, y := g.pos(0, g.fromW(v))
		s.str(`<text`)
		s.numAttr("x", b.x1+7)
		s.numAttr("y", y+4)
		s.str(`>`)
		s.esc(wf.label(v))
		s.str(`</text>`)
	}
	xT, yT := b.x1+48, (b.y0+b.y1)/2
	s.str(`<text class="dlc-axis-title" text-anchor="middle"`)
	s.numAttr("x", xT)
	s.numAttr("y", yT)
	s.str(` transform="rotate(90 `)
	s.num(xT)
	s.str(" ")
	s.num(yT)
	s.str(`)">`)
	s.esc("Humidity ratio, " + g.wUnit())
	s.str(`</text></g>`)
}

// target draws the humidity target: the dew-point limit as a horizontal
// line (psychro.HumRatioFromDewPoint) and the RH limit as a curve, marked
// at the space temperature.
func (g *psyGeom) target(s *svgBuf) {
	t := g.c.Target
	if !g.hasTarget {
		return
	}
	s.str(`<g class="dlc-psy-target"`)
	s.attr("stroke", colorTarget)
	s.str(` fill="none" stroke-width="1.6">`)
	if finite(t.MaxDewPointC) {
		if w, err := psychro.HumRatioFromDewPoint(t.MaxDewPointC, g.p); err == nil && w < g.wMax && t.MaxDewPointC < g.tHi {
			x0, y := g.pos(math.Max(g.tLo, t.MaxDewPointC), w)
			x1, _ := g.pos(g.tHi, w)
			s.str(`<path class="dlc-psy-target-dp" stroke-dasharray="7 4"`)
			s.str(` data-td="`)
			s.fixed(t.MaxDewPointC, 2)
			s.str(`" d="`)
			p := newPath(s)
			p.moveTo(x0, y)
			p.lineTo(x1, y)
			p.end()
			s.str(`"/>`)
			haloText(s, "dlc-psy-target-label", x1-4, y-5, "end")
			s.attr("fill", colorTarget)
			s.str(` font-size="10">`)
			s.esc("dew point " + fixedString(g.toT(t.MaxDewPointC), 1) + " " + g.tUnit())
			s.str(`</text>`)
		}
	}
	if finite(t.MaxRH) && t.MaxRH > 0 {
		g.rhCurve(s, t.MaxRH, "dlc-psy-target-rh", colorTarget, "1.6", "3 3")
		if finite(t.SpaceTempC) && t.SpaceTempC >= g.tLo && t.SpaceTempC <= g.tHi {
			if w, err := psychro.HumRatioFromRH(t.SpaceTempC, t.MaxRH, g.p); err == nil && w <= g.wMax {
				x, y := g.pos(t.SpaceTempC, w)
				s.str(`<circle class="dlc-psy-target-space" r="4.5" fill="#fff"`)
				s.numAttr("cx", x)
				s.numAttr("cy", y)
				s.str(`/>`)
				haloText(s, "dlc-psy-target-label", x+8, y+4, "start")
				s.attr("fill", colorTarget)
				s.str(` font-size="10">`)
				s.esc(fixedString(t.MaxRH*100, 0) + " % at " + fixedString(g.toT(t.SpaceTempC), 1) + " " + g.tUnit())
				s.str(`</text>`)
			}
		}
	}
	s.str(`</g>`)
}
