package compare

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Comparing two periods around a sequence change.
//
// The weather differs between any two periods, and a cool-and-reheat air
// handler uses more reheat when the entering air is more humid, so raw
// totals mix the effect of the sequence with the effect of the weather.
// Compare removes the second with a bin method:
//
//  1. Each hour of either period goes into a bin of its entering-air dew
//     point (1 K wide unless told otherwise). Hours without an entering
//     dew point, or with fewer covered steps than the unit's minimum
//     coverage, are left out (they are counted and reported).
//  2. A bin is used when both periods have at least MinHours hours in it
//     (the "common" bins). Hours in other bins are left out of the
//     normalised figures; the share of each period's hours that falls in
//     common bins is reported as its coverage.
//  3. In every common bin, the mean hourly value of each quantity is taken
//     in each period.
//  4. Both periods' bin means are weighted by the BEFORE period's hours per
//     bin and summed. The before figure is then the before period's own
//     total over its common-bin hours; the after figure answers "what would
//     the new sequence have used under the before period's humidity
//     conditions". Change = after - before, and its percentage is of the
//     before figure.
//
// Ratios (the effective EER) are ratios of the normalised sums, never means
// of hourly ratios. This is a standard bin-method weather normalisation;
// it corrects for the mix of entering humidity only, not for other
// differences (occupancy, outdoor temperature at equal dew point, set
// points changed at the same time).
//
// Uncertainty has two parts, reported apart:
//   - measurement: the per-hour 95 % half-widths (reheat, avoidable reheat,
//     water) are normalised like the values (bin means weighted by the
//     before hours); within a period they add linearly, as in Sums
//     (a sensor's bias repeats from hour to hour). For the change the two
//     periods are combined in quadrature: the same sensors serve both
//     periods, so their errors are positively correlated or independent,
//     and for any correlation between 0 and 1 the quadrature sum is the
//     larger bound.
//   - sampling: a bin mean from a few hours is itself uncertain. With s the
//     standard deviation of the hourly values in a bin and n its hours,
//     u95 = 1.96 sqrt(sum_bins N_before^2 (s_a^2/n_a + s_b^2/n_b)). Hours
//     are treated as independent; consecutive hours are not, so the true
//     sampling spread is larger than this figure.

// ErrPeriodsOverlap is returned when the before and after periods share
// time: no hour can be both.
var ErrPeriodsOverlap = errors.New("the before and after periods overlap")

// ErrNoHours is returned when a period has no stored hour to compare.
var ErrNoHours = errors.New("no hours to compare")

// Defaults of Options.
const (
	DefaultBinK        = 1.0
	DefaultMinHours    = 3
	defaultMinCoverage = 0.9
	// coveredWarn: below this share of a period's usable hours in common
	// bins, the output warns that the figures describe part of the period.
	coveredWarn = 0.5
	// z95 is the two-sided 95 % point of the normal distribution.
	z95 = 1.959964
)

// BinMethod states the method in plain words, for the outputs.
const BinMethod = "Normalised for the entering-air humidity load by the bin method: " +
	"hours are grouped by entering dew point; only bins with enough hours in both periods are used; " +
	"in each bin the mean hourly value of each period is taken, and both periods' bin means are weighted " +
	"by the before period's hours per bin. The after figure is what the new sequence would have used " +
	"under the before period's humidity conditions. Effective EER is the ratio of the normalised sums."

// Options tunes Compare; zero values take the defaults.
type Options struct {
	BinK     float64 // width of the dew-point bins, K (default 1)
	MinHours int     // hours a bin needs in each period to be used (default 3, at least 2)
	// MinCoverage is the share of covered steps an hour needs to be used
	// (default: each unit's configured minimum coverage, else 0.9).
	// Energies of partly covered hours are not scaled up, so they would
	// pull a bin's mean down.
	MinCoverage float64
	AirHandlers []string // compare only these units (default: every configured unit)
	// NormaliseTo also reports the savings normalised to the drivers of
	// "before", "after" or "period" (Input.Normal; default: none).
	NormaliseTo string
}

