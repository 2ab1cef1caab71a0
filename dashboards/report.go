package dashboards

import (
	"cmp"
	"context"
	"fmt"
	"html/template"
	"io"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// ReportOptions configures a report.
type ReportOptions struct {
	Display   Display   // units of temperatures and water
	Generated time.Time // shown on the title page; ongoing alerts last until then (zero: now)
	// Paper is "a4" or "letter"; empty picks letter for IP display and A4 for SI.
	Paper string
	// Source says where the results were read, e.g. "embedded store site.db". Optional.
	Source string
	// Trended lists, per air handler id, the roles that have a trend point
	// (metrics.Role names), so the assumptions can say what was measured and
	// what was modelled. Optional.
	Trended map[string][]string
	// Notes are more assumptions to state, e.g. how the site's pressure was set.
	Notes []Assumption
	// MaxAlerts is how many alerts each air handler lists, most money
	// first (0: 3). Each tells two hours' reasons (metrics.Alert.Told), so
	// three keep an air handler's second sheet on one printed page; the
	// table of alert kinds above them counts every alert.
	MaxAlerts int
	// TopFindings is how many air handlers get a sentence in the summary (0: 5).
	TopFindings int
	// Progress, when set, is called after each air handler's part is read.
	Progress func(done, total int)
}

// Measure keys, in the order the report lists them.
const (
	MeasureTargetControl = "target_control"
	MeasureCoilReset     = "coil_reset"
	MeasureReheatEnable  = "reheat_enable"
	MeasureRecoveredHeat = "recovered_heat"
)

// Energy is purchased energy with its money and CO2.
type Energy struct {
	ElectricityKWh, FuelKWh, Cost, CO2Kg float64
}

func (e Energy) scaled(f float64) Energy {
	return Energy{ElectricityKWh: e.ElectricityKWh * f, FuelKWh: e.FuelKWh * f, Cost: e.Cost * f, CO2Kg: e.CO2Kg * f}
}

func (e *Energy) add(o Energy) {
	e.ElectricityKWh += o.ElectricityKWh
	e.FuelKWh += o.FuelKWh
	e.Cost += o.Cost
	e.CO2Kg += o.CO2Kg
}

// Measure is a candidate measure with the savings estimated from the
// period's hours.
type Measure struct {
	Key          string
	Title        string
	Short        string  // column heading
	Action       string  // what would be done
	Basis        string  // how the figure is computed from the hours
	Energy               // over the period
	Annual       float64 // Cost × the annualising factor
	ByAirHandler map[string]Energy
	Hours        float64 // hours that contribute (for the reheat enable logic: time without humidity need)
}

// AirHandlerReport is one air handler's part of the report.
type AirHandlerReport struct {
	AirHandler AirHandler
	Row        AirHandlerRow // its overview row: rank and totals
	Hours      *AirHandlerHours
	Charts     AirHandlerCharts
	Psy        template.HTML
	States     int             // hours on the psychrometric chart
	Alerts     []Alert         // overlapping the period, most money first
	Flags      map[string]int  // hours per data-quality flag
	CostU95    float64         // 95 % half-width of the avoidable cost's reheat part
	Finding    string          // the summary sentence
	clock      [24]float64     // time without humidity need per local hour of day
	days       map[string]bool // local days with such time
}

// Annual is the annualised estimate: the period's figures × Factor.
type Annual struct {
	Factor                                float64 // 365 / days in the period
	Days                                  float64
	Cost, CostAvoidable, CostAvoidableU95 float64
	ReheatAvoidKWh, ReheatAvoidKWhU95     float64
	CoolingAvoidKWh, CO2AvoidKg           float64
}

// Report is everything the report states, computed from one period's hours.
type Report struct {
	Site        *Site
	Period      Period
	Display     Display
	Generated   time.Time
	Overview    *Overview
	AirHandlers []AirHandlerReport // in rank order, most avoidable cost first
	Annual      Annual
	Measures    []Measure
	opt         ReportOptions
}

// WriteReport writes the self-contained HTML report of site over p.
func WriteReport(ctx context.Context, w io.Writer, site *Site, res Results, p Period, opt ReportOptions) error {
	r, err := BuildReport(ctx, site, res, p, opt)
	if err != nil {
		return err
	}
	return r.WriteHTML(w)
}

// BuildReport reads the period's hours and alerts and computes the report.
func BuildReport(ctx context.Context, site *Site, res Results, p Period, opt ReportOptions) (*Report, error) {
	if site == nil || res == nil {
		return nil, fmt.Errorf("report: a site and a results source are required")
	}
	if site.Zone == nil {
		s := *site
		s.Zone = time.UTC
		site = &s
	}
	if _, _, err := paperSize(opt.Paper, opt.Display); err != nil {
		return nil, err
	}
	if opt.Generated.IsZero() {
		opt.Generated = time.Now()
	}
	if opt.MaxAlerts <= 0 {
		opt.MaxAlerts = 3
	}
	if opt.TopFindings <= 0 {
		opt.TopFindings = 5
	}
	ov, err := BuildOverview(ctx, site, res, p)
	if err != nil {
		return nil, err
	}
	r := &Report{Site: site, Period: p, Display: opt.Display, Generated: opt.Generated, Overview: ov, opt: opt}
	index := map[string]int{}
	for i, row := range ov.AirHandlers {
		u, _ := site.AirHandler(row.ID)
		r.AirHandlers = append(r.AirHandlers, AirHandlerReport{AirHandler: u, Row: row, Flags: map[string]int{}, days: map[string]bool{}})
		index[row.ID] = i
	}
	r.Measures = []Measure{
		{Key: MeasureTargetControl, ByAirHandler: map[string]Energy{}},
		{Key: MeasureCoilReset, ByAirHandler: map[string]Energy{}},
		{Key: MeasureReheatEnable, ByAirHandler: map[string]Energy{}},
		{Key: MeasureRecoveredHeat, ByAirHandler: map[string]Energy{}},
	}
	err = res.Hours(ctx, "", p.From, p.To, func(rec *metrics.Record) error {
		i, ok := index[rec.AHU]
		if !ok {
			return nil
		}
		r.addHour(&r.AirHandlers[i], rec)
		return nil
	})
	if err != nil {
		return nil, err
	}
	for i := range r.AirHandlers {
		if err := r.airHandlerDetail(ctx, res, &r.AirHandlers[i]); err != nil {
			return nil, err
		}
		if opt.Progress != nil {
			opt.Progress(i+1, len(r.AirHandlers))
		}
	}
	r.annualise()
	r.describeMeasures()
	return r, nil
}

// nz is v, or 0 when v is missing.
func nz(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0
	}
	return v
}

