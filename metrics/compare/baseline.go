package compare

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// ModelMethod states the headline method in plain words, for the outputs.
const ModelMethod = "Baseline model in the manner of ASHRAE Guideline 14 and IPMVP Option B (retrofit isolation): " +
	"per air handler and quantity, the before period's hourly values are fitted by ordinary least squares to " +
	"the hour's airflow times a change-point (piecewise-linear) function of the drivers' humidity ratio (from their dew point) " +
	"and dry bulb, with separate terms for occupied and unoccupied hours of the week " +
	"(the time-of-week-and-temperature form of Mathieu et al. 2011, reduced to two occupancy modes). " +
	"The drivers are the outdoor dry bulb and dew point when the outdoor roles are mapped (the weather, which the change cannot alter), " +
	"else the entering air's (each unit's drivers are named). " +
	"Projected onto each after hour's drivers, the model gives what the unit would have used without the change; " +
	"avoided energy = projection − measured, over every usable after hour."

// Findings of a quantity.
const (
	FindingSaving     = "saving"
	FindingIncrease   = "increase"
	FindingNoChange   = "no significant change"
	FindingNoModel    = "no model"
	FindingTargetLost = "saving, but the humidity target was not held"
)

// Share of after hours beyond the baseline's driver range above which the
// outputs warn (common practice, no source).
const extrapolationWarn = 0.10

// Tolerance of the supply dew point over the target before an hour counts
// as above it: the dew-point accuracy of building sensors (memory, typical
// catalogue figure, as metrics.DefaultAccuracy).
const targetTolK = 0.5

// A target counts as held after the change when the share of after hours
// above it exceeds the before period's share by no more than this
// (common practice, no source).
const targetSlack = 0.05

// Savings is one quantity of one unit (or the site): the baseline model's
// fit, and the avoided amount in the after period.
type Savings struct {
	Quantity string   `json:"quantity"` // reheat_kwh, cooling_input_kwh, water_removed_kg or cost
	Fit      FitStats `json:"fit"`      // of the before period (none for the site)
	Hours    int      `json:"after_hours"`
	// Baseline is the model projected onto the after hours; Measured what
	// was measured in them; Avoided = Baseline − Measured (positive: less
	// used), AvoidedPct its percentage of Baseline.
	Baseline   Num `json:"baseline_projected"`
	Measured   Num `json:"measured"`
	Avoided    Num `json:"avoided"`
	AvoidedPct Num `json:"avoided_pct"`
	// U68, U90: Guideline 14 half-widths of Avoided at 68 % and 90 %
	// confidence (autocorrelation-corrected); FSU68, FSU90 the same as
	// fractions of |Avoided|.
	U68   Num `json:"u68"`
	U90   Num `json:"u90"`
	FSU68 Num `json:"fsu68"`
	FSU90 Num `json:"fsu90"`
	// RegU68, RegU90: the least-squares prediction interval of the same
	// sum (predictionU), which counts every parameter of the model.
	RegU68 Num `json:"u68_regression"`
	RegU90 Num `json:"u90_regression"`
	// Significant: |Avoided| > the larger 90 % half-width.
	Significant bool   `json:"significant"`
	Finding     string `json:"finding"`
	// Normalised, when asked: the savings under another period's drivers.
	Normalised *Normalised `json:"normalised,omitempty"`
}

// Normalised savings: the baseline model and a model of the after period
// (same form) both projected onto the hours of the chosen period.
type Normalised struct {
	To         string   `json:"to"`               // before, after or period
	Period     *Window  `json:"period,omitempty"` // the period, for "period"
	Hours      int      `json:"hours"`
	Baseline   Num      `json:"baseline"`
	Reporting  Num      `json:"reporting"`
	Avoided    Num      `json:"avoided"`
	AvoidedPct Num      `json:"avoided_pct"`
	U90        Num      `json:"u90"` // both models' half-widths in quadrature
	Fit        FitStats `json:"reporting_fit"`
}

// Extrapolation is the share of usable after hours whose driver lies
// outside the range the baseline was fitted on.
type Extrapolation struct {
	Driver string `json:"driver"`
	Min    Num    `json:"baseline_min"`
	Max    Num    `json:"baseline_max"`
	Share  Num    `json:"share_outside"`
	Warn   bool   `json:"warn"`
}