// Comparison is the before/after comparison of a site.
type Comparison struct {
	Site     string `json:"site"`
	Currency string `json:"currency"`
	Before   Window `json:"before"`
	After    Window `json:"after"`
	BinK     Num    `json:"bin_width_k"`
	MinHours int    `json:"min_hours_per_bin"`
	// Method states the headline method (the baseline model), BinMethod
	// the check.
	Method    string `json:"method"`
	BinMethod string `json:"bin_method"`
	Normalise string `json:"normalised_to,omitempty"` // before, after or period, when asked
	// NormalPeriod is the period normalised to, for "period".
	NormalPeriod *Window                `json:"normalised_period,omitempty"`
	AirHandlers  []AirHandlerComparison `json:"units"`
	// Total sums the units: the models' savings, and the bin check of the
	// units that could be compared (a unit without common bins is left
	// out of it and named in Warnings).
	Total    SiteTotal `json:"total"`
	Warnings []string  `json:"warnings"`
}

// BinCheck is the bin method's comparison of one air handler (or of the
// site total) before and after.
type BinCheck struct {
	ID          string `json:"id"`
	Name        string `json:"name"`
	MinCoverage Num    `json:"min_coverage"`
	// Raw totals of every stored hour of each period, not normalised.
	RawBefore Sums `json:"raw_before"`
	RawAfter  Sums `json:"raw_after"`
	// Hours of each period, and how many were usable and in common bins.
	HoursBefore SideHours `json:"hours_before"`
	HoursAfter  SideHours `json:"hours_after"`
	// Normalised figures: the before period's common-bin hours, and the
	// after period's bin means weighted by them.
	Reheat       Change    `json:"reheat_kwh"`
	ReheatAvoid  Change    `json:"reheat_avoidable_kwh"`
	CoolingInput Change    `json:"cooling_input_kwh"`
	CoilTotal    Change    `json:"coil_total_kwh"`
	ReheatInput  Change    `json:"reheat_input_kwh"`
	Water        Change    `json:"water_removed_kg"`
	Cost         Change    `json:"cost"`
	EER          EERChange `json:"effective_eer"` // over the hours with a cooling input
	CommonBins   int       `json:"common_bins"`
	Bins         []BinRow  `json:"bins,omitempty"`
	Compared     bool      `json:"compared"` // false: no common bin, no normalised figure
	Warnings     []string  `json:"warnings"`
	// The EER's coil, reheat and reheat input, normalised over the hours
	// with a cooling input (the hours CoolingInput sums).
	eerCoil, eerReheat, eerReheatIn Change
}

// SideHours counts one period's hours of a unit.
type SideHours struct {
	Stored      int `json:"stored"`
	NoDewPoint  int `json:"no_entering_dewpoint"`
	LowCoverage int `json:"low_coverage"`
	Usable      int `json:"usable"`
	InCommon    int `json:"in_common_bins"`
	// Covered is InCommon / Usable: the share of the period's usable hours
	// that the normalised figures describe.
	Covered Num `json:"covered"`
}

// Change is one quantity before and after, normalised.
type Change struct {
	Before    Num `json:"before"`
	After     Num `json:"after_normalised"`
	Change    Num `json:"change"`
	ChangePct Num `json:"change_pct"` // of Before, percent
	// 95 % half-widths from the hourly measurement uncertainty (missing
	// for quantities without one), and from bin sampling.
	BeforeU95   Num `json:"before_u95"`
	AfterU95    Num `json:"after_u95"`
	ChangeU95   Num `json:"change_u95"`
	SamplingU95 Num `json:"change_sampling_u95"`
}

// EERChange is the effective EER of the normalised sums, Btu/Wh.
type EERChange struct {
	Before    Num `json:"before"`
	After     Num `json:"after_normalised"`
	Change    Num `json:"change"`
	ChangePct Num `json:"change_pct"`
}

