package chart

import (
	"fmt"
	"io"
	"math"

	"github.com/dewline/dewline/psychro"
)

// Diagonal line families of the psychrometric chart (PsyChart.Lines).
const (
	LinesEnthalpy = "enthalpy" // constant enthalpy, every 10 kJ/kg (5 Btu/lb in IP)
	LinesWetBulb  = "wetbulb"  // constant thermodynamic wet bulb, at the dry-bulb tick step
)

// PsyPoint is one moist-air state: dry bulb in °C and humidity ratio in kg
// of water per kg of dry air. Label names it in the marker's tooltip.
type PsyPoint struct {
	TdbC, W float64
	Label   string
}

// PsyPath is the process of one hour: entering air, coil leaving air and
// supply air, in that order. The kind of each state follows its position:
// the first is entering, the last of three or more is supply, the others
// are coil leaving (a path of two is entering and leaving). Points with a
// missing value are left out.
type PsyPath struct {
	Points    []PsyPoint
	Class     string // extra CSS class names
	Title     string // tooltip of the path when drawn in full, e.g. the hour
	Highlight bool   // draw in full even when there are more paths than PsyChart.MaxMarked
}

// PsyTarget is the humidity target: a maximum dew point (a horizontal line)
// and/or a maximum relative humidity (a curve, with a mark at the space
// temperature). NaN, or 0 for MaxRH, leaves a part out.
type PsyTarget struct {
	MaxDewPointC float64 // °C; NaN: none
	MaxRH        float64 // fraction 0..1; 0 or NaN: none
	SpaceTempC   float64 // °C where MaxRH applies; NaN: curve only
	Label        string  // legend text, e.g. the target's name
}

// PsyChart is a psychrometric chart: dry bulb on x, humidity ratio on y
// (right axis), the saturation curve and relative-humidity curves at the
// chart's pressure, enthalpy or wet-bulb lines, a humidity target and the
// hours' processes. All inputs are SI; IP changes only labels and units on
// the axes (°F, grains per lb), not positions.
type PsyChart struct {
	PressurePa   float64 // barometric pressure; 0: standard atmosphere at sea level
	IP           bool    // label in °F, grains/lb and Btu/lb instead of °C, g/kg and kJ/kg
	TMinC, TMaxC float64 // dry-bulb range; both 0: 0..45 °C
	WMax         float64 // top of the humidity-ratio axis, kg/kg; 0: 0.030
	Lines        string  // LinesEnthalpy (default) or LinesWetBulb
	Paths        []PsyPath
	Target       *PsyTarget
	Title        string
	Width        int // view box; 0: 760 x 540
	Height       int
	MaxMarked    int // paths drawn with individual markers and data attributes; 0: all up to 24 paths, else 16
}

const (
	psyDefaultW    = 760
	psyDefaultH    = 540
	psyMaxMarked   = 16
	psyMarkAllUpTo = 24
	psyDefaultTLo  = 0.0
	psyDefaultTHi  = 45.0
	psyDefaultW0   = 0.030
)

// psyGeom is a chart with defaults applied and its layout.
type psyGeom struct {
	c         PsyChart
	p         float64
	tLo, tHi  float64
	wMax      float64
	w, h      float64
	box       plotBox
	items     []legendItem
	legX      []float64
	legRow    []int
	legY      float64
	tSatTop   float64 // where saturation reaches wMax (tHi when it does not)
	hasTarget bool
}

