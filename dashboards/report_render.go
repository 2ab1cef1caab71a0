package dashboards

import (
	"bufio"
	"cmp"
	"embed"
	"fmt"
	"html/template"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// The report is one HTML file: its stylesheet is inlined, its charts are
// inline SVG, it has no script and refers to nothing outside itself, so it
// can be mailed, archived and printed as it is.
//
//go:embed templates/report_head.html templates/report.html templates/report.css templates/portfolio_report.html
var reportAssets embed.FS

// --- the HTML ---

// reportTemplate is parsed once; it uses no functions beyond the
// template language's own, so every figure arrives formatted.
var reportTemplate = template.Must(template.New("").ParseFS(reportAssets, "templates/report_head.html", "templates/report.html"))

// PageTitle is the title of the report's page (templates/report_head.html).
func (v *reportView) PageTitle() string { return v.Title + " · " + v.Site + " · " + v.Period }

// WriteHTML writes the report as one self-contained HTML file.
func (r *Report) WriteHTML(w io.Writer) error {
	v, err := r.view()
	if err != nil {
		return err
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	if err := reportTemplate.ExecuteTemplate(bw, "report.html", v); err != nil {
		return fmt.Errorf("report: render: %w", err)
	}
	return bw.Flush()
}

// Views: everything formatted for the template.

type rvCard struct{ ID, Label, Value, Unit, Raw string }

type rvRow struct { // a label and its value, with the raw value for readers
	Label, Value, Note, Field, Raw string
}

type rvFinding struct {
	Rank     int
	ID, Name string
	Sentence string
	Cost     string
}

type rvRank struct {
	Rank                                                  int
	ID, Name, Reheat                                      string
	Cost, CostRaw, ReheatAvoid, CoolAvoid, Reheat2, Share string
	CO2Avoid, Annual, AnnualRaw                           string
}

type rvMeasure struct {
	Key, Title, Short, Action, Basis       string
	Elec, Fuel, Cost, CostRaw, Annual, CO2 string
	AnnualRaw                              string
	AirHandlers                            []rvMeasureAirHandler
}

type rvMeasureAirHandler struct{ ID, Name, Cost, Raw string }

type rvAlert struct {
	Kind, Severity, State, Start, Duration, Energy, Money, Reason string
}

type rvAlertKind struct {
	Kind          string
	Count         int
	Hours, Energy string
	Money         string
}

type rvAirHandler struct {
	Anchor, ID, Name, Rank  string
	Kinds                   string // cooling, reheat, target in words
	Finding                 string
	Totals, TotalsR         []rvRow // two columns
	Charts                  AirHandlerCharts
	Psy                     template.HTML
	States                  int
	PsyNote                 string
	Alerts                  []rvAlert
	AlertKinds              []rvAlertKind
	AlertsMore, AlertsTotal int
	NoHours                 bool
}

type rvCoverage struct {
	ID, Name, Hours, Expected, Coverage, Flagged string
	Flags                                        string
}

type rvUnc struct {
	ID, Name                                 string
	Water, Coil, Reheat, Avoid, AvoidRel, Cu string
}

type rvAssumAirHandler struct {
	ID, Name                                       string
	Cooling, Reheat, Airflow, Fan, Leaving, Target string
}

type reportView struct {
	CSS                                      template.CSS
	Title, Site, Period, From, To, Generated string
	Zone, Units, UnitsLong, Source, Currency string
	Paper                                    string
	NAirHandlers                             int
	Cards                                    []rvCard
	Findings                                 []rvFinding
	Ranked                                   []rvRank
	Days, Factor, HoursShare                 string
	Annual                                   []rvRow
	Measures                                 []rvMeasure
	AirHandlers                              []rvAirHandler
	Prices                                   []rvRow
	Sensors                                  []rvRow
	General                                  []Assumption
	AssumAirHandlers                         []rvAssumAirHandler
	Coverage                                 []rvCoverage
	PeriodHours                              string
	Unc                                      []rvUnc
	TempUnit, WaterUnit, DeltaUnit           string
	HasFuel, WholeDays, PartCovered          bool
}

// paperSize returns the CSS page size and the paper's name: paper as
// given, or letter for IP display and A4 for SI.
func paperSize(paper string, d Display) (css, name string, err error) {
	p := strings.ToLower(paper)
	if p == "" {
		p = "a4"
		if d.IP {
			p = "letter"
		}
	}
	switch p {
	case "a4":
		return "A4", "A4", nil
	case "letter":
		return "letter", "Letter", nil
	}
	return "", "", fmt.Errorf("report: paper %q: use a4 or letter", paper)
}

func raw(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 10, 64)
}

func (r *Report) view() (*reportView, error) {
	css, err := reportAssets.ReadFile("templates/report.css")
	if err != nil {
		return nil, err
	}
	d := r.Display
	size, paper, err := paperSize(r.opt.Paper, d)
	if err != nil {
		return nil, err
	}
	t := r.Overview.Total
	cur := r.Site.Currency
	v := &reportView{
		CSS:          template.CSS(string(css) + "\n@page { size: " + size + "; }\n"),
		Title:        "Dehumidification and reheat energy report",
		Site:         r.Site.Name,
		Period:       r.Period.Label,
		From:         r.Period.DateFrom,
		To:           r.Period.DateTo,
		Generated:    r.Generated.In(r.Site.Zone).Format("2 January 2006, 15:04 MST"),
		Zone:         r.Site.Zone.String(),
		Units:        strings.ToUpper(d.Name()),
		UnitsLong:    map[bool]string{false: "SI: °C, K, kg; energy in kWh", true: "IP: °F, lb; energy in kWh"}[d.IP],
		Source:       r.opt.Source,
		Currency:     cur,
		Paper:        paper,
		NAirHandlers: len(r.AirHandlers),
		TempUnit:     d.TempUnit(), WaterUnit: d.WaterUnit(), DeltaUnit: d.DeltaUnit(),
	}
	money := func(x float64) string { return fmtMoney(x) + " " + cur }
	v.Cards = []rvCard{
		{"total-cost-avoidable", "Avoidable cost", money(float64(t.CostAvoidable)), "of " + money(float64(t.Cost)), raw(float64(t.CostAvoidable))},
		{"total-reheat", "Reheat", fmtQty(float64(t.ReheatKWh)) + " kWh", "heat added by reheat coils", raw(float64(t.ReheatKWh))},
		{"total-reheat-avoidable", "Avoidable reheat", fmtQty(float64(t.ReheatAvoid)) + " kWh", "± " + fmtQty(float64(t.ReheatAvoidU95)) + " (95 %), " + fmtPct(float64(t.AvoidableShare)) + " of reheat", raw(float64(t.ReheatAvoid))},
		{"total-cooling-avoidable", "Avoidable cooling", fmtQty(float64(t.CoolingAvoid)) + " kWh", "cooling input beyond need", raw(float64(t.CoolingAvoid))},
		{"total-co2-avoidable", "Avoidable CO2", co2Text(float64(t.CO2AvoidKg)), "of " + co2Text(float64(t.CO2Kg)), raw(float64(t.CO2AvoidKg))},
	}
	if nz(float64(t.CO2Kg)) == 0 {
		v.Cards[4].Unit = "no emission factors configured"
	}
	if v.Site == "" {
		v.Site = "(site name not configured)"
	}
	for i, ur := range r.AirHandlers {
		row := ur.Row
		if i < r.opt.TopFindings && nz(float64(row.Totals.CostAvoidable)) > 0 {
			v.Findings = append(v.Findings, rvFinding{Rank: row.Rank, ID: row.ID, Name: row.Name, Sentence: ur.Finding, Cost: money(float64(row.Totals.CostAvoidable))})
		}
		rt := row.Totals
		v.Ranked = append(v.Ranked, rvRank{Rank: row.Rank, ID: row.ID, Name: row.Name, Reheat: reheatWords(ur.AirHandler),
			Cost: fmtMoney(float64(rt.CostAvoidable)), CostRaw: raw(float64(rt.CostAvoidable)),
			ReheatAvoid: fmtQty(float64(rt.ReheatAvoid)), CoolAvoid: fmtQty(float64(rt.CoolingAvoid)),
			Reheat2: fmtQty(float64(rt.ReheatKWh)), Share: fmtPct(float64(rt.AvoidableShare)),
			CO2Avoid: co2Text(float64(rt.CO2AvoidKg)), Annual: fmtFixed(nz(float64(rt.CostAvoidable))*r.Annual.Factor, 0),
			AnnualRaw: raw(nz(float64(rt.CostAvoidable)) * r.Annual.Factor)})
		v.AirHandlers = append(v.AirHandlers, r.airHandlerView(ur))
	}

	a := r.Annual
	v.Days = strconv.FormatFloat(math.Round(a.Days*100)/100, 'f', -1, 64)
	v.Factor = fmtFixed(a.Factor, 2)
	v.WholeDays = midnight(r.Period.From).Equal(r.Period.From) && midnight(r.Period.To).Equal(r.Period.To)
	if n := float64(len(r.AirHandlers)) * r.Period.Hours(); n > 0 {
		v.HoursShare = fmtPct(float64(t.Hours) / n)
		v.PartCovered = v.HoursShare != "100 %"
	}
	v.Annual = []rvRow{
		{"Avoidable cost", fmtFixed(a.CostAvoidable, 0) + " " + cur, "± " + fmtFixed(a.CostAvoidableU95, 0) + " " + cur + " from the sensors' uncertainty of the avoidable reheat", "annual_cost_avoidable", raw(a.CostAvoidable)},
		{"Avoidable reheat", fmtFixed(a.ReheatAvoidKWh, 0) + " kWh", "± " + fmtFixed(a.ReheatAvoidKWhU95, 0) + " kWh (95 %)", "annual_reheat_avoidable_kwh", raw(a.ReheatAvoidKWh)},
		{"Avoidable cooling input", fmtFixed(a.CoolingAvoidKWh, 0) + " kWh", "electricity", "annual_cooling_avoidable_kwh", raw(a.CoolingAvoidKWh)},
		{"Avoidable CO2", co2Text(a.CO2AvoidKg), "", "annual_co2_avoidable_kg", raw(a.CO2AvoidKg)},
		{"Cost of cooling and reheat", fmtFixed(a.Cost, 0) + " " + cur, "all of it, needed and avoidable", "annual_cost", raw(a.Cost)},
	}
	for _, m := range r.Measures {
		mv := rvMeasure{Key: m.Key, Title: m.Title, Short: m.Short, Action: m.Action, Basis: m.Basis,
			Elec: fmtQty(m.ElectricityKWh), Fuel: fmtQty(m.FuelKWh), Cost: fmtMoney(m.Cost), CostRaw: raw(m.Cost),
			Annual: fmtFixed(m.Annual, 0), AnnualRaw: raw(m.Annual), CO2: co2Text(m.CO2Kg)}
		if m.FuelKWh > 0 {
			v.HasFuel = true
		}
		for _, ur := range r.AirHandlers {
			if e, ok := m.ByAirHandler[ur.AirHandler.ID]; ok {
				mv.AirHandlers = append(mv.AirHandlers, rvMeasureAirHandler{ID: ur.AirHandler.ID, Name: ur.AirHandler.Name, Cost: fmtMoney(e.Cost), Raw: raw(e.Cost)})
			} else {
				mv.AirHandlers = append(mv.AirHandlers, rvMeasureAirHandler{ID: ur.AirHandler.ID, Name: ur.AirHandler.Name, Cost: "n/a"})
			}
		}
		v.Measures = append(v.Measures, mv)
	}
	r.assumptionsView(v)
	v.PeriodHours = fmtFixed(r.Period.Hours(), 0)
	for _, ur := range r.AirHandlers {
		rt := ur.Row.Totals
		var flags []string
		keys := make([]string, 0, len(ur.Flags))
		for k := range ur.Flags {
			keys = append(keys, k)
		}
		slices.SortFunc(keys, func(a, b string) int {
			if c := cmp.Compare(ur.Flags[b], ur.Flags[a]); c != 0 {
				return c
			}
			return strings.Compare(a, b)
		})
		for _, k := range keys {
			flags = append(flags, fmt.Sprintf("%s %d h", k, ur.Flags[k]))
		}
		fl := strings.Join(flags, ", ")
		if fl == "" {
			fl = "none"
		}
		v.Coverage = append(v.Coverage, rvCoverage{ID: ur.AirHandler.ID, Name: ur.AirHandler.Name, Hours: strconv.Itoa(rt.Hours),
			Expected: fmtPct(float64(rt.Hours) / r.Period.Hours()), Coverage: fmtPct(float64(rt.Coverage)),
			Flagged: strconv.Itoa(rt.FlaggedHours), Flags: fl})
		rel := "–"
		if av := nz(float64(rt.ReheatAvoid)); av > 0 {
			rel = fmtPct(nz(float64(rt.ReheatAvoidU95)) / av)
		}
		v.Unc = append(v.Unc, rvUnc{ID: ur.AirHandler.ID, Name: ur.AirHandler.Name,
			Water: qtyPM(d.Water(float64(rt.WaterKg)), d.Water(float64(rt.WaterKgU95))),
			Coil:  qtyPM(float64(rt.CoilKWh), float64(rt.CoilKWhU95)), Reheat: qtyPM(float64(rt.ReheatKWh), float64(rt.ReheatKWhU95)),
			Avoid: qtyPM(float64(rt.ReheatAvoid), float64(rt.ReheatAvoidU95)), AvoidRel: rel, Cu: fmtMoney(ur.CostU95)})
	}
	return v, nil
}

func qtyPM(v, u float64) string { return fmtQty(v) + " ± " + fmtQty(u) }

// co2Text formats a CO2 mass in kg or, from a tonne up, in t.
func co2Text(kg float64) string {
	if math.Abs(kg) >= 1000 {
		return fmtFixed(kg/1000, 1) + " t"
	}
	return fmtQty(kg) + " kg"
}

func reheatWords(u AirHandler) string {
	if u.Spec == nil {
		return ""
	}
	switch u.Spec.Reheat {
	case metrics.ReheatElectric:
		return "electric reheat"
	case metrics.ReheatHotWater:
		return "hot-water reheat"
	case metrics.ReheatRecovered:
		return "recovered-heat reheat"
	}
	return "no reheat"
}

func (r *Report) airHandlerView(ur AirHandlerReport) rvAirHandler {
	d := r.Display
	t := ur.Row.Totals
	cur := r.Site.Currency
	uv := rvAirHandler{Anchor: "unit-" + strconv.Itoa(ur.Row.Rank), ID: ur.AirHandler.ID, Name: ur.AirHandler.Name, Rank: strconv.Itoa(ur.Row.Rank),
		Finding: ur.Finding, Charts: ur.Charts, Psy: ur.Psy, States: ur.States, NoHours: t.Hours == 0}
	if sp := ur.AirHandler.Spec; sp != nil {
		uv.Kinds = coolingWords(sp) + "; " + reheatWords(ur.AirHandler) + "; " + r.targetWords(sp)
	}
	row := func(label, value, note, field string, x float64) rvRow {
		return rvRow{Label: label, Value: value, Note: note, Field: field, Raw: raw(x)}
	}
	inputNote := "purchased"
	if ur.AirHandler.Spec != nil {
		switch ur.AirHandler.Spec.Reheat {
		case metrics.ReheatHotWater:
			inputNote = "boiler fuel"
		case metrics.ReheatElectric:
			inputNote = "electricity"
		case metrics.ReheatRecovered:
			inputNote = "recovered heat: nothing purchased"
		}
	}
	uv.Totals = []rvRow{
		row("Hours with results", strconv.Itoa(t.Hours), "mean coverage "+fmtPct(float64(t.Coverage))+", "+strconv.Itoa(t.FlaggedHours)+" flagged", "hours", float64(t.Hours)),
		row("Water removed", fmtQty(d.Water(float64(t.WaterKg)))+" "+d.WaterUnit(), "± "+fmtQty(d.Water(float64(t.WaterKgU95)))+" "+d.WaterUnit()+" (95 %)", "water_removed", d.Water(float64(t.WaterKg))),
		row("Coil total", fmtQty(float64(t.CoilKWh))+" kWh", "± "+fmtQty(float64(t.CoilKWhU95))+"; sensible "+fmtQty(float64(t.CoilSensibleKWh))+", latent "+fmtQty(float64(t.CoilLatentKWh)), "coil_total_kwh", float64(t.CoilKWh)),
		row("Reheat", fmtQty(float64(t.ReheatKWh))+" kWh", "± "+fmtQty(float64(t.ReheatKWhU95))+"; needed "+fmtQty(float64(t.ReheatNeeded)), "reheat_kwh", float64(t.ReheatKWh)),
		row("Avoidable reheat", fmtQty(float64(t.ReheatAvoid))+" kWh", "± "+fmtQty(float64(t.ReheatAvoidU95))+"; "+fmtPct(float64(t.AvoidableShare))+" of the reheat", "reheat_avoidable_kwh", float64(t.ReheatAvoid)),
		row("Reheat input", fmtQty(float64(t.ReheatInput))+" kWh", inputNote, "reheat_input_kwh", float64(t.ReheatInput)),
		row("Cooling input", fmtQty(float64(t.CoolingInput))+" kWh", "of which avoidable "+fmtQty(float64(t.CoolingAvoid))+" kWh", "cooling_input_kwh", float64(t.CoolingInput)),
		row("Effective EER", fmtFixed(float64(t.EffectiveEER), 1)+" Btu/Wh", "coil alone "+fmtFixed(float64(t.CoilEER), 1)+" Btu/Wh", "effective_eer", float64(t.EffectiveEER)),
		row("Cooling and reheat at once", fmtQty(float64(t.SHCHours))+" h", fmtQty(float64(t.SHCUnneededH))+" h of it without humidity need", "shc_h", float64(t.SHCHours)),
		row("Cost", fmtMoney(float64(t.Cost))+" "+cur, "avoidable "+fmtMoney(float64(t.CostAvoidable))+" "+cur, "cost_avoidable", float64(t.CostAvoidable)),
		row("CO2", co2Text(float64(t.CO2Kg)), "avoidable "+co2Text(float64(t.CO2AvoidKg)), "co2_avoidable_kg", float64(t.CO2AvoidKg)),
	}
	if n := t.NoCoolingInputHours; n > 0 {
		// The rows after the sixth are the cooling side: say which hours they leave out.
		hours := "hours"
		if n == 1 {
			hours = "hour"
		}
		uv.Totals[6].Note += fmt.Sprintf("; %d %s without a cooling input (flag cooling_input_missing) left out of it, the EERs and the cost", n, hours)
	}
	uv.Totals, uv.TotalsR = uv.Totals[:6], uv.Totals[6:]
	uv.PsyNote = fmt.Sprintf("%d hours drawn, each from the air entering the coil to the coil leaving state to the supply, at %s kPa; the humidity target is marked. Hour means: the spread within an hour is not shown.", ur.States, fmtFixed(r.pressure(ur.AirHandler)/1000, 2))
	kinds := map[string]*rvAlertKind{}
	var order []string
	hours := map[string]float64{}
	energy, moneyK := map[string]float64{}, map[string]float64{}
	for _, a := range ur.Alerts {
		k, ok := kinds[a.Kind]
		if !ok {
			k = &rvAlertKind{Kind: AlertLabel(a.Kind)}
			kinds[a.Kind] = k
			order = append(order, a.Kind)
		}
		k.Count++
		hours[a.Kind] += r.inPeriod(a).Hours()
		energy[a.Kind] += nz(a.EnergyKWh)
		moneyK[a.Kind] += nz(a.Money)
	}
	for _, name := range order {
		k := kinds[name]
		k.Hours, k.Energy, k.Money = fmtQty(hours[name]), fmtQty(energy[name]), fmtMoney(moneyK[name])
		uv.AlertKinds = append(uv.AlertKinds, *k)
	}
	uv.AlertsTotal = len(ur.Alerts)
	for i, a := range ur.Alerts {
		if i >= r.opt.MaxAlerts {
			uv.AlertsMore = len(ur.Alerts) - i
			break
		}
		state := a.State
		if a.End.IsZero() || a.End.After(r.Period.To) {
			state += ", ongoing at the end"
		}
		uv.Alerts = append(uv.Alerts, rvAlert{Kind: AlertLabel(a.Kind), Severity: a.Severity, State: state,
			Start: a.Start.In(r.Site.Zone).Format("2006-01-02 15:04"), Duration: fmtDuration(r.inPeriod(a)),
			Energy: fmtQty(a.EnergyKWh), Money: fmtMoney(a.Money), Reason: a.Reason})
	}
	return uv
}

// inPeriod is how long alert a was active within the period.
func (r *Report) inPeriod(a Alert) time.Duration {
	start, end := a.Start, a.End
	if end.IsZero() || end.After(r.Generated) {
		end = r.Generated
	}
	if start.Before(r.Period.From) {
		start = r.Period.From
	}
	if end.After(r.Period.To) {
		end = r.Period.To
	}
	if !end.After(start) {
		return 0
	}
	return end.Sub(start)
}

func coolingWords(sp *metrics.AirHandler) string {
	switch sp.Cooling {
	case metrics.CoolingDX:
		return "direct-expansion cooling"
	case metrics.CoolingChilledWater:
		return "chilled-water cooling"
	}
	return "cooling"
}

func (r *Report) targetWords(sp *metrics.AirHandler) string {
	d := r.Display
	t := sp.Target
	switch t.Kind {
	case metrics.TargetSupplyDewPoint:
		return "target: supply dew point at most " + fmtFixed(d.Temp(t.DewPointC), 1) + " " + d.TempUnit()
	case metrics.TargetSpaceDewPoint:
		return "target: space dew point at most " + fmtFixed(d.Temp(t.DewPointC), 1) + " " + d.TempUnit()
	case metrics.TargetSpaceRH:
		s := "target: space RH at most " + fmtFixed(t.RH*100, 0) + " %"
		if t.SpaceTempC != 0 && !math.IsNaN(t.SpaceTempC) {
			s += " at " + fmtFixed(d.Temp(t.SpaceTempC), 1) + " " + d.TempUnit()
		} else {
			s += " at the trended space temperature"
		}
		return s
	}
	return "no humidity target"
}

// assumptionsView fills the prices, sensor accuracies and per-unit bases.
func (r *Report) assumptionsView(v *reportView) {
	d := r.Display
	cur := r.Site.Currency
	var spec *metrics.AirHandler
	for _, u := range r.Site.AirHandlers {
		if u.Spec != nil {
			spec = u.Spec
			break
		}
	}
	v.General = append(v.General, Assumption{"Pressure", fmt.Sprintf("Barometric pressure %s kPa in every moist-air property.", fmtFixed(r.pressure(AirHandler{})/1000, 2))})
	v.General = append(v.General, Assumption{"Time", "Hours are stored in UTC and shown in the site's time zone, " + r.Site.Zone.String() + "; a day is a local day."})
	v.General = append(v.General, r.Site.Basis...)
	v.General = append(v.General, r.opt.Notes...)
	if spec != nil {
		pr := spec.Prices
		v.Prices = []rvRow{
			{Label: "Electricity", Value: fmtFixed(pr.ElectricityPerKWh, 4) + " " + cur + "/kWh", Note: fmtFixed(pr.ElectricityCO2KgPerKWh, 3) + " kg CO2/kWh"},
			{Label: "Fuel (hot-water reheat)", Value: fmtFixed(pr.FuelPerKWh, 4) + " " + cur + "/kWh", Note: fmtFixed(pr.FuelCO2KgPerKWh, 3) + " kg CO2/kWh of fuel"},
		}
		ac := spec.Accuracy
		v.Sensors = []rvRow{
			{Label: "Dry bulb", Value: "± " + fmtFixed(d.Delta(ac.TempK), 2) + " " + d.DeltaUnit()},
			{Label: "RH", Value: "± " + fmtFixed(ac.RH*100, 1) + " % RH"},
			{Label: "Dew point", Value: "± " + fmtFixed(d.Delta(ac.DewPointK), 2) + " " + d.DeltaUnit()},
			{Label: "Airflow", Value: "± " + fmtFixed(ac.FlowFrac*100, 1) + " % of reading"},
			{Label: "Power meters", Value: "± " + fmtFixed(ac.PowerFrac*100, 1) + " % of reading", Note: "not in the half-widths"},
		}
	}
	for _, ur := range r.AirHandlers {
		sp := ur.AirHandler.Spec
		if sp == nil {
			continue
		}
		has := map[string]bool{}
		known := r.opt.Trended != nil
		for _, role := range r.opt.Trended[ur.AirHandler.ID] {
			has[role] = true
		}
		au := rvAssumAirHandler{ID: ur.AirHandler.ID, Name: ur.AirHandler.Name}
		switch {
		case has[string(metrics.RoleCoolingPower)]:
			au.Cooling = "Cooling input metered (cooling_kw)."
		case sp.Cooling == metrics.CoolingDX:
			au.Cooling = fmt.Sprintf("DX, modelled from a rated EER of %s Btu/Wh (COP %s) at %s %s outdoor, %s Btu/Wh per K above it.",
				fmtFixed(psychro.COPToEER(sp.RatedCOP), 1), fmtFixed(sp.RatedCOP, 2), fmtFixed(d.Temp(sp.RatedOutdoorC), 0), d.TempUnit(), fmtFixed(psychro.COPToEER(sp.COPPerK), 2))
		case sp.Cooling == metrics.CoolingChilledWater:
			au.Cooling = fmt.Sprintf("Chilled water: plant %s kW per ton of coil load.", fmtFixed(sp.PlantKWPerKW*psychro.TonsToKW(1), 2))
		}
		switch sp.Reheat {
		case metrics.ReheatElectric:
			au.Reheat = "Electric, COP 1."
			if has[string(metrics.RoleReheatPower)] {
				au.Reheat += " Input metered (reheat_kw)."
			}
		case metrics.ReheatHotWater:
			au.Reheat = fmt.Sprintf("Hot water, priced as fuel at a boiler efficiency of %s.", fmtPct(sp.BoilerEff))
		case metrics.ReheatRecovered:
			au.Reheat = "Recovered heat: no purchased energy."
		default:
			au.Reheat = "None."
		}
		switch sp.Basis {
		case metrics.BasisActual:
			au.Airflow = "Actual volume at the " + strings.TrimSuffix(string(sp.FlowAt), "_temp") + " sensor's state: m = Q / v."
		default:
			au.Airflow = "Standard air: m = 1.204 kg/m³ × Q."
		}
		// fanHeat is the note on a fan's heat as the engine takes it: from
		// the trended fan power, else the rated power (rated formats it in
		// kW), else the assumed rise (rise formats it and its unit).
		fanHeat := func(trended, rated, rise string) string {
			switch {
			case has[string(metrics.RoleFanPower)]:
				return trended
			case sp.FanRatedKW > 0:
				return fmt.Sprintf(rated, fmtFixed(sp.FanRatedKW, 1))
			default:
				return fmt.Sprintf(rise, fmtFixed(d.Delta(sp.FanRiseK), 1), d.DeltaUnit())
			}
		}
		switch sp.Fan {
		case metrics.FanDrawThrough:
			au.Fan = fanHeat("Draw-through: heat from the trended fan power.",
				"Draw-through: heat from the rated fan power, %s kW, whenever air flows.",
				"Draw-through: %s %s rise assumed.")
		case metrics.FanBlowThrough:
			au.Fan = fanHeat("Blow-through, after the entering sensor: heat from the trended fan power added to the coil load.",
				"Blow-through, after the entering sensor: the rated fan power, %s kW, added to the coil load whenever air flows.",
				"Blow-through, after the entering sensor: %s %s rise assumed, added to the coil load.")
		case metrics.FanBlowThroughMeasured:
			au.Fan = "Blow-through, ahead of the entering sensor: fan heat is in the measured coil load."
		default:
			au.Fan = "No fan heat between coil and supply sensor."
		}
		switch {
		case has[string(metrics.RoleLeavingRH)] || has[string(metrics.RoleLeavingDewPoint)]:
			au.Leaving = "Measured."
		case known || sp.LeavingRH > 0:
			au.Leaving = fmt.Sprintf("%s RH assumed once the coil is below the entering dew point.", fmtPct(sp.LeavingRH))
			if sp.LeavingRHU > 0 {
				au.Leaving = fmt.Sprintf("%s ± %s RH assumed once the coil is below the entering dew point (in the uncertainty).", fmtPct(sp.LeavingRH), fmtPct(sp.LeavingRHU))
			}
		}
		au.Target = strings.TrimPrefix(r.targetWords(sp), "target: ")
		v.AssumAirHandlers = append(v.AssumAirHandlers, au)
	}
}