// BinRow is one dew-point bin of a unit: [LoC, HiC).
type BinRow struct {
	LoC         Num  `json:"dewpoint_from_c"`
	HiC         Num  `json:"dewpoint_to_c"`
	HoursBefore int  `json:"hours_before"`
	HoursAfter  int  `json:"hours_after"`
	Common      bool `json:"common"`
	// Mean reheat per hour in the bin, kWh.
	ReheatBefore Num `json:"reheat_kwh_per_h_before"`
	ReheatAfter  Num `json:"reheat_kwh_per_h_after"`
}

// The quantities averaged per bin.
const (
	qReheat = iota
	qReheatU95
	qAvoid
	qAvoidU95
	qCooling
	qCoil
	qReheatInput
	qWater
	qWaterU95
	qCost
	// The EER's terms over the hours with a cooling input (NaN, so not
	// averaged, in the others).
	qEERCoil
	qEERReheat
	qEERReheatInput
	nQty
)

func quantities(r *metrics.Record) [nQty]float64 {
	q := [nQty]float64{
		qReheat: r.ReheatKWh, qReheatU95: r.ReheatKWhU95, qAvoid: r.ReheatAvoidKWh, qAvoidU95: r.ReheatAvoidKWhU95,
		qCooling: r.CoolingInputKWh, qCoil: r.CoilTotalKWh, qReheatInput: r.ReheatInputKWh,
		qWater: r.WaterRemovedKg, qWaterU95: r.WaterRemovedKgU95, qCost: r.Cost,
		qEERCoil: math.NaN(), qEERReheat: math.NaN(), qEERReheatInput: math.NaN(),
	}
	if r.HasCoolingInput() {
		q[qEERCoil], q[qEERReheat], q[qEERReheatInput] = r.CoilTotalKWh, r.ReheatKWh, r.ReheatInputKWh
	}
	return q
}

// moments keeps a running mean and sum of squared deviations (Welford),
// which stay accurate where sums of squares would cancel.
type moments struct {
	n        int
	mean, m2 float64
}

func (m *moments) add(v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	m.n++
	d := v - m.mean
	m.mean += d / float64(m.n)
	m.m2 += d * (v - m.mean)
}

// varianceOfMean is s^2/n, the squared standard error of the mean (0 with
// fewer than two values, where no spread can be estimated).
func (m moments) varianceOfMean() float64 {
	if m.n < 2 {
		return 0
	}
	return math.Max(0, m.m2/float64(m.n-1)) / float64(m.n)
}

type dpBin struct {
	hours int
	q     [nQty]moments
}

type side struct {
	raw   Sums
	hours SideHours
	bins  map[int]*dpBin
}

func newSide() side { return side{raw: NewSums(), bins: map[int]*dpBin{}} }

func (s *side) add(r *metrics.Record, binK, minCov float64) {
	s.hours.Stored++
	s.raw.Add(r)
	switch {
	case math.IsNaN(r.EnteringDewPointC) || math.IsInf(r.EnteringDewPointC, 0):
		s.hours.NoDewPoint++
		return
	case !(r.Coverage >= minCov): // NaN coverage fails too
		s.hours.LowCoverage++
		return
	}
	s.hours.Usable++
	k := int(math.Floor(r.EnteringDewPointC / binK))
	b := s.bins[k]
	if b == nil {
		b = &dpBin{}
		s.bins[k] = b
	}
	b.hours++
	v := quantities(r)
	for i := range v {
		b.q[i].add(v[i])
	}
}

// Analysis collects the hours of two periods and compares them. Make one
// with New, give it every stored hour of each period with Add (in any
// order), then call Result.
type Analysis struct {
	in          Input
	airHandlers []AirHandler
	index       map[string]int
	sides       [][2]side
	minCov      []float64
	raw         [2]Sums
	rows        [][3][]hourRow
	suspect     [][2]int
	pressure    []float64
}

