package dashboards

import (
	"bytes"
	"fmt"
	"html"
	"html/template"
	"io"
	"math"
	"strconv"
	"strings"
	"sync"

	"github.com/dewline/dewline/dashboards/chart"
	"github.com/dewline/dewline/metrics/compare"
)

// --- output ---

// Colours of the two periods: the light and the deep blue differ in
// lightness as well as in hue, and the charts also tell the periods apart
// by shape (circles and solid lines before, squares, dashes and hatching
// after).
const (
	colorBefore     = chart.ColorSky
	colorBeforeEdge = "#4F7FA8"
	colorAfter      = chart.ColorBlue
	colorAfterEdge  = "#22405E"
	colorCmpInk     = "#2B3037"
	colorCmpMuted   = "#5F6670"
	colorCmpGrid    = "#E3E7EB"
	colorCmpAxis    = "#9AA1A9"
)

// CompareCaution is printed with every comparison.
const CompareCaution = "These figures are estimates from trend data. A sequence that saves reheat can let space humidity rise: " +
	"check space dew point and relative humidity over the after period before keeping the change " +
	"(sustained relative humidity above about 60 % encourages mould growth; common practice, no source). " +
	"Spaces with humidity limits set by code or by the owner (laboratories, health care, museums) need the engineer of record's review, " +
	"and changes must follow local codes and licensed practice."

// compareUncertainty explains the ± figures.
var compareUncertainty = []string{
	"Measurement ± (95 %): the hourly 95 % half-widths of reheat, avoidable reheat and water removed, normalised like the values and added linearly within a period (a sensor's bias repeats from hour to hour); the change combines the two periods in quadrature. Cooling input and cost carry no hourly half-width and show none.",
	"Sampling ± (95 %): 1.96 × the standard error of the bin means, from the spread of the hourly values in each common bin. Consecutive hours are not independent, so bin sampling adds more uncertainty than this figure shows; a change smaller than the larger ± figure is not a measurable change.",
}

// CompareTable returns comparison c as a text table: a header and one
// row per unit, then the site total. Energies in kWh, water in the display
// unit.
func CompareTable(c *compare.Comparison, d Display) (header []string, rows [][]string) {
	header = []string{"air handler", "reheat before kWh", "after (normalised) kWh", "change", "± meas.", "± sampling",
		"avoidable reheat change", "effective EER before → after", "water change " + d.WaterUnit(), "common-bin hours before / after"}
	row := func(u *compare.BinCheck, label string) []string {
		if !u.Compared {
			return []string{label, fmtQty(float64(u.RawBefore.ReheatKWh)) + " (raw)", "not compared", "–", "–", "–", "–", "–", "–",
				fmtPct(float64(u.HoursBefore.Covered)) + " / " + fmtPct(float64(u.HoursAfter.Covered))}
		}
		return []string{label,
			fmtQty(float64(u.Reheat.Before)), fmtQty(float64(u.Reheat.After)), fmtChangePct(u.Reheat.ChangePct),
			fmtPM(float64(u.Reheat.ChangeU95)), fmtPM(float64(u.Reheat.SamplingU95)),
			fmtSigned(float64(u.ReheatAvoid.Change)) + " kWh (" + fmtChangePct(u.ReheatAvoid.ChangePct) + ")",
			fmtFixed(float64(u.EER.Before), 1) + " → " + fmtFixed(float64(u.EER.After), 1),
			fmtSigned(d.Water(float64(u.Water.Change))) + " (" + fmtChangePct(u.Water.ChangePct) + ")",
			fmtPct(float64(u.HoursBefore.Covered)) + " / " + fmtPct(float64(u.HoursAfter.Covered)),
		}
	}
	for i := range c.Units {
		rows = append(rows, row(&c.Units[i].Bins, c.Units[i].ID))
	}
	if len(c.Units) > 1 {
		rows = append(rows, row(&c.Total.Bins, "site"))
	}
	return header, rows
}