// geom validates the chart and lays it out.
func (c PsyChart) geom() (*psyGeom, error) {
	g := &psyGeom{c: c, p: c.PressurePa, tLo: c.TMinC, tHi: c.TMaxC, wMax: c.WMax}
	if g.p == 0 {
		g.p = psychro.StandardPressurePa
	}
	if g.tLo == 0 && g.tHi == 0 {
		g.tLo, g.tHi = psyDefaultTLo, psyDefaultTHi
	}
	if g.wMax == 0 {
		g.wMax = psyDefaultW0
	}
	name := c.Title
	switch {
	case !finite(g.p) || g.p < 1000 || g.p > 2e5:
		return nil, fmt.Errorf("psychrometric chart %q: pressure %g Pa is outside 1 000..200 000 Pa; give PressurePa in Pa (0 for sea level)", name, c.PressurePa)
	case !finite(g.tLo) || !finite(g.tHi) || g.tLo >= g.tHi:
		return nil, fmt.Errorf("psychrometric chart %q: dry-bulb range %g..%g °C is empty; set TMinC below TMaxC", name, c.TMinC, c.TMaxC)
	case g.tLo < psychro.MinTempC || g.tHi > psychro.MaxTempC:
		return nil, fmt.Errorf("psychrometric chart %q: dry-bulb range %g..%g °C leaves %g..%g °C", name, g.tLo, g.tHi, psychro.MinTempC, psychro.MaxTempC)
	case !finite(g.wMax) || g.wMax <= 0 || g.wMax > 1:
		return nil, fmt.Errorf("psychrometric chart %q: WMax %g is outside 0..1 kg/kg; give it as a humidity ratio (0.03 is 30 g/kg)", name, c.WMax)
	case c.Lines != "" && c.Lines != LinesEnthalpy && c.Lines != LinesWetBulb:
		return nil, fmt.Errorf("psychrometric chart %q: Lines %q is unknown; use %q or %q", name, c.Lines, LinesEnthalpy, LinesWetBulb)
	case c.MaxMarked < 0:
		return nil, fmt.Errorf("psychrometric chart %q: MaxMarked %d is negative; use 0 for the default", name, c.MaxMarked)
	}
	ws0, err := psychro.SatHumRatio(g.tLo, g.p)
	if err != nil {
		return nil, fmt.Errorf("psychrometric chart %q: saturation at %g °C: %w", name, g.tLo, err)
	}
	if ws0 >= g.wMax {
		return nil, fmt.Errorf("psychrometric chart %q: WMax %g kg/kg is below saturation at TMinC (%g kg/kg); raise WMax or lower TMinC", name, g.wMax, ws0)
	}
	g.tSatTop = g.tHi
	if ws, err := psychro.SatHumRatio(g.tHi, g.p); err != nil || ws > g.wMax {
		g.tSatTop = bisect(g.tLo, g.tHi, func(t float64) bool { return g.ws(t) <= g.wMax })
	}
	g.w, g.h = float64(c.Width), float64(c.Height)
	if c.Width == 0 {
		g.w = psyDefaultW
	}
	if c.Height == 0 {
		g.h = psyDefaultH
	}
	if g.w < 200 || g.h < 160 || g.w > maxSize || g.h > maxSize {
		return nil, fmt.Errorf("psychrometric chart %q: size %dx%d is outside 200x160..%dx%d; set Width and Height (0 for 760x540)", name, c.Width, c.Height, maxSize, maxSize)
	}
	w, h := g.w, g.h
	if t := c.Target; t != nil {
		g.hasTarget = finite(t.MaxDewPointC) || (finite(t.MaxRH) && t.MaxRH > 0)
		if t.MaxRH < 0 || t.MaxRH > 1 {
			return nil, fmt.Errorf("psychrometric chart %q: target MaxRH %g is outside 0..1; give RH as a fraction (0.6 for 60 %%)", name, t.MaxRH)
		}
	}
	g.items = g.legendItems()
	top := 30.0
	g.legX, g.legRow, _ = legendLayout(g.items, 8, w-16)
	rows := 0
	for _, r := range g.legRow {
		rows = max(rows, r+1)
	}
	g.legY = top + 8
	top += float64(rows)*legendRow + 10
	g.box = plotBox{x0: 14, y0: top, x1: w - 62, y1: h - 40}
	if g.box.w() < 40 || g.box.h() < 40 {
		return nil, fmt.Errorf("psychrometric chart %q: size %gx%g leaves no room for the plot; raise Width and Height", name, w, h)
	}
	return g, nil
}

// bisect returns the boundary between a lower part of [lo, hi] where ok is
// true and an upper part where it is false (ok must be monotonic), within
// 1e-9 K and on the side where ok holds.
func bisect(lo, hi float64, ok func(float64) bool) float64 {
	for i := 0; i < 80 && hi-lo > 1e-9; i++ {
		m := 0.5 * (lo + hi)
		if ok(m) {
			lo = m
		} else {
			hi = m
		}
	}
	return lo
}

// ws is the saturation humidity ratio at t (psychro.SatHumRatio); above
// boiling it returns +Inf, which every caller treats as off the chart.
func (g *psyGeom) ws(tC float64) float64 {
	w, err := psychro.SatHumRatio(tC, g.p)
	if err != nil {
		return math.Inf(1)
	}
	return w
}

// Pos returns the position in the SVG's user space where Render draws the
// state (tdbC, w). It is NaN when the chart's settings are invalid (Render
// then returns the error).
func (c PsyChart) Pos(tdbC, w float64) (x, y float64) {
	g, err := c.geom()
	if err != nil {
		return math.NaN(), math.NaN()
	}
	return g.pos(tdbC, w)
}

func (g *psyGeom) pos(tC, w float64) (float64, float64) {
	return g.box.x0 + (tC-g.tLo)/(g.tHi-g.tLo)*g.box.w(), g.box.y1 - w/g.wMax*g.box.h()
}

// Units of the chart's labels.
func (g *psyGeom) tUnit() string {
	if g.c.IP {
		return "°F"
	}
	return "°C"
}

func (g *psyGeom) toT(tC float64) float64 { // °C to the label unit
	if g.c.IP {
		return psychro.CToF(tC)
	}
	return tC
}

func (g *psyGeom) fromT(v float64) float64 {
	if g.c.IP {
		return psychro.FToC(v)
	}
	return v
}