// New checks the input and returns an empty analysis.
func New(in Input) (*Analysis, error) {
	opt := &in.Options
	if opt.BinK == 0 {
		opt.BinK = DefaultBinK
	}
	if opt.MinHours == 0 {
		opt.MinHours = DefaultMinHours
	}
	switch {
	case !(opt.BinK > 0) || math.IsInf(opt.BinK, 0):
		return nil, fmt.Errorf("compare: bin width %g K: use a positive width such as 1", opt.BinK)
	case opt.MinHours < 2:
		return nil, fmt.Errorf("compare: minimum hours per bin %d: use 2 or more (a bin needs two hours to show its spread)", opt.MinHours)
	case opt.MinCoverage < 0 || opt.MinCoverage > 1 || math.IsNaN(opt.MinCoverage):
		return nil, fmt.Errorf("compare: minimum coverage %g: use a share between 0 and 1", opt.MinCoverage)
	case opt.NormaliseTo != "" && opt.NormaliseTo != "before" && opt.NormaliseTo != "after" && opt.NormaliseTo != "period":
		return nil, fmt.Errorf("compare: normalise to %q: use before, after or period", opt.NormaliseTo)
	case opt.NormaliseTo == "period" && !in.Normal.To.After(in.Normal.From):
		return nil, fmt.Errorf("compare: the period to normalise to %s is empty or ends before it starts: give its start first", in.Normal.Label)
	}
	if in.Zone == nil {
		in.Zone = time.UTC
	}
	before, after := in.Before, in.After
	for _, p := range []struct {
		name string
		p    Window
	}{{"before", before}, {"after", after}} {
		if !p.p.To.After(p.p.From) {
			return nil, fmt.Errorf("compare: the %s period %s is empty or ends before it starts: give its start first", p.name, p.p.Label)
		}
	}
	if before.From.Before(after.To) && after.From.Before(before.To) {
		return nil, fmt.Errorf("%w: before %s, after %s; choose periods that do not share any hour",
			ErrPeriodsOverlap, before.Label, after.Label)
	}
	units := in.AirHandlers
	if len(opt.AirHandlers) > 0 {
		units = nil
		for _, id := range opt.AirHandlers {
			i := slices.IndexFunc(in.AirHandlers, func(u AirHandler) bool { return u.ID == id })
			if i < 0 {
				return nil, fmt.Errorf("compare: no air handler %q in the configuration", id)
			}
			units = append(units, in.AirHandlers[i])
		}
	}
	a := &Analysis{in: in, airHandlers: units, index: map[string]int{}, sides: make([][2]side, len(units)),
		minCov: make([]float64, len(units)), raw: [2]Sums{NewSums(), NewSums()}, rows: make([][3][]hourRow, len(units)), suspect: make([][2]int, len(units))}
	for i, u := range units {
		a.index[u.ID] = i
		a.sides[i] = [2]side{newSide(), newSide()}
		a.pressure = append(a.pressure, psychro.StandardPressurePa)
		if u.Spec != nil && u.Spec.PressurePa > 0 {
			a.pressure[i] = u.Spec.PressurePa
		}
		a.minCov[i] = defaultMinCoverage
		if u.Spec != nil && u.Spec.Thresholds.MinCoverage > 0 {
			a.minCov[i] = u.Spec.Thresholds.MinCoverage
		}
		if opt.MinCoverage > 0 {
			a.minCov[i] = opt.MinCoverage
		}
	}
	return a, nil
}

// AirHandlers returns the units compared, in configuration order.
func (a *Analysis) AirHandlers() []AirHandler { return a.airHandlers }