// Humidity is the supply side of the humidity target in both periods: the
// supply dew point is the coil leaving dew point (reheat adds no moisture),
// a lower bound of the space dew point.
type Humidity struct {
	TargetKind string `json:"target_kind"` // supply_dewpoint, space_dewpoint, space_rh or ""
	TargetDPC  Num    `json:"target_dewpoint_c"`
	MeanBefore Num    `json:"supply_dewpoint_mean_before_c"`
	MeanAfter  Num    `json:"supply_dewpoint_mean_after_c"`
	// Shares of hours with a supply dew point more than 0.5 K above the target.
	AboveBefore Num `json:"share_above_target_before"`
	AboveAfter  Num `json:"share_above_target_after"`
	// Held: "held", "not held" or "unknown".
	Held string `json:"target"`
}

// HourFit is one usable hour with its drivers, measured values and the
// baseline model's prediction.
type HourFit struct {
	Hour     time.Time `json:"hour"`
	Period   string    `json:"period"` // before or after
	Occupied bool      `json:"occupied"`
	// DewPointC and TempC are the model's drivers (Model.Drivers: outdoor
	// or entering air); the entering air's as stored beside them.
	DewPointC         Num     `json:"driver_dewpoint_c"`
	TempC             Num     `json:"driver_temp_c"`
	EnteringDewPointC Num     `json:"entering_dewpoint_c"`
	EnteringTempC     Num     `json:"entering_temp_c"`
	DryAirKg          Num     `json:"dry_air_kg"`
	Measured          [nY]Num `json:"measured"`  // reheat_kwh, cooling_input_kwh, water_removed_kg, cost
	Predicted         [nY]Num `json:"predicted"` // the same order
}

// Model is the baseline-model result of one unit.
type Model struct {
	// Drivers: DriversOutdoor or DriversEntering; DriversWhy says why.
	Drivers    string `json:"drivers"`
	DriversWhy string `json:"drivers_why"`
	Usable     [2]int `json:"usable_hours"` // before, after
	// Suspect counts the hours left out because a sensor behind them
	// read flat or out of range, or the coil appeared to add moisture
	// (the engine's data-quality flags): a stuck sensor is not a saving.
	Suspect       [2]int          `json:"suspect_hours_left_out"`
	HumRatioKnots []Num           `json:"humidity_ratio_change_points_g_per_kg"`
	TempKnots     []Num           `json:"temp_change_points_c"`
	OccupiedHours int             `json:"occupied_hours_of_week"`
	Savings       []Savings       `json:"savings"` // reheat, cooling input, water removed, cost
	Extrapolation []Extrapolation `json:"extrapolation"`
	Hours         []HourFit       `json:"hours"`
}

// Reheat returns the reheat savings (nil when no model).
func (m *Model) Reheat() *Savings {
	if m == nil || len(m.Savings) == 0 {
		return nil
	}
	return &m.Savings[yReheat]
}

// suspect reports whether r carries a data-quality flag that makes its
// figures unfit for a baseline: a sensor flat or out of range all hour,
// entering air above saturation, a coil adding moisture.
func suspect(r *metrics.Record) bool {
	for _, f := range r.Flags {
		if strings.HasPrefix(f, metrics.FlagOutOfRange) || strings.HasPrefix(f, metrics.FlagFlat) ||
			f == metrics.FlagMoistureAdded || f == metrics.FlagSupersaturated {
			return true
		}
	}
	return false
}

// rowOf returns the model row of r, false when the hour cannot be used:
// too little coverage, no airflow, or neither set of drivers.
func rowOf(r *metrics.Record, minCov, pressurePa float64, zone *time.Location) (hourRow, bool) {
	if !(r.Coverage >= minCov) || !finite(r.DryAirKg) {
		return hourRow{}, false
	}
	set := func(dpC, tC float64) driverSet {
		if !finite(dpC) || !finite(tC) {
			return driverSet{dpC: math.NaN(), wGkg: math.NaN(), tC: math.NaN()}
		}
		w, err := psychro.HumRatioFromDewPoint(dpC, pressurePa)
		if err != nil {
			return driverSet{dpC: math.NaN(), wGkg: math.NaN(), tC: math.NaN()}
		}
		return driverSet{dpC: dpC, wGkg: 1000 * w, tC: tC, ok: true}
	}
	lt := r.HourStart.In(zone)
	row := hourRow{t: r.HourStart, how: int(lt.Weekday())*24 + lt.Hour(),
		m: r.DryAirKg / 1000, supplyDPC: r.LeavingDewPointC,
		in: set(r.EnteringDewPointC, r.EnteringTempC), out: set(r.OutdoorDewPointC, r.OutdoorTempC),
		y: [nY]float64{r.ReheatKWh, r.CoolingInputKWh, r.WaterRemovedKg, r.Cost}}
	if !row.in.ok && !row.out.ok {
		return hourRow{}, false
	}
	return row, true
}