func clamp01(v float64) float64 { return math.Max(0, math.Min(1, nz(v))) }

// reheatPrice returns the price and CO2 factor of one kWh of purchased
// reheat input of unit u, and whether it is fuel.
func reheatPrice(u AirHandler) (price, co2 float64, fuel bool) {
	if u.Spec == nil {
		return 0, 0, false
	}
	pr := u.Spec.Prices
	switch u.Spec.Reheat {
	case metrics.ReheatElectric:
		return pr.ElectricityPerKWh, pr.ElectricityCO2KgPerKWh, false
	case metrics.ReheatHotWater:
		return pr.FuelPerKWh, pr.FuelCO2KgPerKWh, true
	}
	return 0, 0, false
}

// priced turns electricity and reheat input into an Energy for unit u.
func priced(u AirHandler, elecKWh, reheatInKWh float64) Energy {
	var e Energy
	price, co2, fuel := reheatPrice(u)
	if fuel {
		e.FuelKWh = reheatInKWh
	} else {
		elecKWh += reheatInKWh
	}
	e.ElectricityKWh = elecKWh
	var pe, ce float64
	if u.Spec != nil {
		pe, ce = u.Spec.Prices.ElectricityPerKWh, u.Spec.Prices.ElectricityCO2KgPerKWh
	}
	e.Cost = elecKWh * pe
	e.CO2Kg = elecKWh * ce
	if fuel {
		e.Cost += reheatInKWh * price
		e.CO2Kg += reheatInKWh * co2
	}
	return e
}