// Add takes one stored hour of period s. Hours of other units, and hours
// outside the period's window, are ignored. r is not kept.
func (a *Analysis) Add(s Side, r *metrics.Record) {
	w := a.window(s)
	i, ok := a.index[r.AHU]
	if !ok || s > Normal || r.HourStart.Before(w.From) || !r.HourStart.Before(w.To) {
		return
	}
	if s == Normal {
		// Only the drivers of a period normalised to count.
		if a.in.Options.NormaliseTo != "period" || suspect(r) {
			return
		}
		if row, ok := rowOf(r, a.minCov[i], a.pressure[i], a.in.Zone); ok {
			a.rows[i][s] = append(a.rows[i][s], row)
		}
		return
	}
	a.sides[i][s].add(r, a.in.Options.BinK, a.minCov[i])
	a.raw[s].Add(r)
	if suspect(r) {
		a.suspect[i][s]++
	} else if row, ok := rowOf(r, a.minCov[i], a.pressure[i], a.in.Zone); ok {
		a.rows[i][s] = append(a.rows[i][s], row)
	}
}

func (a *Analysis) window(s Side) Window {
	switch s {
	case After:
		return a.in.After
	case Normal:
		return a.in.Normal
	}
	return a.in.Before
}

// Result compares what was added.
func (a *Analysis) Result() (*Comparison, error) {
	in, opt := &a.in, a.in.Options
	before, after := in.Before, in.After
	c := &Comparison{Site: in.Site, Currency: in.Currency, Before: before, After: after,
		BinK: Num(opt.BinK), MinHours: opt.MinHours, Method: ModelMethod, BinMethod: BinMethod,
		Normalise: opt.NormaliseTo, Warnings: []string{}}
	norm := normSpec{To: opt.NormaliseTo}
	if opt.NormaliseTo == "period" {
		w := in.Normal
		c.NormalPeriod, norm.Window = &w, w
	}

	// A period without any usable hour cannot be compared at all.
	for k, p := range []Window{before, after} {
		stored, usable := 0, 0
		for i := range a.sides {
			stored += a.sides[i][k].hours.Stored
			usable += a.sides[i][k].hours.Usable
		}
		name := [2]string{"before", "after"}[k]
		if stored == 0 {
			return nil, fmt.Errorf("%w: no results are stored for the %s period %s; run dewline analyze (or the agent) over it first",
				ErrNoHours, name, p.Label)
		}
		if usable == 0 {
			return nil, fmt.Errorf("%w: none of the %d stored hours of the %s period %s has an entering dew point and enough coverage; check the entering temperature and humidity points",
				ErrNoHours, stored, name, p.Label)
		}
	}

	siteRaw := a.raw
	siteRaw[0].finish()
	siteRaw[1].finish()
	c.Total = SiteTotal{Savings: []Savings{},
		Bins: BinCheck{ID: "", Name: "Site", MinCoverage: Num(math.NaN()), RawBefore: siteRaw[0], RawAfter: siteRaw[1], Warnings: []string{}}}
	tot := newTotalSum()
	var binWarns []string
	for i, u := range a.airHandlers {
		bc := compareAirHandler(u, a.sides[i], opt, a.minCov[i])
		if !bc.Compared && len(a.airHandlers) > 1 {
			bc.Warnings = append(bc.Warnings, "left out of the site's normalised total")
		}
		for _, w := range bc.Warnings {
			binWarns = append(binWarns, u.Name+" ("+u.ID+"): bin check: "+w)
		}
		tot.add(&bc)
		uc := airHandlerResult(u, bc, a.rows[i], a.suspect[i], norm)
		for _, w := range uc.Warnings {
			c.Warnings = append(c.Warnings, u.Name+" ("+u.ID+"): "+w)
		}
		c.AirHandlers = append(c.AirHandlers, uc)
	}
	c.Warnings = append(c.Warnings, binWarns...)
	tot.finish(&c.Total.Bins)
	for q := 0; q < nY; q++ {
		c.Total.Savings = append(c.Total.Savings, siteSavings(c.AirHandlers, q))
	}
	if !c.Total.Bins.Compared {
		c.Warnings = append(c.Warnings, "bin check: no air handler has a dew-point bin with enough hours in both periods: there is nothing to normalise; choose longer periods, periods with more similar weather, or fewer hours per bin")
	}
	if after.From.Before(before.From) {
		c.Warnings = append(c.Warnings, "the after period comes before the before period; the change reads from the before period to the after period as given")
	}
	return c, nil
}