// outdoorShare is the share of each period's usable hours that must carry
// the outdoor drivers for the model to use them (common practice, no
// source: a weather station that missed a tenth of the hours still
// describes the periods; the hours it missed are left out and counted).
const outdoorShare = 0.9

// chooseDrivers picks the unit's drivers and keeps the rows that have
// them: outdoor when outdoorShare of the hours of every period given
// (that has any) carry them, else entering. It returns the choice, a sentence saying why
// and the rows left out per period for the lack of the chosen drivers.
func chooseDrivers(periods [][]hourRow) (string, string, []int) {
	drivers := DriversOutdoor
	for _, rows := range periods {
		n := 0
		for i := range rows {
			if rows[i].out.ok {
				n++
			}
		}
		if len(rows) > 0 && float64(n) < outdoorShare*float64(len(rows)) {
			drivers = DriversEntering
			break
		}
	}
	why := "outdoor dry bulb and dew point: the weather, which the change cannot alter"
	if drivers == DriversEntering {
		why = fmt.Sprintf("entering air (the outdoor temperature and RH are not mapped, or read fewer than %.0f %% of the hours): a change that alters the supply humidity alters the entering air too, and the baseline then reads part of the change as weather", 100*outdoorShare)
	}
	dropped := make([]int, len(periods))
	for k, rows := range periods {
		kept := make([]hourRow, 0, len(rows))
		for i := range rows {
			if rows[i].useDrivers(drivers) {
				kept = append(kept, rows[i])
			} else {
				dropped[k]++
			}
		}
		periods[k] = kept
	}
	return drivers, why, dropped
}

// normSpec asks for savings normalised to a period's conditions: To is
// "before", "after" or "period" (a third period, Window).
type normSpec struct {
	To     string
	Window Window
}