// fmtChangePct formats a percentage change with its sign: "+12 %", "-4.5 %".
func fmtChangePct(v compare.Num) string {
	f := float64(v)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "–"
	}
	dec := 0
	if math.Abs(f) < 10 {
		dec = 1
	}
	s := fmtFixed(f, dec)
	if f > 0 && s != "0" && s != "0.0" {
		s = "+" + s
	}
	return s + " %"
}

// fmtSigned formats a quantity with its sign.
func fmtSigned(v float64) string {
	s := fmtQty(v)
	if v > 0 && s != "0" && s != "0.0" {
		s = "+" + s
	}
	return s
}

// fmtSignedMoney formats money with its sign.
func fmtSignedMoney(v float64) string {
	s := fmtMoney(v)
	if v > 0 && s != "0.00" {
		s = "+" + s
	}
	return s
}

// fmtPM formats a half-width: "± 12", or a dash when there is none.
func fmtPM(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return "± " + fmtQty(v)
}

// compareView is what templates/compare.html shows; every number is
// formatted here, so the template needs no functions.
type compareView struct {
	Site, Before, After, Currency string
	BeforeSpan, AfterSpan         string
	Method                        string
	BinWidth                      string
	MinHours                      int
	WaterUnit, TempUnit           string
	Cards                         []cmpCard
	Rows                          []cmpRow
	Raw                           []cmpRawRow
	Bars                          template.HTML
	BinCharts                     []cmpChart
	Warnings                      []string
	Uncertainty                   []string
	Caution                       string
}

type cmpCard struct{ ID, Label, Value, Note string }

type cmpRow struct {
	ID, Name, Class                                string
	Compared                                       bool
	ReheatBefore, ReheatAfter, ReheatChange, Pct   string
	MeasU95, SampU95                               string
	AvoidBefore, AvoidAfter, AvoidPct              string
	EERBefore, EERAfter                            string
	WaterChange, WaterPct                          string
	CoolChange, CoolPct                            string
	CostChange, CostPct                            string
	CoveredBefore, CoveredAfter, Bins, HoursDetail string
}

type cmpRawRow struct {
	ID, Name, Class                string
	HoursBefore, HoursAfter        string
	ReheatBefore, ReheatAfter, Pct string
	AvoidBefore, AvoidAfter        string
	EERBefore, EERAfter            string
	WaterBefore, WaterAfter        string
	CoolBefore, CoolAfter          string
	CostBefore, CostAfter          string
}

type cmpChart struct {
	ID, Name string
	SVG      template.HTML
}

var compareTemplate = sync.OnceValues(func() (*template.Template, error) {
	return template.New("compare.html").ParseFS(assets, "templates/compare.html")
})