// addHour adds one record to the measures, the flags and the uncertainty
// of the avoidable cost. Each hour's purchased reheat input is split in the
// proportion of its avoidable and needed reheat; its simultaneous heating
// and cooling in the proportion of the time the humidity target did not
// need (shc_unneeded_h / shc_h).
func (r *Report) addHour(ur *AirHandlerReport, rec *metrics.Record) {
	u := ur.AirHandler
	for _, f := range rec.Flags {
		ur.Flags[f]++
	}
	reheat, reheatIn := nz(rec.ReheatKWh), nz(rec.ReheatInputKWh)
	avoidShare := 0.0
	if reheat > 0 {
		avoidShare = clamp01(nz(rec.ReheatAvoidKWh) / reheat)
	}
	avoidIn := reheatIn * avoidShare
	neededIn := math.Max(0, reheatIn-avoidIn)
	coolAvoid := nz(rec.CoolingAvoidKWh)
	unneeded := 0.0
	if shc := nz(rec.SHCHours); shc > 0 {
		unneeded = clamp01(nz(rec.SHCUnneededH) / shc)
	}
	price, _, _ := reheatPrice(u)
	if reheat > 0 {
		ur.CostU95 += price * nz(rec.ReheatAvoidKWhU95) * reheatIn / reheat
	}

	// The avoidable cooling is electricity; the rest of the hour's
	// avoidable money and CO2 is its avoidable reheat input's, as the
	// engine priced it step by step.
	var pe, ce float64
	if u.Spec != nil {
		pe, ce = u.Spec.Prices.ElectricityPerKWh, u.Spec.Prices.ElectricityCO2KgPerKWh
	}
	cool := Energy{ElectricityKWh: coolAvoid, Cost: coolAvoid * pe, CO2Kg: coolAvoid * ce}
	reheatAvoid := priced(u, 0, avoidIn)
	reheatAvoid.Cost = math.Max(0, nz(rec.CostAvoidable)-cool.Cost)
	reheatAvoid.CO2Kg = math.Max(0, nz(rec.CO2AvoidableKg)-cool.CO2Kg)

	// Control to the target: all of the hour's avoidable energy.
	all := cool
	all.add(reheatAvoid)
	r.measureAdd(0, u.ID, all)
	// Coil reset: the avoidable cooling, and the avoidable reheat of the
	// time the target needed dehumidification (reheat of over-cooled air).
	coil := cool
	coil.add(reheatAvoid.scaled(1 - unneeded))
	r.measureAdd(1, u.ID, coil)
	// Reheat enable logic: the avoidable energy of the time the target
	// did not need.
	r.measureAdd(2, u.ID, all.scaled(unneeded))
	if h := nz(rec.SHCUnneededH); h > 0 {
		r.Measures[2].Hours += h
		local := rec.HourStart.In(r.Site.Zone)
		ur.clock[local.Hour()] += h
		ur.days[local.Format(dateLayout)] = true
	}
	// Recovered heat: the purchased input of the needed reheat.
	if u.Spec != nil && (u.Spec.Reheat == metrics.ReheatElectric || u.Spec.Reheat == metrics.ReheatHotWater) {
		r.measureAdd(3, u.ID, priced(u, 0, neededIn))
	}
}

func (r *Report) measureAdd(i int, id string, e Energy) {
	m := &r.Measures[i]
	m.add(e)
	x := m.ByAirHandler[id]
	x.add(e)
	m.ByAirHandler[id] = x
}

// airHandlerDetail reads one unit's hours as columns, its states and alerts,
// and draws its charts.
func (r *Report) airHandlerDetail(ctx context.Context, res Results, ur *AirHandlerReport) error {
	uh, err := BuildAirHandlerHours(ctx, ur.AirHandler, res, r.Period, r.Display)
	if err != nil {
		return err
	}
	ur.Hours = uh
	if ur.Charts, err = airHandlerCharts(uh, r.Display, r.Site.Zone); err != nil {
		return fmt.Errorf("report: charts of %s: %w", ur.AirHandler.ID, err)
	}
	pa := r.pressure(ur.AirHandler)
	st, err := AirHandlerStates(ctx, ur.AirHandler, res, r.Period, pa)
	if err != nil {
		return err
	}
	ur.States = len(st)
	if ur.Psy, err = psyChartSVG(ur.AirHandler, st, pa, r.Display, "enthalpy"); err != nil {
		return fmt.Errorf("report: psychrometric chart of %s: %w", ur.AirHandler.ID, err)
	}
	alerts, err := res.Alerts(ctx, AlertQuery{AHU: ur.AirHandler.ID, From: r.Period.From, To: r.Period.To})
	if err != nil {
		return err
	}
	slices.SortStableFunc(alerts, func(a, b Alert) int { return cmp.Compare(nz(b.Money), nz(a.Money)) })
	ur.Alerts = alerts
	ur.Finding = r.finding(ur)
	return nil
}