// compareAirHandler normalises one unit.
func compareAirHandler(u AirHandler, s [2]side, opt Options, minCov float64) BinCheck {
	b, a := &s[0], &s[1]
	b.raw.finish()
	a.raw.finish()
	uc := BinCheck{ID: u.ID, Name: u.Name, MinCoverage: Num(minCov), RawBefore: b.raw, RawAfter: a.raw, Warnings: []string{}}

	keys := make([]int, 0, len(b.bins)+len(a.bins))
	for k := range b.bins {
		keys = append(keys, k)
	}
	for k := range a.bins {
		if _, ok := b.bins[k]; !ok {
			keys = append(keys, k)
		}
	}
	slices.Sort(keys)
	var common []int
	for _, k := range keys {
		row := BinRow{LoC: Num(float64(k) * opt.BinK), HiC: Num(float64(k+1) * opt.BinK),
			ReheatBefore: Num(math.NaN()), ReheatAfter: Num(math.NaN())}
		if x := b.bins[k]; x != nil {
			row.HoursBefore = x.hours
			row.ReheatBefore = meanOrNaN(x.q[qReheat])
		}
		if x := a.bins[k]; x != nil {
			row.HoursAfter = x.hours
			row.ReheatAfter = meanOrNaN(x.q[qReheat])
		}
		row.Common = row.HoursBefore >= opt.MinHours && row.HoursAfter >= opt.MinHours
		if row.Common {
			common = append(common, k)
			b.hours.InCommon += row.HoursBefore
			a.hours.InCommon += row.HoursAfter
		}
		uc.Bins = append(uc.Bins, row)
	}
	uc.CommonBins = len(common)
	b.hours.Covered, a.hours.Covered = share(b.hours.InCommon, b.hours.Usable), share(a.hours.InCommon, a.hours.Usable)
	uc.HoursBefore, uc.HoursAfter = b.hours, a.hours
	uc.Compared = len(common) > 0

	norm := func(q, qU int) Change {
		return normalise(b.bins, a.bins, common, q, qU)
	}
	uc.Reheat = norm(qReheat, qReheatU95)
	uc.ReheatAvoid = norm(qAvoid, qAvoidU95)
	uc.CoolingInput = norm(qCooling, -1)
	uc.CoilTotal = norm(qCoil, -1)
	uc.ReheatInput = norm(qReheatInput, -1)
	uc.Water = norm(qWater, qWaterU95)
	uc.Cost = norm(qCost, -1)
	uc.eerCoil, uc.eerReheat, uc.eerReheatIn = norm(qEERCoil, -1), norm(qEERReheat, -1), norm(qEERReheatInput, -1)
	uc.EER = eerChange(uc.eerCoil, uc.eerReheat, uc.CoolingInput, uc.eerReheatIn)

	// What the reader must know before trusting the figures.
	for k, h := range [2]SideHours{b.hours, a.hours} {
		name := [2]string{"before", "after"}[k]
		switch {
		case h.Stored == 0:
			uc.Warnings = append(uc.Warnings, fmt.Sprintf("no results are stored for the %s period", name))
		case h.Usable == 0:
			uc.Warnings = append(uc.Warnings, fmt.Sprintf("none of the %s period's %d hours has an entering dew point and %s coverage", name, h.Stored, fmtPct(minCov)))
		case h.NoDewPoint+h.LowCoverage > 0:
			uc.Warnings = append(uc.Warnings, fmt.Sprintf("%d of the %s period's %d hours are left out (%d without an entering dew point, %d below %s coverage)",
				h.NoDewPoint+h.LowCoverage, name, h.Stored, h.NoDewPoint, h.LowCoverage, fmtPct(minCov)))
		}
	}
	// Hours without a cooling input next to hours with one: the sums and
	// the EER describe part of the period. (With none at all they are
	// unknown and show as such.)
	for k, raw := range [2]Sums{b.raw, a.raw} {
		if n := raw.NoCoolingInput; n > 0 && n < raw.Hours {
			uc.Warnings = append(uc.Warnings, fmt.Sprintf("%d of the %s period's %d hours have no cooling input (%s): their cost is left out of the sums, their coil out of the effective EER",
				n, [2]string{"before", "after"}[k], raw.Hours, metrics.FlagCoolingMissing))
		}
	}
	switch {
	case !uc.Compared && b.hours.Usable > 0 && a.hours.Usable > 0:
		uc.Warnings = append(uc.Warnings, fmt.Sprintf("no dew-point bin has %d hours in both periods: the periods' humidity conditions do not overlap enough to compare; choose longer periods or fewer hours per bin", opt.MinHours))
	case uc.Compared:
		for k, h := range [2]SideHours{b.hours, a.hours} {
			if float64(h.Covered) < coveredWarn {
				uc.Warnings = append(uc.Warnings, fmt.Sprintf("only %s of the %s period's usable hours fall in bins common to both periods; the normalised figures describe those hours only",
					fmtPct(float64(h.Covered)), [2]string{"before", "after"}[k]))
			}
		}
	}
	return uc
}

