package dashboards

import (
	"context"
	"math"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Totals sums an air handler's hours. Energies in kWh, water in kg, money
// in the site's currency. A sum skips hours where its field has no value;
// NoCoolingInputHours counts the hours without a cooling input, whose
// cost and electricity are so left out, and the EERs of the sums are
// taken over the hours with one.
type Totals struct {
	Hours           int `json:"hours"`
	Coverage        Num `json:"coverage"` // mean share of covered steps
	WaterKg         Num `json:"water_removed_kg"`
	WaterKgU95      Num `json:"water_removed_kg_u95"`
	CoilKWh         Num `json:"coil_total_kwh"`
	CoilKWhU95      Num `json:"coil_total_kwh_u95"`
	CoilSensibleKWh Num `json:"coil_sensible_kwh"`
	CoilLatentKWh   Num `json:"coil_latent_kwh"`
	ReheatKWh       Num `json:"reheat_kwh"`
	ReheatKWhU95    Num `json:"reheat_kwh_u95"`
	ReheatNeeded    Num `json:"reheat_needed_kwh"`
	ReheatAvoid     Num `json:"reheat_avoidable_kwh"`
	ReheatAvoidU95  Num `json:"reheat_avoidable_kwh_u95"`
	ReheatInput     Num `json:"reheat_input_kwh"`
	CoolingInput    Num `json:"cooling_input_kwh"`
	CoolingAvoid    Num `json:"cooling_avoidable_input_kwh"`
	ElectricityKWh  Num `json:"electricity_kwh"`
	FuelKWh         Num `json:"fuel_kwh"`
	Cost            Num `json:"cost"`
	CostAvoidable   Num `json:"cost_avoidable"`
	CO2Kg           Num `json:"co2_kg"`
	CO2AvoidKg      Num `json:"co2_avoidable_kg"`
	SHCHours        Num `json:"shc_h"`
	SHCUnneededH    Num `json:"shc_unneeded_h"`
	HumidityNeedH   Num `json:"humidity_need_h"`
	EffectiveEER    Num `json:"effective_eer"` // of the sums: 3.412 × (coil − reheat) / (cooling input + reheat input)
	CoilEER         Num `json:"coil_eer"`
	ReheatCoilRatio Num `json:"reheat_coil_ratio"`
	AvoidableShare  Num `json:"avoidable_share"` // avoidable reheat / reheat
	FlaggedHours    int `json:"flagged_hours"`   // hours with a data-quality flag (metrics.QualityFlagged)
	NotedHours      int `json:"noted_hours"`     // hours with an informational flag only (metrics.Informational)
	// NoCoolingInputHours counts the hours without a cooling input
	// (metrics.Record.HasCoolingInput).
	NoCoolingInputHours int `json:"no_cooling_input_hours"`
	covSum              float64
	gap                 metrics.CoolingGap
}

// add sums v into *dst, treating a NaN total as zero once a value arrives.
func add(dst *Num, v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	if math.IsNaN(float64(*dst)) {
		*dst = 0
	}
	*dst += Num(v)
}

// NewTotals returns empty totals (every sum unknown until an hour adds to it).
func NewTotals() Totals {
	n := Num(math.NaN())
	return Totals{Coverage: n, WaterKg: n, WaterKgU95: n, CoilKWh: n, CoilKWhU95: n, CoilSensibleKWh: n, CoilLatentKWh: n,
		ReheatKWh: n, ReheatKWhU95: n, ReheatNeeded: n, ReheatAvoid: n, ReheatAvoidU95: n, ReheatInput: n, CoolingInput: n,
		CoolingAvoid: n, ElectricityKWh: n, FuelKWh: n, Cost: n, CostAvoidable: n, CO2Kg: n, CO2AvoidKg: n, SHCHours: n,
		SHCUnneededH: n, HumidityNeedH: n, EffectiveEER: n, CoilEER: n, ReheatCoilRatio: n, AvoidableShare: n}
}

// Add sums one hour. The 95 % half-widths are added linearly: a sensor's
// calibration bias is the same from one hour to the next, so the hours'
// errors are treated as fully correlated (an upper bound).
func (t *Totals) Add(r *metrics.Record) {
	t.Hours++
	switch {
	case metrics.QualityFlagged(r.Flags):
		t.FlaggedHours++
	case len(r.Flags) > 0:
		t.NotedHours++
	}
	t.gap.Add(r)
	t.addSums(r)
}

// AddDay sums a day of sums (see DayReader).
func (t *Totals) AddDay(d DaySums) {
	t.Hours += d.Hours
	t.FlaggedHours += d.Flagged
	t.gap.Merge(d.NoCoolingInput)
	t.addSums(d.Sums)
}

// addSums adds r's additive fields.
func (t *Totals) addSums(r *metrics.Record) {
	if !math.IsNaN(r.Coverage) {
		t.covSum += r.Coverage
	}
	add(&t.WaterKg, r.WaterRemovedKg)
	add(&t.WaterKgU95, r.WaterRemovedKgU95)
	add(&t.CoilKWh, r.CoilTotalKWh)
	add(&t.CoilKWhU95, r.CoilTotalKWhU95)
	add(&t.CoilSensibleKWh, r.CoilSensibleKWh)
	add(&t.CoilLatentKWh, r.CoilLatentKWh)
	add(&t.ReheatKWh, r.ReheatKWh)
	add(&t.ReheatKWhU95, r.ReheatKWhU95)
	add(&t.ReheatNeeded, r.ReheatNeededKWh)
	add(&t.ReheatAvoid, r.ReheatAvoidKWh)
	add(&t.ReheatAvoidU95, r.ReheatAvoidKWhU95)
	add(&t.ReheatInput, r.ReheatInputKWh)
	add(&t.CoolingInput, r.CoolingInputKWh)
	add(&t.CoolingAvoid, r.CoolingAvoidKWh)
	add(&t.ElectricityKWh, r.ElectricityKWh)
	add(&t.FuelKWh, r.FuelKWh)
	add(&t.Cost, r.Cost)
	add(&t.CostAvoidable, r.CostAvoidable)
	add(&t.CO2Kg, r.CO2Kg)
	add(&t.CO2AvoidKg, r.CO2AvoidableKg)
	add(&t.SHCHours, r.SHCHours)
	add(&t.SHCUnneededH, r.SHCUnneededH)
	add(&t.HumidityNeedH, r.HumidityNeedHours)
}

// finish computes the ratios of the sums.
func (t *Totals) finish() {
	if t.Hours > 0 {
		t.Coverage = Num(t.covSum / float64(t.Hours))
	}
	ratio := func(a, b Num) Num {
		if math.IsNaN(float64(a)) || math.IsNaN(float64(b)) || b == 0 {
			return Num(math.NaN())
		}
		return a / b
	}
	// The EERs are over the hours with a cooling input: the coil and
	// reheat of the others are out of the numerators as their input is
	// out of the denominators.
	t.NoCoolingInputHours = t.gap.Hours
	coil, reheat := t.CoilKWh-Num(t.gap.CoilKWh), t.ReheatKWh-Num(t.gap.ReheatKWh)
	input := t.CoolingInput
	if !math.IsNaN(float64(t.ReheatInput)) && !math.IsNaN(float64(input)) {
		input += t.ReheatInput - Num(t.gap.ReheatInputKWh)
	}
	t.EffectiveEER = Num(psychro.COPToEER(float64(ratio(coil-reheat, input))))
	t.CoilEER = Num(psychro.COPToEER(float64(ratio(coil, t.CoolingInput))))
	t.ReheatCoilRatio = ratio(t.ReheatKWh, t.CoilKWh)
	t.AvoidableShare = ratio(t.ReheatAvoid, t.ReheatKWh)
}

// AirHandlerRow is one air handler on the overview.
type AirHandlerRow struct {
	ID         string  `json:"id"`
	Name       string  `json:"name"`
	Reheat     string  `json:"reheat"` // electric, hot_water or recovered
	Totals     Totals  `json:"totals"`
	Daily      []Num   `json:"daily_avoidable_cost"` // per local day of the period
	OpenAlerts int     `json:"open_alerts"`
	Rank       int     `json:"rank"` // 1 = most avoidable cost
	Share      float64 `json:"-"`    // of the largest avoidable cost, for the bar
}

// Overview is the site over a period, units ranked by avoidable cost.
type Overview struct {
	SiteID      string          `json:"site_id,omitempty"` // site.id
	Site        string          `json:"site"`
	Currency    string          `json:"currency"`
	Period      Period          `json:"period"`
	AirHandlers []AirHandlerRow `json:"units"`
	Total       Totals          `json:"total"`
	Days        []string        `json:"days"` // YYYY-MM-DD of each daily value
}

// BuildOverview reads the period's hours of every configured unit once
// and sums them per unit and per local day.
func BuildOverview(ctx context.Context, site *Site, res Results, p Period) (*Overview, error) {
	ov := &Overview{SiteID: site.ID, Site: site.Name, Currency: site.Currency, Period: p, Total: NewTotals()}
	var dayStarts []time.Time
	for d := p.From; d.Before(p.To); d = d.AddDate(0, 0, 1) {
		dayStarts = append(dayStarts, d)
		ov.Days = append(ov.Days, d.Format(dateLayout))
	}
	index := map[string]int{}
	for i, u := range site.AirHandlers {
		row := AirHandlerRow{ID: u.ID, Name: u.Name, Totals: NewTotals(), Daily: make([]Num, len(dayStarts))}
		if u.Spec != nil {
			row.Reheat = reheatName(u.Spec.Reheat)
		}
		for d := range row.Daily {
			row.Daily[d] = Num(math.NaN())
		}
		ov.AirHandlers = append(ov.AirHandlers, row)
		index[u.ID] = i
	}
	dayOf := func(t time.Time) int {
		return sort.Search(len(dayStarts), func(k int) bool { return dayStarts[k].After(t) }) - 1
	}
	complete := false
	if dr, ok := res.(DayReader); ok {
		var err error
		complete, err = dr.Days(ctx, p.From, p.To, func(d DaySums) error {
			i, ok := index[d.AHU]
			if !ok {
				return nil // results of a unit no longer configured
			}
			row := &ov.AirHandlers[i]
			row.Totals.AddDay(d)
			ov.Total.AddDay(d)
			if k := dayOf(d.Day); k >= 0 {
				add(&row.Daily[k], d.Sums.CostAvoidable)
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
	}
	if !complete {
		err := res.Hours(ctx, "", p.From, p.To, func(r *metrics.Record) error {
			i, ok := index[r.AHU]
			if !ok {
				return nil
			}
			row := &ov.AirHandlers[i]
			row.Totals.Add(r)
			ov.Total.Add(r)
			if k := dayOf(r.HourStart); k >= 0 {
				add(&row.Daily[k], r.CostAvoidable)
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
	}
	alerts, err := res.Alerts(ctx, AlertQuery{State: "open"})
	if err != nil {
		return nil, err
	}
	for _, a := range alerts {
		if i, ok := index[a.AHU]; ok {
			ov.AirHandlers[i].OpenAlerts++
		}
	}
	ov.Total.finish()
	maxCost := 0.0
	for i := range ov.AirHandlers {
		ov.AirHandlers[i].Totals.finish()
		if c := float64(ov.AirHandlers[i].Totals.CostAvoidable); c > maxCost {
			maxCost = c
		}
	}
	sort.SliceStable(ov.AirHandlers, func(a, b int) bool {
		return nanLow(ov.AirHandlers[a].Totals.CostAvoidable) > nanLow(ov.AirHandlers[b].Totals.CostAvoidable)
	})
	for i := range ov.AirHandlers {
		ov.AirHandlers[i].Rank = i + 1
		if c := float64(ov.AirHandlers[i].Totals.CostAvoidable); maxCost > 0 && c > 0 {
			ov.AirHandlers[i].Share = c / maxCost
		}
	}
	return ov, nil
}

func nanLow(v Num) float64 {
	if math.IsNaN(float64(v)) {
		return math.Inf(-1)
	}
	return float64(v)
}

func reheatName(k metrics.ReheatKind) string {
	switch k {
	case metrics.ReheatElectric:
		return "electric"
	case metrics.ReheatHotWater:
		return "hot_water"
	case metrics.ReheatRecovered:
		return "recovered"
	}
	return ""
}

// AirHandlerHours is one air handler's hours over a period, as columns.
type AirHandlerHours struct {
	ID     string      `json:"id"`
	Name   string      `json:"name"`
	Period Period      `json:"period"`
	Units  string      `json:"units"` // si or ip: the unit of the temperature and water columns
	Totals Totals      `json:"totals"`
	Hours  []time.Time `json:"hours"` // hour starts, UTC
	// Energies, kWh.
	CoolingInput []Num `json:"cooling_input_kwh"`
	ReheatNeeded []Num `json:"reheat_needed_kwh"`
	ReheatAvoid  []Num `json:"reheat_avoidable_kwh"`
	Reheat       []Num `json:"reheat_kwh"`
	// Temperatures in the display unit.
	Entering         []Num `json:"entering_temp"`
	EnteringDewPoint []Num `json:"entering_dewpoint"`
	Leaving          []Num `json:"leaving_temp"`
	LeavingDewPoint  []Num `json:"leaving_dewpoint"`
	RequiredLeaving  []Num `json:"required_leaving_temp"`
	Supply           []Num `json:"supply_temp"`
	// Water in the display unit, with its 95 % half-width.
	Water    []Num    `json:"water_removed"`
	WaterU95 []Num    `json:"water_removed_u95"`
	EER      []Num    `json:"effective_eer"`
	Coverage []Num    `json:"coverage"`
	Cost     []Num    `json:"cost_avoidable"`
	Flags    []string `json:"flags"` // space-separated flags per hour
}

// BuildAirHandlerHours reads one unit's hours.
func BuildAirHandlerHours(ctx context.Context, u AirHandler, res Results, p Period, d Display) (*AirHandlerHours, error) {
	uh := &AirHandlerHours{ID: u.ID, Name: u.Name, Period: p, Units: d.Name(), Totals: NewTotals()}
	temp := func(c float64) Num { return Num(d.Temp(c)) }
	err := res.Hours(ctx, u.ID, p.From, p.To, func(r *metrics.Record) error {
		uh.Totals.Add(r)
		uh.Hours = append(uh.Hours, r.HourStart.UTC())
		uh.CoolingInput = append(uh.CoolingInput, Num(r.CoolingInputKWh))
		uh.ReheatNeeded = append(uh.ReheatNeeded, Num(r.ReheatNeededKWh))
		uh.ReheatAvoid = append(uh.ReheatAvoid, Num(r.ReheatAvoidKWh))
		uh.Reheat = append(uh.Reheat, Num(r.ReheatKWh))
		uh.Entering = append(uh.Entering, temp(r.EnteringTempC))
		uh.EnteringDewPoint = append(uh.EnteringDewPoint, temp(r.EnteringDewPointC))
		uh.Leaving = append(uh.Leaving, temp(r.LeavingTempC))
		uh.LeavingDewPoint = append(uh.LeavingDewPoint, temp(r.LeavingDewPointC))
		uh.RequiredLeaving = append(uh.RequiredLeaving, temp(r.RequiredLeavingC))
		uh.Supply = append(uh.Supply, temp(r.SupplyTempC))
		uh.Water = append(uh.Water, Num(d.Water(r.WaterRemovedKg)))
		uh.WaterU95 = append(uh.WaterU95, Num(d.Water(r.WaterRemovedKgU95)))
		uh.EER = append(uh.EER, Num(r.EffectiveEER))
		uh.Coverage = append(uh.Coverage, Num(r.Coverage))
		uh.Cost = append(uh.Cost, Num(r.CostAvoidable))
		flags := ""
		for i, f := range r.Flags {
			if i > 0 {
				flags += " "
			}
			flags += f
		}
		uh.Flags = append(uh.Flags, flags)
		return nil
	})
	if err != nil {
		return nil, err
	}
	uh.Totals.finish()
	return uh, nil
}