func (r *Report) pressure(u AirHandler) float64 {
	if u.Spec != nil && u.Spec.PressurePa > 0 {
		return u.Spec.PressurePa
	}
	if r.Site.PressurePa > 0 {
		return r.Site.PressurePa
	}
	return psychro.StandardPressurePa
}

// PeriodDays is the length of the period in days: whole local days when
// it runs from midnight to midnight, else its hours / 24.
func PeriodDays(p Period) float64 {
	if midnight(p.From).Equal(p.From) && midnight(p.To).Equal(p.To) {
		return float64(p.Days())
	}
	return p.Hours() / 24
}

// annualise scales the period's figures to a year: × 365 / days. The 95 %
// half-widths scale the same way (a bias does not average out).
func (r *Report) annualise() {
	t := r.Overview.Total
	a := Annual{Days: PeriodDays(r.Period)}
	if a.Days > 0 {
		a.Factor = 365 / a.Days
	}
	var u95 float64
	for _, ur := range r.AirHandlers {
		u95 += ur.CostU95
	}
	a.Cost = nz(float64(t.Cost)) * a.Factor
	a.CostAvoidable = nz(float64(t.CostAvoidable)) * a.Factor
	a.CostAvoidableU95 = u95 * a.Factor
	a.ReheatAvoidKWh = nz(float64(t.ReheatAvoid)) * a.Factor
	a.ReheatAvoidKWhU95 = nz(float64(t.ReheatAvoidU95)) * a.Factor
	a.CoolingAvoidKWh = nz(float64(t.CoolingAvoid)) * a.Factor
	a.CO2AvoidKg = nz(float64(t.CO2AvoidKg)) * a.Factor
	r.Annual = a
	for i := range r.Measures {
		r.Measures[i].Annual = r.Measures[i].Cost * a.Factor
	}
}

// describeMeasures words each measure and its basis.
func (r *Report) describeMeasures() {
	for i := range r.Measures {
		m := &r.Measures[i]
		switch m.Key {
		case MeasureTargetControl:
			m.Title, m.Short = "Control the coil and the reheat to the humidity target", "Target control"
			m.Action = "Let the coil leaving temperature rise to what the humidity target requires, and enable reheat only as far as the supply temperature and the target need it."
			m.Basis = "The sum over the period's hours of the avoidable cooling input and the purchased input of the avoidable reheat, priced as in the hourly records (cost_avoidable). An upper bound: a real sequence keeps a control margin, so part of it remains."
		case MeasureCoilReset:
			m.Title, m.Short = "Coil leaving temperature reset", "Coil reset"
			m.Action = "Raise the coil leaving temperature setpoint, hour by hour, toward the temperature the humidity target requires (for example a reset from the entering or space dew point)."
			m.Basis = "Each hour's avoidable cooling input, plus the purchased input of its avoidable reheat for the share of the hour in which the humidity target needed dehumidification (1 − shc_unneeded_h / shc_h): the reheat that only made up for over-cooling."
		case MeasureReheatEnable:
			m.Title, m.Short = "Reheat enable logic and schedules", "Reheat lockout"
			m.Action = "Lock reheat out, and let the coil leaving temperature rise to the supply temperature, whenever the entering air is already dry enough; review the unit's occupancy schedule for the hours listed."
			m.Basis = fmt.Sprintf("Each hour's avoidable reheat input and avoidable cooling input, times the share of its simultaneous heating and cooling that the humidity target did not need (shc_unneeded_h / shc_h); %s h of such time in the period%s.", fmtQty(m.Hours), r.clockText())
		case MeasureRecoveredHeat:
			m.Title, m.Short = "Reheat from recovered heat", "Recovered heat"
			m.Action = "Supply the reheat the humidity target does need from recovered heat (condenser or hot-gas heat, a heat pipe or run-around loop around the coil) instead of purchased electricity or boiler fuel."
			m.Basis = "Each hour's purchased reheat input for the needed part of its reheat (reheat input × (1 − avoidable reheat / reheat)), at the reheat's energy price; units whose reheat is already recovered or absent are left out. The recovery equipment's own fan and pump energy is not deducted."
		}
	}
}