func meanOrNaN(m moments) Num {
	if m.n == 0 {
		return Num(math.NaN())
	}
	return Num(m.mean)
}

func share(part, whole int) Num {
	if whole == 0 {
		return Num(math.NaN())
	}
	return Num(float64(part) / float64(whole))
}

// normalise weights each period's bin means of quantity q (and of its
// half-width qU, -1 for none) by the before period's hours in the common
// bins. A common bin where a period has no value of q at all makes the
// figure unknown rather than silently smaller.
func normalise(before, after map[int]*dpBin, common []int, q, qU int) Change {
	nan := Num(math.NaN())
	c := Change{Before: nan, After: nan, Change: nan, ChangePct: nan, BeforeU95: nan, AfterU95: nan, ChangeU95: nan, SamplingU95: nan}
	if len(common) == 0 {
		return c
	}
	var sb, sa, ub, ua, sampVar float64
	known, knownU := true, qU >= 0
	for _, k := range common {
		bb, ab := before[k], after[k]
		w := float64(bb.hours)
		mb, ma := bb.q[q], ab.q[q]
		if mb.n == 0 || ma.n == 0 {
			known = false
			break
		}
		sb += w * mb.mean
		sa += w * ma.mean
		sampVar += w * w * (mb.varianceOfMean() + ma.varianceOfMean())
		if knownU {
			if bb.q[qU].n == 0 || ab.q[qU].n == 0 {
				knownU = false
			} else {
				ub += w * bb.q[qU].mean
				ua += w * ab.q[qU].mean
			}
		}
	}
	if !known {
		return c
	}
	c.Before, c.After, c.Change = Num(sb), Num(sa), Num(sa-sb)
	c.ChangePct = pctOf(sa-sb, sb)
	c.SamplingU95 = Num(z95 * math.Sqrt(sampVar))
	if knownU {
		c.BeforeU95, c.AfterU95, c.ChangeU95 = Num(ub), Num(ua), Num(math.Hypot(ub, ua))
	}
	return c
}

func pctOf(change, base float64) Num {
	if base == 0 || math.IsNaN(base) || math.IsNaN(change) {
		return Num(math.NaN())
	}
	return Num(100 * change / math.Abs(base))
}