// buildModel fits the baseline on the before rows and projects it onto
// the after rows; periods[2] holds the hours of a third period to
// normalise to (norm.To "period").
func buildModel(periods [3][]hourRow, norm normSpec, suspectHours [2]int) (*Model, []string) {
	var warns []string
	for s, n := range suspectHours {
		if n > 0 {
			warns = append(warns, fmt.Sprintf("%d of the %s period's hours are left out of the baseline model: a sensor behind them read flat or out of range (see the hourly flags)",
				n, [2]string{"before", "after"}[s]))
		}
	}
	use := [][]hourRow{periods[0], periods[1]}
	if norm.To == "period" {
		use = append(use, periods[2])
	}
	drivers, why, dropped := chooseDrivers(use)
	before, after := use[0], use[1]
	var normal []hourRow
	if norm.To == "period" {
		normal = use[2]
	}
	for k, n := range dropped {
		if n > 0 {
			warns = append(warns, fmt.Sprintf("%d of the %s period's hours lack the outdoor temperature or dew point and are left out of the baseline model",
				n, [3]string{"before", "after", "normalisation"}[k]))
		}
	}
	sortRows(before)
	sortRows(after)
	md := &Model{Drivers: drivers, DriversWhy: why, Usable: [2]int{len(before), len(after)}, Suspect: suspectHours, HumRatioKnots: []Num{}, TempKnots: []Num{},
		Savings: []Savings{}, Extrapolation: []Extrapolation{}, Hours: []HourFit{}}
	if len(before) == 0 || len(after) == 0 {
		return md, append(warns, "no usable hour (drivers, airflow, enough coverage) in one of the periods: no baseline model")
	}
	if drivers == DriversEntering {
		warns = append(warns, "the baseline's drivers are the entering air, not the weather: map outdoor_temp and outdoor_rh for a baseline the change cannot bias")
	}
	f := fitModel(before)
	for _, k := range f.dpKnots {
		md.HumRatioKnots = append(md.HumRatioKnots, Num(k))
	}
	for _, k := range f.tKnots {
		md.TempKnots = append(md.TempKnots, Num(k))
	}
	for _, o := range f.occupied {
		if o == 1 {
			md.OccupiedHours++
		}
	}
	buf := make([]float64, f.cols())
	for s, rows := range [2][]hourRow{before, after} {
		for i := range rows {
			r := &rows[i]
			h := HourFit{Hour: r.t, Period: [2]string{"before", "after"}[s], Occupied: f.isOccupied(r),
				DewPointC: Num(r.dpC), TempC: Num(r.tC), DryAirKg: Num(r.m * 1000)}
			if drivers == DriversOutdoor {
				h.EnteringDewPointC, h.EnteringTempC = Num(r.in.dpC), Num(r.in.tC)
			} else {
				h.EnteringDewPointC, h.EnteringTempC = h.DewPointC, h.TempC
			}
			for q := 0; q < nY; q++ {
				h.Measured[q] = Num(r.y[q])
				h.Predicted[q] = Num(math.NaN())
				if f.ok[q] {
					h.Predicted[q] = Num(f.predict(q, r, buf))
				}
			}
			md.Hours = append(md.Hours, h)
		}
	}

	var post *modelForm
	switch norm.To {
	case "before":
		post, normal = fitModel(after), before
	case "after":
		post, normal = fitModel(after), after
	case "period":
		post = fitModel(after)
	}
	for q := 0; q < nY; q++ {
		s := Savings{Quantity: yNames[q], Fit: f.stats[q]}
		var base, meas float64
		half := f.cols() / 2
		sumRow := [2][]float64{make([]float64, f.cols()), make([]float64, f.cols())}
		var modeHours [2]int
		for i := range after {
			r := &after[i]
			if !finite(r.y[q]) || !f.ok[q] {
				continue
			}
			base += f.predict(q, r, buf)
			md := 0
			if !f.isOccupied(r) {
				md = 1
			}
			modeHours[md]++
			for j := md * half; j < (md+1)*half; j++ {
				sumRow[md][j] += buf[j]
			}
			meas += r.y[q]
			s.Hours++
		}
		if !f.ok[q] || s.Hours == 0 {
			nan := Num(math.NaN())
			s.Baseline, s.Measured, s.Avoided, s.AvoidedPct, s.U68, s.U90, s.FSU68, s.FSU90, s.RegU68, s.RegU90 = nan, nan, nan, nan, nan, nan, nan, nan, nan, nan
			s.Finding = FindingNoModel
			md.Savings = append(md.Savings, s)
			continue
		}
		s.Baseline, s.Measured, s.Avoided = Num(base), Num(meas), Num(base-meas)
		s.AvoidedPct = pct(base-meas, base)
		s.U68 = Num(savingsU(s.Fit, s.Hours, base, 0.68))
		s.U90 = Num(savingsU(s.Fit, s.Hours, base, 0.90))
		s.FSU68, s.FSU90 = ratio(s.U68, s.Avoided), ratio(s.U90, s.Avoided)
		modes := make([]modeVar, 2)
		for md := range modes {
			modes[md] = modeVar{sigma2: f.modeSigma2[q][md], m: modeHours[md], quad: f.fits[q].quad(sumRow[md])}
		}
		s.RegU68 = Num(predictionU(s.Fit, modes, 0.68))
		s.RegU90 = Num(predictionU(s.Fit, modes, 0.90))
		s.Finding = finding(&s)
		if post != nil && post.ok[q] {
			s.Normalised = normalised(f, post, normal, q, norm)
		}
		md.Savings = append(md.Savings, s)
		if !s.Fit.MeetsG14 {
			warns = append(warns, fmt.Sprintf("the %s baseline does not meet Guideline 14's hourly limits (CV(RMSE) %s, limit 30 %%; NMBE %s, limit ±10 %%): its avoided figure is indicative only",
				quantityWords[q], fmtPct1(float64(s.Fit.CVRMSE)), fmtPct1(float64(s.Fit.NMBE))))
		}
	}

	// Extrapolation by driver.
	for _, d := range []struct {
		name     string
		lo, hi   float64
		value    func(*hourRow) float64
		min, max float64
	}{
		{drivers + "_dewpoint_c", f.dpMin, f.dpMax, func(r *hourRow) float64 { return r.dpC }, 0, 0},
		{drivers + "_temp_c", f.tMin, f.tMax, func(r *hourRow) float64 { return r.tC }, 0, 0},
		{"dry_air_kg", f.mMin * 1000, f.mMax * 1000, func(r *hourRow) float64 { return r.m * 1000 }, 0, 0},
	} {
		out := 0
		for i := range after {
			if v := d.value(&after[i]); v < d.lo || v > d.hi {
				out++
			}
		}
		share := float64(out) / float64(len(after))
		e := Extrapolation{Driver: d.name, Min: Num(d.lo), Max: Num(d.hi), Share: Num(share), Warn: share > extrapolationWarn}
		if e.Warn {
			warns = append(warns, fmt.Sprintf("%s of the after period's hours have %s outside the before period's range: the baseline is extrapolated there",
				fmtPct(share), driverWords[d.name]))
		}
		md.Extrapolation = append(md.Extrapolation, e)
	}
	unseen := 0
	for i := range after {
		if f.occupied[after[i].how] == 0 {
			unseen++
		}
	}
	if share := float64(unseen) / float64(len(after)); share > extrapolationWarn {
		md.Extrapolation = append(md.Extrapolation, Extrapolation{Driver: "hour_of_week", Min: Num(math.NaN()), Max: Num(math.NaN()), Share: Num(share), Warn: true})
		warns = append(warns, fmt.Sprintf("%s of the after period's hours fall on hours of the week the before period did not cover: their occupancy is judged by their airflow", fmtPct(share)))
	}
	return md, warns
}