func (g *psyGeom) toW(w float64) float64 { // kg/kg to g/kg or grains/lb
	if g.c.IP {
		return psychro.HumRatioToGrainsPerLb(w)
	}
	return w * 1000
}

func (g *psyGeom) fromW(v float64) float64 {
	if g.c.IP {
		return psychro.GrainsPerLbToHumRatio(v)
	}
	return v / 1000
}

func (g *psyGeom) wUnit() string {
	if g.c.IP {
		return "grains/lb dry air"
	}
	return "g/kg dry air"
}

// wShort is the humidity-ratio unit for tooltips.
func (g *psyGeom) wShort() string {
	if g.c.IP {
		return "gr/lb"
	}
	return "g/kg"
}

func (g *psyGeom) hUnit() string {
	if g.c.IP {
		return "Btu/lb dry air"
	}
	return "kJ/kg dry air"
}

// enthalpy returns h at (tC, w) in the label unit: psychro.Enthalpy (kJ/kg,
// datum 0 °C) or psychro.EnthalpyIP (Btu/lb, datum 0 °F dry air and 32 °F
// water); the two data differ, so IP lines are not converted SI lines.
func (g *psyGeom) enthalpy(tC, w float64) float64 {
	if g.c.IP {
		return psychro.EnthalpyIP(psychro.CToF(tC), w)
	}
	h, err := psychro.Enthalpy(tC, math.Max(w, 0))
	if err != nil {
		return math.NaN()
	}
	if w < 0 { // extend linearly for the zero crossing search
		h1, _ := psychro.Enthalpy(tC, 1)
		h += w * (h1 - h)
	}
	return h
}

// wOfH is the humidity ratio with enthalpy h at tC; enthalpy is linear in W.
func (g *psyGeom) wOfH(h, tC float64) float64 {
	h0, h1 := g.enthalpy(tC, 0), g.enthalpy(tC, 1)
	return (h - h0) / (h1 - h0)
}

// wOfWetBulb is W at tC for wet bulb twbC (psychro, eq. 33/35, the IP form
// on IP charts); -1 where no moist air has that wet bulb.
func (g *psyGeom) wOfWetBulb(tC, twbC float64) float64 {
	var w float64
	var err error
	if g.c.IP {
		w, err = psychro.HumRatioFromWetBulbIP(psychro.CToF(tC), psychro.CToF(twbC), psychro.PaToPsi(g.p))
	} else {
		w, err = psychro.HumRatioFromWetBulb(tC, twbC, g.p)
	}
	if err != nil {
		return -1
	}
	return w
}

func (g *psyGeom) legendItems() []legendItem {
	items := []legendItem{
		{name: "Saturation", color: colorSat, kind: 'l', class: "dlc-psy-key-sat"},
		{name: "Relative humidity 10-90 %", color: colorPsyLine, kind: 'l', class: "dlc-psy-key-rh"},
	}
	if g.c.Lines == LinesWetBulb {
		items = append(items, legendItem{name: "Wet bulb, " + g.tUnit(), color: colorPsyLine, kind: 'd', class: "dlc-psy-key-wb"})
	} else {
		items = append(items, legendItem{name: "Enthalpy, " + g.hUnit(), color: colorPsyLine, kind: 'd', class: "dlc-psy-key-h"})
	}
	if g.hasTarget {
		n := "Humidity target"
		if g.c.Target.Label != "" {
			n += ": " + g.c.Target.Label
		}
		items = append(items, legendItem{name: n, color: colorTarget, kind: 'd', class: "dlc-psy-key-target"})
	}
	if len(g.c.Paths) > 0 {
		items = append(items,
			legendItem{name: "Entering", color: colorEntering, kind: 'c', class: "dlc-psy-key-entering"},
			legendItem{name: "Coil leaving", color: colorLeaving, kind: 's', class: "dlc-psy-key-leaving"},
			legendItem{name: "Supply", color: colorSupply, kind: 't', class: "dlc-psy-key-supply"})
	}
	return items
}

// Colours of the three process states; shapes differ as well.
const (
	colorEntering = ColorBlue
	colorLeaving  = ColorTeal
	colorSupply   = ColorOchre
	colorTrack    = "#6B7F94"
)

// state kinds by position in a path.
const (
	kindEntering = iota
	kindLeaving
	kindSupply
)

var kindNames = [...]string{"entering", "leaving", "supply"}

func kindAt(i, n int) int {
	switch {
	case i == 0:
		return kindEntering
	case i == n-1 && n >= 3:
		return kindSupply
	default:
		return kindLeaving
	}
}

// Render writes the chart as one SVG element.
func (c PsyChart) Render(w io.Writer) error {
	g, err := c.geom()
	if err != nil {
		return err
	}
	var s svgBuf
	s.b = make([]byte, 0, 24<<10+len(c.Paths)*40)
	g.render(&s)
	return s.flush(w)
}