// eerChange is the effective EER of the normalised sums in each period:
// 3.412 x (coil total - reheat) / (cooling input + reheat input), the
// same definition as the hourly field, of sums.
func eerChange(coil, reheat, cooling, reheatIn Change) EERChange {
	eer := func(coilKWh, reheatKWh, coolKWh, reheatInKWh Num) Num {
		in := float64(coolKWh)
		if !math.IsNaN(float64(reheatInKWh)) {
			in += float64(reheatInKWh)
		}
		num := float64(coilKWh - reheatKWh)
		if in == 0 || math.IsNaN(in) || math.IsNaN(num) {
			return Num(math.NaN())
		}
		return Num(psychro.COPToEER(num / in))
	}
	e := EERChange{Before: eer(coil.Before, reheat.Before, cooling.Before, reheatIn.Before),
		After: eer(coil.After, reheat.After, cooling.After, reheatIn.After)}
	e.Change = e.After - e.Before
	e.ChangePct = pctOf(float64(e.Change), float64(e.Before))
	return e
}

// totalSum adds the compared units into the site total.
type totalSum struct {
	before, after SideHours
	fields        [10]changeSum
	compared      int
	bins          int // common bins of the compared units
}

type changeSum struct {
	before, after, bU, aU, samp2 float64
	known, knownU                bool
}

func newTotalSum() *totalSum {
	t := &totalSum{}
	for i := range t.fields {
		t.fields[i] = changeSum{known: true, knownU: true}
	}
	return t
}

func (uc *BinCheck) changes() [10]*Change {
	return [10]*Change{&uc.Reheat, &uc.ReheatAvoid, &uc.CoolingInput, &uc.CoilTotal, &uc.ReheatInput, &uc.Water, &uc.Cost,
		&uc.eerCoil, &uc.eerReheat, &uc.eerReheatIn}
}

func (t *totalSum) add(uc *BinCheck) {
	for _, p := range [2]struct {
		src SideHours
		dst *SideHours
	}{{uc.HoursBefore, &t.before}, {uc.HoursAfter, &t.after}} {
		p.dst.Stored += p.src.Stored
		p.dst.NoDewPoint += p.src.NoDewPoint
		p.dst.LowCoverage += p.src.LowCoverage
		p.dst.Usable += p.src.Usable
		p.dst.InCommon += p.src.InCommon
	}
	if !uc.Compared {
		return
	}
	t.compared++
	t.bins += uc.CommonBins
	for i, c := range uc.changes() {
		f := &t.fields[i]
		if math.IsNaN(float64(c.Before)) {
			f.known = false
			continue
		}
		f.before += float64(c.Before)
		f.after += float64(c.After)
		f.samp2 += math.Pow(float64(c.SamplingU95), 2) // units sample independently
		if math.IsNaN(float64(c.BeforeU95)) {
			f.knownU = false
		} else { // linear across units, like Sums
			f.bU += float64(c.BeforeU95)
			f.aU += float64(c.AfterU95)
		}
	}
}

func (t *totalSum) finish(total *BinCheck) {
	t.before.Covered, t.after.Covered = share(t.before.InCommon, t.before.Usable), share(t.after.InCommon, t.after.Usable)
	total.HoursBefore, total.HoursAfter = t.before, t.after
	total.Compared = t.compared > 0
	total.CommonBins = t.bins
	nan := Num(math.NaN())
	for i, c := range total.changes() {
		f := t.fields[i]
		*c = Change{Before: nan, After: nan, Change: nan, ChangePct: nan, BeforeU95: nan, AfterU95: nan, ChangeU95: nan, SamplingU95: nan}
		if !total.Compared || !f.known {
			continue
		}
		c.Before, c.After, c.Change = Num(f.before), Num(f.after), Num(f.after-f.before)
		c.ChangePct = pctOf(f.after-f.before, f.before)
		c.SamplingU95 = Num(math.Sqrt(f.samp2))
		if f.knownU {
			c.BeforeU95, c.AfterU95, c.ChangeU95 = Num(f.bU), Num(f.aU), Num(math.Hypot(f.bU, f.aU))
		}
	}
	total.EER = eerChange(total.eerCoil, total.eerReheat, total.CoolingInput, total.eerReheatIn)
}