var quantityWords = [nY]string{"reheat", "cooling input", "water removed", "cost"}

var driverWords = map[string]string{
	"entering_dewpoint_c": "an entering dew point",
	"entering_temp_c":     "an entering temperature",
	"outdoor_dewpoint_c":  "an outdoor dew point",
	"outdoor_temp_c":      "an outdoor temperature",
	"dry_air_kg":          "an airflow",
}

func sortRows(rows []hourRow) {
	slices.SortFunc(rows, func(a, b hourRow) int { return a.t.Compare(b.t) })
}

func pct(change, base float64) Num {
	if base == 0 || !finite(base) || !finite(change) {
		return Num(math.NaN())
	}
	return Num(100 * change / math.Abs(base))
}

func ratio(a, b Num) Num {
	if b == 0 || !finite(float64(a)) || !finite(float64(b)) {
		return Num(math.NaN())
	}
	return Num(math.Abs(float64(a) / float64(b)))
}

// U90Used is the half-width the finding is judged on: the larger of the
// Guideline 14 figure and the regression's prediction interval at 90 %.
func (s *Savings) U90Used() float64 {
	return math.Max(float64(s.U90), float64(s.RegU90))
}

func finding(s *Savings) string {
	a, u := float64(s.Avoided), s.U90Used()
	switch {
	case !finite(a):
		return FindingNoModel
	case !finite(u) || math.Abs(a) <= math.Max(u, 1e-9*math.Abs(float64(s.Baseline))):
		s.Significant = false
		return FindingNoChange
	case a > 0:
		s.Significant = true
		return FindingSaving
	default:
		s.Significant = true
		return FindingIncrease
	}
}

// normalised projects the baseline f and the after model post onto rows
// (the hours of the period norm names). Normalised to the after period,
// only hours with a measured value count, as in the avoided figure; to
// another period, every hour with drivers and airflow.
func normalised(f, post *modelForm, rows []hourRow, q int, norm normSpec) *Normalised {
	buf := make([]float64, f.cols())
	var b, r float64
	n := 0
	for i := range rows {
		if !finite(rows[i].y[q]) && norm.To == "after" {
			continue
		}
		b += f.predict(q, &rows[i], buf)
		r += post.predict(q, &rows[i], buf)
		n++
	}
	out := &Normalised{To: norm.To, Hours: n, Baseline: Num(b), Reporting: Num(r), Avoided: Num(b - r), AvoidedPct: pct(b-r, b), Fit: post.stats[q]}
	if norm.To == "period" {
		w := norm.Window
		out.Period = &w
	}
	if n == 0 {
		nan := Num(math.NaN())
		out.Baseline, out.Reporting, out.Avoided, out.AvoidedPct, out.U90 = nan, nan, nan, nan, nan
		return out
	}
	out.U90 = Num(math.Hypot(savingsU(f.stats[q], n, b, 0.90), savingsU(post.stats[q], n, r, 0.90)))
	return out
}