// RenderCompare writes the comparison as one self-contained HTML page:
// inline CSS and SVG, no script and no outside resource, so it can be
// mailed or archived as one file.
func RenderCompare(w io.Writer, c *compare.Comparison, d Display) error {
	t, err := compareTemplate()
	if err != nil {
		return fmt.Errorf("compare template: %w", err)
	}
	v, err := newCompareView(c, d)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := t.ExecuteTemplate(&buf, "compare.html", v); err != nil {
		return fmt.Errorf("render the comparison: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

func newCompareView(c *compare.Comparison, d Display) (*compareView, error) {
	v := &compareView{Site: c.Site, Before: c.Before.Label, After: c.After.Label, Currency: c.Currency,
		BeforeSpan: spanText(c.Before), AfterSpan: spanText(c.After),
		Method: c.BinMethod, MinHours: c.MinHours, WaterUnit: d.WaterUnit(), TempUnit: d.TempUnit(),
		BinWidth: fmtFixed(d.Delta(float64(c.BinK)), 1) + " " + d.DeltaUnit(),
		Warnings: c.Warnings, Uncertainty: compareUncertainty, Caution: CompareCaution}
	if d.IP {
		v.BinWidth += " = " + fmtFixed(float64(c.BinK), 1) + " K"
	}
	t := &c.Total.Bins
	v.Cards = []cmpCard{
		{"card-reheat", "Reheat, normalised", fmtChangePct(t.Reheat.ChangePct),
			fmtQty(float64(t.Reheat.Before)) + " → " + fmtQty(float64(t.Reheat.After)) + " kWh" + uncertaintyNote(t.Reheat)},
		{"card-reheat-raw", "Reheat, raw totals", fmtChangePct(pctChange(float64(t.RawAfter.ReheatKWh-t.RawBefore.ReheatKWh), float64(t.RawBefore.ReheatKWh))),
			fmtQty(float64(t.RawBefore.ReheatKWh)) + " → " + fmtQty(float64(t.RawAfter.ReheatKWh)) + " kWh over " + strconv.Itoa(t.RawBefore.Hours) + " and " + strconv.Itoa(t.RawAfter.Hours) + " hours"},
		{"card-avoidable", "Avoidable reheat, normalised", fmtChangePct(t.ReheatAvoid.ChangePct),
			fmtQty(float64(t.ReheatAvoid.Before)) + " → " + fmtQty(float64(t.ReheatAvoid.After)) + " kWh"},
		{"card-eer", "Effective EER, normalised", fmtFixed(float64(t.EER.Before), 1) + " → " + fmtFixed(float64(t.EER.After), 1), "Btu/Wh, ratio of the normalised sums"},
		{"card-covered", "Hours in common bins", fmtPct(float64(t.HoursBefore.Covered)) + " / " + fmtPct(float64(t.HoursAfter.Covered)),
			"of the usable hours before / after"},
	}
	for i := range c.Units {
		v.Rows = append(v.Rows, newCmpRow(&c.Units[i].Bins, d, ""))
		v.Raw = append(v.Raw, newCmpRawRow(&c.Units[i].Bins, d, ""))
	}
	if len(c.Units) > 1 {
		v.Rows = append(v.Rows, newCmpRow(t, d, "total"))
		v.Raw = append(v.Raw, newCmpRawRow(t, d, "total"))
	}
	bars, err := compareBarsSVG(c)
	if err != nil {
		return nil, err
	}
	v.Bars = bars
	for i := range c.Units {
		u := &c.Units[i].Bins
		svg, err := compareBinSVG(u, d, i)
		if err != nil {
			return nil, err
		}
		v.BinCharts = append(v.BinCharts, cmpChart{ID: u.ID, Name: u.Name, SVG: svg})
	}
	return v, nil
}

// uncertaintyNote lists the half-widths a change has: ", ± 12 measurement, ± 30 sampling".
func uncertaintyNote(c compare.Change) string {
	var out string
	if v := float64(c.ChangeU95); !math.IsNaN(v) {
		out += ", " + fmtPM(v) + " measurement"
	}
	if v := float64(c.SamplingU95); !math.IsNaN(v) {
		out += ", " + fmtPM(v) + " sampling"
	}
	return out
}

func spanText(p compare.Window) string {
	return p.From.Format("2006-01-02 15:04 MST") + " to " + p.To.Format("2006-01-02 15:04 MST") + " (end excluded)"
}

func newCmpRow(u *compare.BinCheck, d Display, class string) cmpRow {
	q := func(v compare.Num) string { return fmtQty(float64(v)) }
	return cmpRow{ID: u.ID, Name: u.Name, Class: class, Compared: u.Compared,
		ReheatBefore: q(u.Reheat.Before), ReheatAfter: q(u.Reheat.After), ReheatChange: fmtSigned(float64(u.Reheat.Change)),
		Pct: fmtChangePct(u.Reheat.ChangePct), MeasU95: fmtPM(float64(u.Reheat.ChangeU95)), SampU95: fmtPM(float64(u.Reheat.SamplingU95)),
		AvoidBefore: q(u.ReheatAvoid.Before), AvoidAfter: q(u.ReheatAvoid.After), AvoidPct: fmtChangePct(u.ReheatAvoid.ChangePct),
		EERBefore: fmtFixed(float64(u.EER.Before), 1), EERAfter: fmtFixed(float64(u.EER.After), 1),
		WaterChange: fmtSigned(d.Water(float64(u.Water.Change))), WaterPct: fmtChangePct(u.Water.ChangePct),
		CoolChange: fmtSigned(float64(u.CoolingInput.Change)), CoolPct: fmtChangePct(u.CoolingInput.ChangePct),
		CostChange: fmtSignedMoney(float64(u.Cost.Change)), CostPct: fmtChangePct(u.Cost.ChangePct),
		CoveredBefore: fmtPct(float64(u.HoursBefore.Covered)), CoveredAfter: fmtPct(float64(u.HoursAfter.Covered)),
		Bins: strconv.Itoa(u.CommonBins),
		HoursDetail: fmt.Sprintf("%d of %d usable hours before, %d of %d after", u.HoursBefore.InCommon, u.HoursBefore.Usable,
			u.HoursAfter.InCommon, u.HoursAfter.Usable),
	}
}

func newCmpRawRow(u *compare.BinCheck, d Display, class string) cmpRawRow {
	b, a := &u.RawBefore, &u.RawAfter
	q := func(v compare.Num) string { return fmtQty(float64(v)) }
	wt := func(v compare.Num) string { return fmtQty(d.Water(float64(v))) }
	return cmpRawRow{ID: u.ID, Name: u.Name, Class: class,
		HoursBefore: strconv.Itoa(b.Hours), HoursAfter: strconv.Itoa(a.Hours),
		ReheatBefore: q(b.ReheatKWh), ReheatAfter: q(a.ReheatKWh), Pct: fmtChangePct(pctChange(float64(a.ReheatKWh-b.ReheatKWh), float64(b.ReheatKWh))),
		AvoidBefore: q(b.ReheatAvoid), AvoidAfter: q(a.ReheatAvoid),
		EERBefore: fmtFixed(float64(b.EffectiveEER), 1), EERAfter: fmtFixed(float64(a.EffectiveEER), 1),
		WaterBefore: wt(b.WaterKg), WaterAfter: wt(a.WaterKg),
		CoolBefore: q(b.CoolingInput), CoolAfter: q(a.CoolingInput),
		CostBefore: fmtMoney(float64(b.Cost)), CostAfter: fmtMoney(float64(a.Cost)),
	}
}

// --- charts: small SVGs of our own, presentation attributes only ---

// svgText escapes text for SVG inside HTML.
func svgText(s string) string { return html.EscapeString(s) }

// cx formats a coordinate with one decimal.
func cx(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		v = 0
	}
	return strconv.FormatFloat(math.Round(v*10)/10, 'f', -1, 64)
}

// ticks returns round tick values covering [lo, hi] (about n of them) and
// the widened ends.
func ticks(lo, hi float64, n int) (t []float64, a, b float64) {
	if !(hi > lo) {
		lo, hi = lo-1, lo+1
	}
	raw := (hi - lo) / float64(max(n, 1))
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := 10 * mag
	for _, f := range []float64{1, 2, 5, 10} {
		if raw <= f*mag {
			step = f * mag
			break
		}
	}
	a, b = math.Floor(lo/step)*step, math.Ceil(hi/step)*step
	for v := a; v <= b+step/2 && len(t) < 40; v += step {
		t = append(t, math.Round(v/step)*step)
	}
	return t, a, b
}

// tickLabel writes a tick value with as many decimals as its step needs.
func tickLabel(v float64, t []float64) string {
	dec := 0
	if len(t) > 1 {
		step := t[1] - t[0]
		for dec < 3 && math.Abs(step*math.Pow(10, float64(dec))-math.Round(step*math.Pow(10, float64(dec)))) > 1e-9 {
			dec++
		}
	}
	return fmtFixed(v, dec)
}

func hatch(id, fill, line string) string {
	return `<pattern id="` + id + `" patternUnits="userSpaceOnUse" width="6" height="6" patternTransform="rotate(45)">` +
		`<rect width="6" height="6" fill="` + fill + `"/><line x1="0" y1="0" x2="0" y2="6" stroke="` + line + `" stroke-width="2.5"/></pattern>`
}

// compareBarsSVG draws, per unit, the before figure and the normalised
// after figure of reheat as a pair of horizontal bars with their
// measurement half-widths.
func compareBarsSVG(c *compare.Comparison) (template.HTML, error) {
	const (
		width   = 960.0
		labelW  = 220.0
		right   = 90.0
		top     = 58.0
		pitch   = 46.0
		barH    = 15.0
		bottom  = 34.0
		hatchID = "cmp-hatch-bars"
	)
	n := len(c.Units)
	h := top + float64(max(n, 1))*pitch + bottom
	lo, hi := 0.0, 0.0
	for i := range c.Units {
		u := &c.Units[i].Bins
		for _, x := range []float64{float64(u.Reheat.Before + u.Reheat.BeforeU95), float64(u.Reheat.After + u.Reheat.AfterU95),
			float64(u.Reheat.Before), float64(u.Reheat.After)} {
			if !math.IsNaN(x) && !math.IsInf(x, 0) {
				lo, hi = math.Min(lo, x), math.Max(hi, x)
			}
		}
	}
	tk, a, b := ticks(lo, hi, 6)
	x0, x1 := labelW, width-right
	x := func(v float64) float64 { return x0 + (v-a)/(b-a)*(x1-x0) }
	var s strings.Builder
	title := "Reheat per air handler: before, and after normalised to the before period's humidity"
	fmt.Fprintf(&s, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %s %s" width="%s" height="%s" role="img" aria-label="%s" font-family="system-ui, -apple-system, sans-serif" font-size="11" fill="%s">`,
		cx(width), cx(h), cx(width), cx(h), svgText(title), colorCmpInk)
	s.WriteString(`<defs>` + hatch(hatchID, colorAfter, colorAfterEdge) + `</defs>`)
	fmt.Fprintf(&s, `<text x="8" y="20" font-size="13" font-weight="600">%s</text>`, svgText(title))
	// Legend: shapes differ as well as colours.
	fmt.Fprintf(&s, `<rect x="%s" y="30" width="14" height="10" fill="%s" stroke="%s"/><text x="%s" y="39">before (its hours in common bins)</text>`,
		cx(x0), colorBefore, colorBeforeEdge, cx(x0+19))
	fmt.Fprintf(&s, `<rect x="%s" y="30" width="14" height="10" fill="url(#%s)" stroke="%s"/><text x="%s" y="39">after, normalised</text>`,
		cx(x0+230), hatchID, colorAfterEdge, cx(x0+249))
	fmt.Fprintf(&s, `<text x="%s" y="39" fill="%s">whiskers: measurement ± (95 %%)</text>`, cx(x0+370), colorCmpMuted)
	yEnd := top + float64(max(n, 1))*pitch
	for _, v := range tk {
		fmt.Fprintf(&s, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s"/>`, cx(x(v)), cx(top-4), cx(x(v)), cx(yEnd), colorCmpGrid)
		fmt.Fprintf(&s, `<text x="%s" y="%s" text-anchor="middle" fill="%s">%s</text>`, cx(x(v)), cx(yEnd+15), colorCmpMuted, svgText(tickLabel(v, tk)))
	}
	fmt.Fprintf(&s, `<text x="%s" y="%s" text-anchor="middle" fill="%s">reheat, kWh</text>`, cx((x0+x1)/2), cx(yEnd+30), colorCmpMuted)
	fmt.Fprintf(&s, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s"/>`, cx(x(0)), cx(top-4), cx(x(0)), cx(yEnd), colorCmpAxis)
	for i := range c.Units {
		u := &c.Units[i].Bins
		y := top + float64(i)*pitch
		label := u.Name
		if u.Name != u.ID {
			label += " (" + u.ID + ")"
		}
		if r := []rune(label); len(r) > 34 {
			label = string(r[:33]) + "…"
		}
		fmt.Fprintf(&s, `<text x="%s" y="%s" text-anchor="end">%s</text>`, cx(x0-8), cx(y+barH+6), svgText(label))
		if !u.Compared {
			fmt.Fprintf(&s, `<text x="%s" y="%s" fill="%s">not compared: no dew-point bin with enough hours in both periods</text>`,
				cx(x0+6), cx(y+barH+6), colorCmpMuted)
			continue
		}
		for k, p := range []struct {
			v, u95     float64
			fill, edge string
			name       string
		}{
			{float64(u.Reheat.Before), float64(u.Reheat.BeforeU95), colorBefore, colorBeforeEdge, "before"},
			{float64(u.Reheat.After), float64(u.Reheat.AfterU95), "url(#" + hatchID + ")", colorAfterEdge, "after, normalised"},
		} {
			yb := y + float64(k)*(barH+2)
			if math.IsNaN(p.v) {
				fmt.Fprintf(&s, `<text x="%s" y="%s" fill="%s">–</text>`, cx(x(0)+4), cx(yb+barH-3), colorCmpMuted)
				continue
			}
			xa, xb := math.Min(x(0), x(p.v)), math.Max(x(0), x(p.v))
			fmt.Fprintf(&s, `<rect x="%s" y="%s" width="%s" height="%s" fill="%s" stroke="%s"><title>%s</title></rect>`,
				cx(xa), cx(yb), cx(xb-xa), cx(barH), p.fill, p.edge, svgText(label+", "+p.name+": "+fmtQty(p.v)+" kWh"))
			end := xb
			if !math.IsNaN(p.u95) && p.u95 > 0 {
				wl, wr := x(p.v-p.u95), x(p.v+p.u95)
				ym := yb + barH/2
				fmt.Fprintf(&s, `<path d="M%s %sH%sM%s %sV%sM%s %sV%s" stroke="%s" stroke-width="1.2" fill="none"/>`,
					cx(wl), cx(ym), cx(wr), cx(wl), cx(ym-4), cx(ym+4), cx(wr), cx(ym-4), cx(ym+4), colorCmpInk)
				end = math.Max(end, wr)
			}
			fmt.Fprintf(&s, `<text x="%s" y="%s">%s</text>`, cx(end+5), cx(yb+barH-3), svgText(fmtQty(p.v)))
		}
	}
	s.WriteString(`</svg>`)
	return template.HTML(s.String()), nil // every text above went through svgText
}

// compareBinSVG draws one unit's bins: the mean reheat per hour of each
// period against the entering dew point (top) and the hours per bin of
// each period (bottom), which shows the difference in humidity mix that
// the normalisation removes.
func compareBinSVG(u *compare.BinCheck, d Display, idx int) (template.HTML, error) {
	const (
		width  = 960.0
		left   = 70.0
		right  = 24.0
		top    = 62.0
		plotH  = 190.0
		gap    = 44.0
		histH  = 90.0
		bottom = 40.0
	)
	h := top + plotH + gap + histH + bottom
	title := u.Name
	if u.Name != u.ID {
		title += " (" + u.ID + ")"
	}
	title += ": mean reheat per hour by entering dew point"
	var s strings.Builder
	fmt.Fprintf(&s, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %s %s" width="%s" height="%s" role="img" aria-label="%s" font-family="system-ui, -apple-system, sans-serif" font-size="11" fill="%s">`,
		cx(width), cx(h), cx(width), cx(h), svgText(title), colorCmpInk)
	hatchID := "cmp-hatch-" + strconv.Itoa(idx)
	s.WriteString(`<defs>` + hatch(hatchID, colorAfter, colorAfterEdge) + `</defs>`)
	fmt.Fprintf(&s, `<text x="8" y="20" font-size="13" font-weight="600">%s</text>`, svgText(title))
	if len(u.Bins) == 0 {
		fmt.Fprintf(&s, `<text x="%s" y="%s" fill="%s">no usable hours in either period</text></svg>`, cx(left), cx(top+40), colorCmpMuted)
		return template.HTML(s.String()), nil
	}
	// Legend.
	lx := left
	fmt.Fprintf(&s, `<path d="M%s 36h22" stroke="%s" stroke-width="2"/><circle cx="%s" cy="36" r="4" fill="%s" stroke="%s"/><text x="%s" y="40">before</text>`,
		cx(lx), colorBeforeEdge, cx(lx+11), colorBefore, colorBeforeEdge, cx(lx+28))
	lx += 90
	fmt.Fprintf(&s, `<path d="M%s 36h22" stroke="%s" stroke-width="2" stroke-dasharray="5 3"/><rect x="%s" y="32" width="8" height="8" fill="%s" stroke="%s"/><text x="%s" y="40">after</text>`,
		cx(lx), colorAfterEdge, cx(lx+7), colorAfter, colorAfterEdge, cx(lx+28))
	lx += 80
	fmt.Fprintf(&s, `<circle cx="%s" cy="36" r="4" fill="#fff" stroke="%s"/><text x="%s" y="40" fill="%s">hollow: bin left out (fewer than the minimum hours in a period)</text>`,
		cx(lx+4), colorCmpMuted, cx(lx+13), colorCmpMuted)

	loT, hiT := d.Temp(float64(u.Bins[0].LoC)), d.Temp(float64(u.Bins[len(u.Bins)-1].HiC))
	xt, xa, xb := ticks(loT, hiT, 10)
	x0, x1 := left, width-right
	x := func(t float64) float64 { return x0 + (t-xa)/(xb-xa)*(x1-x0) }
	yMax, hMax := 0.0, 0
	for _, b := range u.Bins {
		for _, v := range []float64{float64(b.ReheatBefore), float64(b.ReheatAfter)} {
			if !math.IsNaN(v) {
				yMax = math.Max(yMax, v)
			}
		}
		hMax = max(hMax, b.HoursBefore, b.HoursAfter)
	}
	yt, ya, yb := ticks(0, math.Max(yMax, 1e-9), 5)
	y := func(v float64) float64 { return top + plotH - (v-ya)/(yb-ya)*plotH }
	ht, ha, hb := ticks(0, float64(max(hMax, 1)), 3)
	hy0 := top + plotH + gap
	hy := func(v float64) float64 { return hy0 + histH - (v-ha)/(hb-ha)*histH }

	// Grids and axes.
	for _, v := range yt {
		fmt.Fprintf(&s, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s"/><text x="%s" y="%s" text-anchor="end" fill="%s">%s</text>`,
			cx(x0), cx(y(v)), cx(x1), cx(y(v)), colorCmpGrid, cx(x0-6), cx(y(v)+4), colorCmpMuted, svgText(tickLabel(v, yt)))
	}
	for _, v := range ht {
		fmt.Fprintf(&s, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s"/><text x="%s" y="%s" text-anchor="end" fill="%s">%s</text>`,
			cx(x0), cx(hy(v)), cx(x1), cx(hy(v)), colorCmpGrid, cx(x0-6), cx(hy(v)+4), colorCmpMuted, svgText(tickLabel(v, ht)))
	}
	for _, v := range xt {
		fmt.Fprintf(&s, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s"/><text x="%s" y="%s" text-anchor="middle" fill="%s">%s</text>`,
			cx(x(v)), cx(top), cx(x(v)), cx(hy0+histH), colorCmpGrid, cx(x(v)), cx(hy0+histH+15), colorCmpMuted, svgText(tickLabel(v, xt)))
	}
	fmt.Fprintf(&s, `<path d="M%s %sV%sH%sM%s %sV%sH%s" stroke="%s" fill="none"/>`,
		cx(x0), cx(top), cx(top+plotH), cx(x1), cx(x0), cx(hy0), cx(hy0+histH), cx(x1), colorCmpAxis)
	fmt.Fprintf(&s, `<text x="%s" y="%s" fill="%s">reheat, kWh per hour (bin mean)</text>`, cx(x0), cx(top-8), colorCmpMuted)
	fmt.Fprintf(&s, `<text x="%s" y="%s" fill="%s">hours per bin</text>`, cx(x0), cx(hy0-8), colorCmpMuted)
	fmt.Fprintf(&s, `<text x="%s" y="%s" text-anchor="middle" fill="%s">entering dew point, %s</text>`,
		cx((x0+x1)/2), cx(hy0+histH+32), colorCmpMuted, svgText(d.TempUnit()))

	// Hours per bin: two bars side by side in each bin.
	for _, b := range u.Bins {
		xl, xr := x(d.Temp(float64(b.LoC))), x(d.Temp(float64(b.HiC)))
		wBar := math.Max((xr-xl)/2-1.5, 0.8)
		op := "1"
		if !b.Common {
			op = "0.35"
		}
		rng := fmtFixed(d.Temp(float64(b.LoC)), 1) + " to " + fmtFixed(d.Temp(float64(b.HiC)), 1) + " " + d.TempUnit()
		for k, p := range []struct {
			hours      int
			fill, edge string
			name       string
		}{{b.HoursBefore, colorBefore, colorBeforeEdge, "before"}, {b.HoursAfter, "url(#" + hatchID + ")", colorAfterEdge, "after"}} {
			if p.hours == 0 {
				continue
			}
			xs := xl + 1 + float64(k)*(wBar+1)
			fmt.Fprintf(&s, `<rect x="%s" y="%s" width="%s" height="%s" fill="%s" stroke="%s" stroke-width="0.6" opacity="%s"><title>%s</title></rect>`,
				cx(xs), cx(hy(float64(p.hours))), cx(wBar), cx(hy(0)-hy(float64(p.hours))), p.fill, p.edge, op,
				svgText(p.name+", "+rng+": "+strconv.Itoa(p.hours)+" h"))
		}
	}

	// Bin means: lines over the common bins, a marker in every bin.
	for k, p := range []struct {
		edge, fill, dash, name string
		val                    func(compare.BinRow) compare.Num
		hours                  func(compare.BinRow) int
	}{
		{colorBeforeEdge, colorBefore, "", "before", func(b compare.BinRow) compare.Num { return b.ReheatBefore }, func(b compare.BinRow) int { return b.HoursBefore }},
		{colorAfterEdge, colorAfter, ` stroke-dasharray="6 4"`, "after", func(b compare.BinRow) compare.Num { return b.ReheatAfter }, func(b compare.BinRow) int { return b.HoursAfter }},
	} {
		// A line joins neighbouring bins only: across a gap nothing was
		// observed, and a straight line would suggest otherwise.
		var path strings.Builder
		prevHi := math.NaN()
		for _, b := range u.Bins {
			v := float64(p.val(b))
			if !b.Common || math.IsNaN(v) {
				prevHi = math.NaN()
				continue
			}
			cmd := "L"
			if math.IsNaN(prevHi) || math.Abs(float64(b.LoC)-prevHi) > 1e-9 {
				cmd = "M"
			}
			prevHi = float64(b.HiC)
			path.WriteString(cmd + cx(x(d.Temp(float64(b.LoC+b.HiC)/2))) + " " + cx(y(v)))
		}
		if path.Len() > 0 {
			fmt.Fprintf(&s, `<path d="%s" fill="none" stroke="%s" stroke-width="2"%s/>`, path.String(), p.edge, p.dash)
		}
		for _, b := range u.Bins {
			v := float64(p.val(b))
			if math.IsNaN(v) {
				continue
			}
			px, py := x(d.Temp(float64(b.LoC+b.HiC)/2)), y(v)
			fill := p.fill
			if !b.Common {
				fill = "#ffffff"
			}
			tip := svgText(p.name + ", " + fmtFixed(d.Temp(float64(b.LoC)), 1) + " to " + fmtFixed(d.Temp(float64(b.HiC)), 1) + " " + d.TempUnit() +
				": " + fmtFixed(v, 2) + " kWh per hour over " + strconv.Itoa(p.hours(b)) + " h")
			if k == 0 {
				fmt.Fprintf(&s, `<circle cx="%s" cy="%s" r="4" fill="%s" stroke="%s" stroke-width="1.2"><title>%s</title></circle>`,
					cx(px), cx(py), fill, p.edge, tip)
			} else {
				fmt.Fprintf(&s, `<rect x="%s" y="%s" width="8" height="8" fill="%s" stroke="%s" stroke-width="1.2"><title>%s</title></rect>`,
					cx(px-4), cx(py-4), fill, p.edge, tip)
			}
		}
	}
	s.WriteString(`</svg>`)
	return template.HTML(s.String()), nil // every text above went through svgText
}

// pctChange is 100 × change / |base|, unknown when base is zero or unknown.
func pctChange(change, base float64) compare.Num {
	if base == 0 || math.IsNaN(base) || math.IsNaN(change) {
		return compare.Num(math.NaN())
	}
	return compare.Num(100 * change / math.Abs(base))
}
