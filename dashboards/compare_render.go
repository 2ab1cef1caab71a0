package dashboards

import (
	"bytes"
	"crypto/sha256"
	_ "embed"
	"encoding/base64"
	"fmt"
	"html/template"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/dewline/dewline/dashboards/chart"
	"github.com/dewline/dewline/metrics/compare"
)

// --- output ---

// Colours of the comparison's charts: measured in the deep blue, the
// baseline model in the ochre (told apart by dash as well, in the page's
// stylesheet), avoided energy in the blue-green.
const (
	colorMeasured = chart.ColorBlue
	colorModel    = chart.ColorOchre
	colorAvoided  = chart.ColorTeal
)

// CompareCaution is printed with every comparison.
const CompareCaution = "These figures are estimates from trend data. A sequence that saves reheat can let space humidity rise: " +
	"check space dew point and relative humidity over the after period before keeping the change " +
	"(sustained relative humidity above about 60 % encourages mould growth; common practice, no source). " +
	"Spaces with humidity limits set by code or by the owner (laboratories, health care, museums) need the engineer of record's review, " +
	"and changes must follow local codes and licensed practice."

// compareUncertainty explains the ± figures.
var compareUncertainty = []string{
	"Guideline 14 ± (68 % and 90 %): ΔE = t × 1.26 × CV(RMSE) × E_baseline × sqrt((n/n′)(1 + 2/n′)/m), with n the before hours fitted, m the after hours, and n′ = n(1 − ρ)/(1 + ρ) the effective number of hours for the lag-1 autocorrelation ρ of the model's hourly residuals (ASHRAE Guideline 14-2014, Annex B; the factor 1.26 and the form are recalled from the guideline). Divided by the avoided energy it is the fractional savings uncertainty; the guideline asks for less than 50 % at 68 % confidence.",
	"Regression ± (90 %): the least-squares prediction interval of the after period's sum, t × sqrt(n/n′ × Σ σ² (m + s′(X′X)⁻¹s)) per occupancy mode, which counts every parameter of the model. The guideline's formula stands in for it with 2m/n, exact for a two-parameter model only; an hourly model has tens of parameters, and its interval is then wider. The finding uses the larger of the two at 90 %: a change inside it is reported as no significant change.",
	"Neither covers sensor calibration bias, which is the same before and after and cancels in the avoided energy to first order. With the entering air as the drivers (no outdoor trends), neither covers a change of the drivers caused by the measure itself either (for example a wetter return air after a reheat lockout), which such a model reads as weather; the outdoor drivers are free of it.",
	"Bin check ± (95 %): measurement, from the hourly half-widths normalised like the values; sampling, 1.96 × the standard error of the bin means (consecutive hours are not independent, so it understates).",
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

// fmtFSU formats a fractional savings uncertainty; above 100 % the
// savings are smaller than their uncertainty and the figure says no more.
func fmtFSU(v float64) string {
	if v > 1 {
		return "> 100 %"
	}
	return fmtFrac(v)
}

// fmtFrac formats a fraction as a percentage with one decimal below 10 %.
func fmtFrac(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	if math.Abs(v) < 0.1 {
		return fmtFixed(100*v, 1) + " %"
	}
	return fmtFixed(100*v, 0) + " %"
}

// quantity labels and how to show an amount of each.
var cmpQuantities = []struct {
	key, label string
}{
	{"reheat_kwh", "Reheat"},
	{"cooling_input_kwh", "Cooling input"},
	{"water_removed_kg", "Water removed"},
	{"cost", "Cost"},
}

func amount(key string, v float64, d Display) string {
	switch key {
	case "water_removed_kg":
		return fmtQty(d.Water(v))
	case "cost":
		return fmtMoney(v)
	}
	return fmtQty(v)
}

func amountUnit(key string, d Display, currency string) string {
	switch key {
	case "water_removed_kg":
		return d.WaterUnit()
	case "cost":
		return currency
	}
	return "kWh"
}

// uPct is the 90 % half-width used by the finding, as a percentage of the baseline.
func uPct(s *compare.Savings) string {
	b := float64(s.Baseline)
	if b == 0 || math.IsNaN(b) {
		return "–"
	}
	return "± " + fmtFixed(100*s.U90Used()/math.Abs(b), 1) + " %"
}

// CompareTable returns comparison c as a text table: per unit and for
// the site, the reheat avoided by the baseline model's account, its
// uncertainty and finding, the model's fit, the supply dew point and the
// bin method's check.
func CompareTable(c *compare.Comparison, d Display) (header []string, rows [][]string) {
	header = []string{"air handler", "reheat baseline kWh", "measured kWh", "avoided kWh", "avoided", "± 90 %", "finding",
		"fit CV(RMSE) / NMBE / R²", "supply dew point " + d.TempUnit() + " before → after", "bin check"}
	for i := range c.AirHandlers {
		u := &c.AirHandlers[i]
		r := u.Model.Reheat()
		if r == nil || r.Finding == compare.FindingNoModel {
			rows = append(rows, []string{u.ID, "–", "–", "–", "–", "–", compare.FindingNoModel, "–", "–", fmtChangePct(-u.Bins.Reheat.ChangePct)})
			continue
		}
		fit := fmtFrac(float64(r.Fit.CVRMSE)) + " / " + fmtFrac(float64(r.Fit.NMBE)) + " / " + fmtFixed(float64(r.Fit.R2), 2)
		if !r.Fit.MeetsG14 {
			fit += " (outside Guideline 14)"
		}
		dp := fmtFixed(d.Temp(float64(u.Humidity.MeanBefore)), 1) + " → " + fmtFixed(d.Temp(float64(u.Humidity.MeanAfter)), 1)
		if u.Humidity.Held != "unknown" {
			dp += " (target " + u.Humidity.Held + ")"
		}
		rows = append(rows, []string{u.ID, fmtQty(float64(r.Baseline)), fmtQty(float64(r.Measured)), fmtSigned(float64(r.Avoided)),
			fmtChangePct(r.AvoidedPct), uPct(r), u.Finding, fit, dp, "saves " + fmtChangePct(-u.Bins.Reheat.ChangePct)})
	}
	if len(c.AirHandlers) > 1 {
		r := c.Total.Reheat()
		rows = append(rows, []string{"site", fmtQty(float64(r.Baseline)), fmtQty(float64(r.Measured)), fmtSigned(float64(r.Avoided)),
			fmtChangePct(r.AvoidedPct), uPct(r), r.Finding, "–", "–", "saves " + fmtChangePct(-c.Total.Bins.Reheat.ChangePct)})
	}
	return header, rows
}

// compareView is what templates/compare.html shows; every number is
// formatted here, so the template needs no functions.
type compareView struct {
	Site, Before, After, Currency string
	BeforeSpan, AfterSpan         string
	Method, BinMethod             string
	BinWidth                      string
	MinHours                      int
	WaterUnit, TempUnit           string
	Normalise                     string
	Drivers                       []cmpDrivers
	Cards                         []cmpCard
	AirHandlers                   []cmpAirHandler
	Fits                          []cmpFit
	Extrap                        []cmpExtrap
	Humidity                      []cmpHumidity
	Normalised                    []cmpNormalised
	Bars                          template.HTML
	FitCharts                     []cmpChart
	Rows                          []cmpRow
	Raw                           []cmpRawRow
	Warnings                      []string
	Uncertainty                   []string
	Caution                       string
	CSS                           template.CSS
	StyleHash                     string
}

type cmpCard struct{ ID, Label, Value, Note string }

// cmpDrivers says which drivers a unit's baseline used, and why.
type cmpDrivers struct{ ID, Name, Drivers, Why string }

// cmpAirHandler is one row of the headline table: one unit (or the site) and
// one quantity.
type cmpAirHandler struct {
	ID, Name, Class, Quantity, Unit        string
	First                                  bool // first quantity of its unit
	Span                                   int
	Baseline, Measured, Avoided, Pct       string
	U68, U90, Reg90, FSU68, FSU90, Finding string
	FindingClass                           string
}

type cmpFit struct {
	ID, Name, Quantity                 string
	First                              bool
	Span                               int
	N, P, CV, NMBE, R2, Rho, NEff, G14 string
	Fails                              bool
}

type cmpExtrap struct {
	ID, Name, Driver, Range, Share string
	Warn                           bool
}

type cmpHumidity struct {
	ID, Name, Target, Before, After, AboveBefore, AboveAfter, Held string
	Broken                                                         bool
}

type cmpNormalised struct {
	ID, Name, Quantity, Hours, Baseline, Reporting, Avoided, Pct, U90 string
}

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

// compareCSS is the page's stylesheet, inlined, with the hash its own
// Content-Security-Policy allows it by (CSP Level 2 hash source: base64 of
// the SHA-256 of the style element's text). The policy allows nothing
// else: no script, no outside resource, no style attribute, whatever a
// mail client or an archive does with the file.
//
//go:embed templates/compare.css
var compareCSS string

func compareStyleHash() string {
	sum := sha256.Sum256([]byte(compareCSS))
	return "sha256-" + base64.StdEncoding.EncodeToString(sum[:])
}

// RenderCompare writes comparison c as one self-contained HTML page:
// inline CSS and SVG, no script and no outside resource, so it can be
// mailed or archived as one file. zone labels the time axes (nil: UTC).
func RenderCompare(w io.Writer, c *compare.Comparison, d Display, zone *time.Location) error {
	t, err := compareTemplate()
	if err != nil {
		return fmt.Errorf("compare template: %w", err)
	}
	v, err := newCompareView(c, d, zone)
	if err != nil {
		return err
	}
	v.CSS, v.StyleHash = template.CSS(compareCSS), compareStyleHash()
	var buf bytes.Buffer
	if err := t.ExecuteTemplate(&buf, "compare.html", v); err != nil {
		return fmt.Errorf("render the comparison: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

func findingClass(f string) string {
	switch f {
	case compare.FindingSaving:
		return "saving"
	case compare.FindingIncrease, compare.FindingTargetLost:
		return "bad"
	}
	return "neutral"
}

func newCompareView(c *compare.Comparison, d Display, zone *time.Location) (*compareView, error) {
	v := &compareView{Site: c.Site, Before: c.Before.Label, After: c.After.Label, Currency: c.Currency,
		BeforeSpan: spanText(c.Before), AfterSpan: spanText(c.After),
		Method: c.Method, BinMethod: c.BinMethod, MinHours: c.MinHours, WaterUnit: d.WaterUnit(), TempUnit: d.TempUnit(),
		BinWidth: fmtFixed(d.Delta(float64(c.BinK)), 1) + " " + d.DeltaUnit(), Normalise: NormalisedWords(c),
		Warnings: c.Warnings, Uncertainty: compareUncertainty, Caution: CompareCaution}
	if d.IP {
		v.BinWidth += " = " + fmtFixed(float64(c.BinK), 1) + " K"
	}
	tr := c.Total.Reheat()
	cost := &c.Total.Savings[3]
	cool := &c.Total.Savings[1]
	v.Cards = []cmpCard{
		{"card-avoided-reheat", "Reheat avoided", fmtChangePct(tr.AvoidedPct),
			fmtSigned(float64(tr.Avoided)) + " kWh " + uPct(tr) + " (90 %): " + tr.Finding},
		{"card-avoided-cooling", "Cooling input avoided", fmtChangePct(cool.AvoidedPct),
			fmtSigned(float64(cool.Avoided)) + " kWh " + uPct(cool) + ": " + cool.Finding},
		{"card-avoided-cost", "Cost avoided", fmtSignedMoney(float64(cost.Avoided)) + " " + c.Currency,
			fmtChangePct(cost.AvoidedPct) + " " + uPct(cost) + ": " + cost.Finding},
		{"card-bin-check", "Bin method check, reheat", fmtChangePct(-c.Total.Bins.Reheat.ChangePct),
			"saved on " + fmtPct(float64(c.Total.Bins.HoursBefore.Covered)) + " of the before hours (bins common to both periods)"},
	}
	addSavings := func(id, name, class string, ss []compare.Savings) {
		for k, q := range cmpQuantities {
			if k >= len(ss) {
				break
			}
			s := &ss[k]
			row := cmpAirHandler{ID: id, Name: name, Class: class, Quantity: q.label, Unit: amountUnit(q.key, d, c.Currency), First: k == 0, Span: len(ss),
				Baseline: amount(q.key, float64(s.Baseline), d), Measured: amount(q.key, float64(s.Measured), d),
				Avoided: amount(q.key, float64(s.Avoided), d), Pct: fmtChangePct(s.AvoidedPct),
				U68: amount(q.key, math.Max(float64(s.U68), float64(s.RegU68)), d), U90: amount(q.key, float64(s.U90), d),
				Reg90: amount(q.key, float64(s.RegU90), d), FSU68: fmtFSU(float64(s.FSU68)), FSU90: fmtFSU(float64(s.FSU90)),
				Finding: s.Finding, FindingClass: findingClass(s.Finding)}
			if s.Avoided > 0 && strings.Trim(row.Avoided, "0.,") != "" {
				row.Avoided = "+" + row.Avoided
			}
			v.AirHandlers = append(v.AirHandlers, row)
		}
	}
	for i := range c.AirHandlers {
		u := &c.AirHandlers[i]
		if u.Model != nil {
			v.Drivers = append(v.Drivers, cmpDrivers{ID: u.ID, Name: u.Name, Drivers: u.Model.Drivers, Why: u.Model.DriversWhy})
			addSavings(u.ID, u.Name, "", u.Model.Savings)
			for k, q := range cmpQuantities {
				if k >= len(u.Model.Savings) {
					break
				}
				f := u.Model.Savings[k].Fit
				g14 := "met"
				if !f.MeetsG14 {
					g14 = "not met"
				}
				v.Fits = append(v.Fits, cmpFit{ID: u.ID, Name: u.Name, Quantity: q.label, First: k == 0, Span: len(u.Model.Savings),
					N: strconv.Itoa(f.N), P: strconv.Itoa(f.P), CV: fmtFrac(float64(f.CVRMSE)), NMBE: fmtFrac(float64(f.NMBE)),
					R2: fmtFixed(float64(f.R2), 3), Rho: fmtFixed(float64(f.Rho), 2), NEff: fmtFixed(float64(f.NEff), 0), G14: g14, Fails: !f.MeetsG14})
				if n := u.Model.Savings[k].Normalised; n != nil {
					v.Normalised = append(v.Normalised, cmpNormalised{ID: u.ID, Name: u.Name, Quantity: q.label, Hours: strconv.Itoa(n.Hours),
						Baseline: amount(q.key, float64(n.Baseline), d), Reporting: amount(q.key, float64(n.Reporting), d),
						Avoided: amount(q.key, float64(n.Avoided), d), Pct: fmtChangePct(n.AvoidedPct), U90: fmtPM(float64(n.U90))})
				}
			}
			for _, e := range u.Model.Extrapolation {
				rng := "–"
				switch e.Driver {
				case "entering_dewpoint_c", "entering_temp_c", "outdoor_dewpoint_c", "outdoor_temp_c":
					rng = fmtFixed(d.Temp(float64(e.Min)), 1) + " to " + fmtFixed(d.Temp(float64(e.Max)), 1) + " " + d.TempUnit()
				case "dry_air_kg":
					rng = fmtQty(float64(e.Min)) + " to " + fmtQty(float64(e.Max)) + " kg of dry air per hour"
				}
				v.Extrap = append(v.Extrap, cmpExtrap{ID: u.ID, Name: u.Name, Driver: driverLabel[e.Driver], Range: rng, Share: fmtFrac(float64(e.Share)), Warn: e.Warn})
			}
		}
		h := u.Humidity
		target := "none configured"
		if !math.IsNaN(float64(h.TargetDPC)) {
			target = fmtFixed(d.Temp(float64(h.TargetDPC)), 1) + " " + d.TempUnit() + " (" + targetLabel[h.TargetKind] + ")"
		}
		v.Humidity = append(v.Humidity, cmpHumidity{ID: u.ID, Name: u.Name, Target: target,
			Before: fmtFixed(d.Temp(float64(h.MeanBefore)), 1), After: fmtFixed(d.Temp(float64(h.MeanAfter)), 1),
			AboveBefore: fmtFrac(float64(h.AboveBefore)), AboveAfter: fmtFrac(float64(h.AboveAfter)), Held: h.Held, Broken: h.Held == "not held"})
	}
	if len(c.AirHandlers) > 1 {
		addSavings("", "Site", "total", c.Total.Savings)
	}
	for i := range c.AirHandlers {
		v.Rows = append(v.Rows, newCmpRow(&c.AirHandlers[i].Bins, d, ""))
		v.Raw = append(v.Raw, newCmpRawRow(&c.AirHandlers[i].Bins, d, ""))
	}
	if len(c.AirHandlers) > 1 {
		v.Rows = append(v.Rows, newCmpRow(&c.Total.Bins, d, "total"))
		v.Raw = append(v.Raw, newCmpRawRow(&c.Total.Bins, d, "total"))
	}
	bars, err := avoidedBarsSVG(c)
	if err != nil {
		return nil, err
	}
	v.Bars = bars
	for i := range c.AirHandlers {
		u := &c.AirHandlers[i]
		svg, err := fitChartSVG(u, zone)
		if err != nil {
			return nil, err
		}
		v.FitCharts = append(v.FitCharts, cmpChart{ID: u.ID, Name: u.Name, SVG: svg})
	}
	return v, nil
}

// NormalisedWords names the conditions the savings were normalised to,
// for the outputs: "the before period's (1 Jun – 14 Jun 2026)", or "" when
// none were asked.
func NormalisedWords(c *compare.Comparison) string {
	switch {
	case c.Normalise == "before":
		return "the before period's (" + c.Before.Label + ")"
	case c.Normalise == "after":
		return "the after period's (" + c.After.Label + ")"
	case c.Normalise == "period" && c.NormalPeriod != nil:
		return "the period " + c.NormalPeriod.Label + "'s"
	}
	return c.Normalise
}

var driverLabel = map[string]string{
	"entering_dewpoint_c": "entering dew point",
	"entering_temp_c":     "entering temperature",
	"outdoor_dewpoint_c":  "outdoor dew point",
	"outdoor_temp_c":      "outdoor temperature",
	"dry_air_kg":          "airflow (dry air)",
	"hour_of_week":        "hour of the week not seen before",
}

var targetLabel = map[string]string{
	"supply_dewpoint": "supply dew point",
	"space_dewpoint":  "space dew point; the supply must be at or below it",
	"space_rh":        "dew point of the space RH limit",
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

// avoidedBarsSVG ranks the units by the reheat the baseline model says
// they avoided (kWh).
func avoidedBarsSVG(c *compare.Comparison) (template.HTML, error) {
	labels := make([]string, 0, len(c.AirHandlers))
	values := make([]float64, 0, len(c.AirHandlers))
	for i := range c.AirHandlers {
		u := &c.AirHandlers[i]
		label := u.Name
		if u.Name != u.ID {
			label += " (" + u.ID + ")"
		}
		labels = append(labels, label)
		v := math.NaN()
		if r := u.Model.Reheat(); r != nil {
			v = float64(r.Avoided)
		}
		values = append(values, v)
	}
	var b bytes.Buffer
	err := chart.HBars(&b, chart.Frame{Title: "Reheat avoided per air handler (baseline projected minus measured)", YLabel: "kWh", Width: 960}, labels, values, colorAvoided)
	if err != nil {
		return "", fmt.Errorf("the avoided-reheat chart: %w", err)
	}
	return template.HTML(b.String()), nil // the chart package escapes every text it writes
}

// fitChartSVG draws one unit's measured reheat and the baseline model's
// prediction hour by hour over both periods: in the before period the
// fit, in the after period the projection whose difference is the
// avoided energy. A missing hour, and the time between the periods, are
// gaps.
func fitChartSVG(u *compare.AirHandlerComparison, zone *time.Location) (template.HTML, error) {
	title := u.Name
	if u.Name != u.ID {
		title += " (" + u.ID + ")"
	}
	title += ": reheat measured and predicted by the baseline model"
	var times []time.Time
	var meas, pred []float64
	if u.Model != nil {
		hours := slices.Clone(u.Model.Hours)
		slices.SortFunc(hours, func(a, b compare.HourFit) int { return a.Hour.Compare(b.Hour) })
		for i := range hours {
			h := &hours[i]
			if n := len(times); n > 0 && h.Hour.Sub(times[n-1]) > time.Hour {
				times = append(times, times[n-1].Add(time.Hour))
				meas, pred = append(meas, math.NaN()), append(pred, math.NaN())
			}
			times = append(times, h.Hour)
			meas = append(meas, float64(h.Measured[0]))
			pred = append(pred, float64(h.Predicted[0]))
		}
	}
	var b bytes.Buffer
	err := chart.Lines(&b, chart.Frame{Title: title, YLabel: "reheat, kWh per hour", Width: 960, Height: 280, Zone: zone}, times,
		[]chart.Series{
			{Name: "measured", Class: "measured", Color: colorMeasured, Values: meas},
			{Name: "baseline model (fitted before, projected after)", Class: "predicted", Color: colorModel, Values: pred},
		}, nil)
	if err != nil {
		return "", fmt.Errorf("the fit chart of %s: %w", u.ID, err)
	}
	return template.HTML(b.String()), nil // the chart package escapes every text it writes
}

// pctChange is 100 × change / |base|, unknown when base is zero or unknown.
func pctChange(change, base float64) compare.Num {
	if base == 0 || math.IsNaN(base) || math.IsNaN(change) {
		return compare.Num(math.NaN())
	}
	return compare.Num(100 * change / math.Abs(base))
}