// humidityOf reports the supply dew point against the unit's target.
func humidityOf(spec *metrics.AirHandler, before, after []hourRow) Humidity {
	nan := Num(math.NaN())
	h := Humidity{TargetDPC: nan, MeanBefore: nan, MeanAfter: nan, AboveBefore: nan, AboveAfter: nan, Held: "unknown"}
	target := math.NaN()
	if spec != nil {
		switch spec.Target.Kind {
		case metrics.TargetSupplyDewPoint:
			h.TargetKind, target = "supply_dewpoint", spec.Target.DewPointC
		case metrics.TargetSpaceDewPoint:
			h.TargetKind, target = "space_dewpoint", spec.Target.DewPointC
		case metrics.TargetSpaceRH:
			h.TargetKind = "space_rh"
			p := spec.PressurePa
			if !(p > 0) {
				p = psychro.StandardPressurePa
			}
			if w, err := psychro.HumRatioFromRH(spec.Target.SpaceTempC, spec.Target.RH, p); err == nil {
				if td, err := psychro.DewPointFromHumRatio(w, p); err == nil {
					target = td
				}
			}
		}
	}
	h.TargetDPC = Num(target)
	var mean, above [2]Num
	for s, rows := range [2][]hourRow{before, after} {
		var sum float64
		n, hi := 0, 0
		for i := range rows {
			v := rows[i].supplyDPC
			if !finite(v) || rows[i].m <= 0 {
				continue
			}
			sum += v
			n++
			if v > target+targetTolK {
				hi++
			}
		}
		mean[s], above[s] = nan, nan
		if n > 0 {
			mean[s] = Num(sum / float64(n))
			if finite(target) {
				above[s] = Num(float64(hi) / float64(n))
			}
		}
	}
	h.MeanBefore, h.MeanAfter, h.AboveBefore, h.AboveAfter = mean[0], mean[1], above[0], above[1]
	if finite(float64(above[0])) && finite(float64(above[1])) {
		h.Held = "held"
		if float64(above[1]) > float64(above[0])+targetSlack {
			h.Held = "not held"
		}
	}
	return h
}

// fmtPct1 formats a fraction as a percentage with one decimal below 10 %.
func fmtPct1(v float64) string {
	if !finite(v) {
		return "–"
	}
	if math.Abs(v) < 0.1 {
		return fmt.Sprintf("%.1f %%", 100*v)
	}
	return fmt.Sprintf("%.0f %%", 100*v)
}

// siteSavings adds the units' savings of quantity q; the units' models are
// independent, so their half-widths add in quadrature.
func siteSavings(units []AirHandlerComparison, q int) Savings {
	s := Savings{Quantity: yNames[q], Fit: FitStats{MeanY: Num(math.NaN()), CVRMSE: Num(math.NaN()), NMBE: Num(math.NaN()), R2: Num(math.NaN()), Rho: Num(math.NaN()), NEff: Num(math.NaN())}}
	var b, m, u68, u90, r68, r90 float64
	n := 0
	for i := range units {
		if units[i].Model == nil || len(units[i].Model.Savings) <= q {
			continue
		}
		x := units[i].Model.Savings[q]
		if x.Finding == FindingNoModel {
			continue
		}
		n++
		s.Hours += x.Hours
		b += float64(x.Baseline)
		m += float64(x.Measured)
		u68 += float64(x.U68) * float64(x.U68)
		u90 += float64(x.U90) * float64(x.U90)
		r68 += float64(x.RegU68) * float64(x.RegU68)
		r90 += float64(x.RegU90) * float64(x.RegU90)
	}
	if n == 0 {
		nan := Num(math.NaN())
		s.Baseline, s.Measured, s.Avoided, s.AvoidedPct, s.U68, s.U90, s.FSU68, s.FSU90, s.RegU68, s.RegU90 = nan, nan, nan, nan, nan, nan, nan, nan, nan, nan
		s.Finding = FindingNoModel
		return s
	}
	s.Baseline, s.Measured, s.Avoided, s.AvoidedPct = Num(b), Num(m), Num(b-m), pct(b-m, b)
	s.U68, s.U90 = Num(math.Sqrt(u68)), Num(math.Sqrt(u90))
	s.RegU68, s.RegU90 = Num(math.Sqrt(r68)), Num(math.Sqrt(r90))
	s.FSU68, s.FSU90 = ratio(s.U68, s.Avoided), ratio(s.U90, s.Avoided)
	s.Finding = finding(&s)
	return s
}