// clockText names the local hours of the day in which the humidity target
// did not need the simultaneous heating and cooling, over all units.
func (r *Report) clockText() string {
	var clock [24]float64
	days := map[string]bool{}
	for _, ur := range r.AirHandlers {
		for h, v := range ur.clock {
			clock[h] += v
		}
		for d := range ur.days {
			days[d] = true
		}
	}
	s := hourRanges(clock)
	if s == "" {
		return ""
	}
	if !strings.HasPrefix(s, "at ") {
		s = "in the site's hours " + s
	}
	return fmt.Sprintf(", on %d days, %s", len(days), s)
}

// hourRanges writes the hours of the day with a non-zero value as ranges
// "20:00–08:00, 12:00–13:00" (a range may wrap past midnight).
func hourRanges(v [24]float64) string {
	on := func(h int) bool { return v[(h+24)%24] > 0 }
	n := 0
	for h := range 24 {
		if on(h) {
			n++
		}
	}
	switch n {
	case 0:
		return ""
	case 24:
		return "at every hour of the day"
	}
	type run struct{ from, to int }
	var runs []run
	// Start from an hour that is off so that a range across midnight is one range.
	start := 0
	for on(start) {
		start++
	}
	for k := 0; k < 24; {
		h := (start + k) % 24
		if !on(h) {
			k++
			continue
		}
		j := k
		for j < 24 && on((start+j)%24) {
			j++
		}
		runs = append(runs, run{h, (start + j) % 24})
		k = j
	}
	slices.SortFunc(runs, func(a, b run) int { return a.from - b.from })
	parts := make([]string, len(runs))
	for i, r := range runs {
		parts[i] = fmt.Sprintf("%02d:00–%02d:00", r.from, r.to)
	}
	return strings.Join(parts, ", ")
}

// finding is the plain-language sentence about one air handler.
func (r *Report) finding(ur *AirHandlerReport) string {
	t := ur.Row.Totals
	name := ur.AirHandler.Name
	if name != ur.AirHandler.ID {
		name += " (" + ur.AirHandler.ID + ")"
	}
	cur := r.Site.Currency
	if t.Hours == 0 {
		return name + " has no results in this period."
	}
	reheat, avoid := nz(float64(t.ReheatKWh)), nz(float64(t.ReheatAvoid))
	cool, cost := nz(float64(t.CoolingAvoid)), nz(float64(t.CostAvoidable))
	recovered := ur.AirHandler.Spec != nil && ur.AirHandler.Spec.Reheat == metrics.ReheatRecovered
	var b strings.Builder
	switch {
	case reheat > 0 && avoid > 0:
		fmt.Fprintf(&b, "%s reheated %s kWh, of which %s kWh (%s) the humidity target did not need", name, fmtQty(reheat), fmtQty(avoid), fmtPct(avoid/reheat))
		if cool > 0 {
			fmt.Fprintf(&b, ", and spent %s kWh of cooling input making the air colder than needed", fmtQty(cool))
		}
	case reheat > 0:
		fmt.Fprintf(&b, "%s reheated %s kWh, all of it needed by the humidity target", name, fmtQty(reheat))
		if cool > 0 {
			fmt.Fprintf(&b, ", and spent %s kWh of cooling input making the air colder than needed", fmtQty(cool))
		}
	case cool > 0:
		fmt.Fprintf(&b, "%s ran no reheat, but spent %s kWh of cooling input making the air colder than the humidity target needed", name, fmtQty(cool))
	default:
		return name + " shows no avoidable energy in this period."
	}
	fmt.Fprintf(&b, ": %s %s avoidable in the period", fmtMoney(cost), cur)
	if recovered && avoid > 0 {
		b.WriteString(" (its reheat is recovered heat, so only the avoidable cooling is priced)")
	}
	b.WriteString(".")
	return b.String()
}
