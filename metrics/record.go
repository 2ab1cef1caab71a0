package metrics

import (
	"math"
	"time"
)

// RecordSchema is the version of the hourly record's field set. It changes
// when a field is renamed or its meaning changes; adding a field does not.
//
// Schema 2: effective_eer counts electricity only (schema 1 added fuel kWh
// to electric kWh); effective_eer_cost_basis is new.
//
// Schema 3: the *_u95 bands include the engine's assumptions (the assumed
// coil leaving RH, the outdoor-air share, the space moisture gain);
// reheat_kwh (and for electric reheat reheat_input_kwh) is the reheat
// meter and the air side weighted by their uncertainties when both exist
// and agree; coil_total_kwh includes a blow-through fan's heat after the
// entering sensor; a modelled DX cooling_input_kwh includes part-load
// cycling when the rated capacity is configured.
const RecordSchema = 3

// Record is one air handler-hour of results, SI, with units in the names.
// Energies are kWh over the hour's covered steps: an hour with partial
// coverage is reported as measured, with its coverage, never scaled up.
type Record struct {
	HourStart time.Time // UTC
	AHU       string
	Coverage  float64 // share of grid steps with every required reading, 0..1

	DryAirKg          float64
	WaterRemovedKg    float64
	CoilSensibleKWh   float64
	CoilLatentKWh     float64
	CoilTotalKWh      float64 // with the condensate term
	CoilTotalGrossKWh float64 // without it
	ReheatKWh         float64 // heat added by the reheat coil
	ReheatNeededKWh   float64
	ReheatAvoidKWh    float64
	ReheatInputKWh    float64 // purchased: electricity, or fuel for hot water, 0 for recovered heat
	CoolingInputKWh   float64 // electricity for cooling (metered or modelled)
	CoolingAvoidKWh   float64 // cooling input caused by over-cooling
	FanHeatKWh        float64
	// WaterReevaporatedKg is water a wet coil gave back to the air while it
	// did not cool (a measured leaving humidity above the entering one after
	// the compressor stopped); it is not subtracted from WaterRemovedKg.
	WaterReevaporatedKg float64
	ElectricityKWh      float64 // cooling input + electric reheat input
	FuelKWh             float64 // hot-water reheat fuel

	ReheatCoilRatio float64 // reheat / coil total
	CoilEER         float64 // Btu/Wh: coil total / cooling input
	EffectiveEER    float64 // Btu/Wh: (coil total - reheat) / electricity (cooling input + electric reheat input); may be negative
	// EffectiveEERCost is (coil total - reheat) over the electricity plus
	// the fuel valued at the electricity it would buy at the site's prices,
	// Btu/Wh of electricity-equivalent; NaN without an electricity price.
	EffectiveEERCost float64
	SHR              float64 // sensible heat ratio of the coil
	WaterPerKWhL     float64 // litres of water removed per kWh of input
	SHCHours         float64 // time with cooling and reheat both running
	SHCUnneededH     float64 // of which the humidity target did not need the cooling

	EnteringTempC     float64 // means over covered steps
	EnteringDewPointC float64
	LeavingTempC      float64
	LeavingDewPointC  float64 // dew point of the hour's mean coil leaving humidity ratio
	RequiredLeavingC  float64 // mean over steps where the target needed dehumidification; NaN when it never did
	SupplyTempC       float64
	OvercoolingK      float64 // mean over coil-on steps of (needed coil temperature - actual), when positive
	HumidityNeedHours float64 // time the entering air was wetter than the target allowed

	// Outdoor air over the hour, from the outdoor roles when mapped (NaN
	// when not): the mean dry bulb over the steps that read it, and the dew
	// point of the mean humidity ratio over the steps that read both
	// temperature and RH. They are the weather, independent of the unit's
	// sequence, and the drivers of a before/after baseline.
	OutdoorTempC     float64
	OutdoorDewPointC float64

	// Too little dehumidification: water the target needed removed and the
	// coil left in the air, the time the coil left air wetter than the
	// target (by more than 2 % of W), and the cooling and reheat (at the same
	// supply temperature) that meeting the target would have taken.
	ShortfallKg        float64
	ShortfallHours     float64
	ShortfallCoolKWh   float64
	ShortfallReheatKWh float64

	Cost           float64 // currency of the configuration
	CostAvoidable  float64
	CO2Kg          float64
	CO2AvoidableKg float64

	WaterRemovedKgU95 float64 // 95 % half-widths
	CoilTotalKWhU95   float64
	ReheatKWhU95      float64
	ReheatAvoidKWhU95 float64

	Flags []string
}

// Field is one named value of a record.
type Field struct {
	Name  string
	Value float64
}

// Fields returns the record's numeric fields in the documented order, with
// the names used in CSV, JSON, the embedded store and InfluxDB.
func (r *Record) Fields() []Field {
	return []Field{
		{"coverage", r.Coverage},
		{"dry_air_kg", r.DryAirKg},
		{"water_removed_kg", r.WaterRemovedKg},
		{"coil_sensible_kwh", r.CoilSensibleKWh},
		{"coil_latent_kwh", r.CoilLatentKWh},
		{"coil_total_kwh", r.CoilTotalKWh},
		{"coil_total_gross_kwh", r.CoilTotalGrossKWh},
		{"reheat_kwh", r.ReheatKWh},
		{"reheat_needed_kwh", r.ReheatNeededKWh},
		{"reheat_avoidable_kwh", r.ReheatAvoidKWh},
		{"reheat_input_kwh", r.ReheatInputKWh},
		{"cooling_input_kwh", r.CoolingInputKWh},
		{"cooling_avoidable_input_kwh", r.CoolingAvoidKWh},
		{"fan_heat_kwh", r.FanHeatKWh},
		{"water_reevaporated_kg", r.WaterReevaporatedKg},
		{"electricity_kwh", r.ElectricityKWh},
		{"fuel_kwh", r.FuelKWh},
		{"reheat_coil_ratio", r.ReheatCoilRatio},
		{"coil_eer", r.CoilEER},
		{"effective_eer", r.EffectiveEER},
		{"effective_eer_cost_basis", r.EffectiveEERCost},
		{"shr", r.SHR},
		{"water_per_kwh_l", r.WaterPerKWhL},
		{"shc_h", r.SHCHours},
		{"shc_unneeded_h", r.SHCUnneededH},
		{"entering_temp_c", r.EnteringTempC},
		{"entering_dewpoint_c", r.EnteringDewPointC},
		{"leaving_temp_c", r.LeavingTempC},
		{"leaving_dewpoint_c", r.LeavingDewPointC},
		{"required_leaving_temp_c", r.RequiredLeavingC},
		{"supply_temp_c", r.SupplyTempC},
		{"overcooling_k", r.OvercoolingK},
		{"humidity_need_h", r.HumidityNeedHours},
		{"outdoor_temp_c", r.OutdoorTempC},
		{"outdoor_dewpoint_c", r.OutdoorDewPointC},
		{"humidity_shortfall_kg", r.ShortfallKg},
		{"humidity_shortfall_h", r.ShortfallHours},
		{"shortfall_cooling_kwh", r.ShortfallCoolKWh},
		{"shortfall_reheat_kwh", r.ShortfallReheatKWh},
		{"cost", r.Cost},
		{"cost_avoidable", r.CostAvoidable},
		{"co2_kg", r.CO2Kg},
		{"co2_avoidable_kg", r.CO2AvoidableKg},
		{"water_removed_kg_u95", r.WaterRemovedKgU95},
		{"coil_total_kwh_u95", r.CoilTotalKWhU95},
		{"reheat_kwh_u95", r.ReheatKWhU95},
		{"reheat_avoidable_kwh_u95", r.ReheatAvoidKWhU95},
	}
}

// AdditiveFields names the fields that add up over hours: energies, water,
// money, CO2, hours and their 95 % half-widths (summed linearly, as for a
// bias that is the same from hour to hour), and coverage (whose sum over
// the number of hours is the mean coverage). Stores keep daily sums of them.
func AdditiveFields() []string {
	return []string{"coverage", "dry_air_kg", "water_removed_kg", "coil_sensible_kwh", "coil_latent_kwh", "coil_total_kwh",
		"coil_total_gross_kwh", "reheat_kwh", "reheat_needed_kwh", "reheat_avoidable_kwh", "reheat_input_kwh",
		"cooling_input_kwh", "cooling_avoidable_input_kwh", "fan_heat_kwh", "water_reevaporated_kg", "electricity_kwh", "fuel_kwh", "shc_h",
		"shc_unneeded_h", "humidity_need_h", "humidity_shortfall_kg", "humidity_shortfall_h", "shortfall_cooling_kwh", "shortfall_reheat_kwh", "cost", "cost_avoidable", "co2_kg", "co2_avoidable_kg",
		"water_removed_kg_u95", "coil_total_kwh_u95", "reheat_kwh_u95", "reheat_avoidable_kwh_u95"}
}

// FieldNames returns the names of Fields, in order.
func FieldNames() []string {
	var r Record
	f := r.Fields()
	out := make([]string, len(f))
	for i := range f {
		out[i] = f[i].Name
	}
	return out
}

// SetField sets a field by name; it reports false for an unknown name. It
// lets stores read records back from their field maps.
func (r *Record) SetField(name string, v float64) bool {
	p, ok := r.fieldPtrs()[name]
	if ok {
		*p = v
	}
	return ok
}

// FieldPtrs maps every field name to the field in r, for a reader that
// fills one record again and again (build the map once, reuse the record).
func (r *Record) FieldPtrs() map[string]*float64 { return r.fieldPtrs() }

func (r *Record) fieldPtrs() map[string]*float64 {
	return map[string]*float64{
		"coverage": &r.Coverage, "dry_air_kg": &r.DryAirKg, "water_removed_kg": &r.WaterRemovedKg,
		"coil_sensible_kwh": &r.CoilSensibleKWh, "coil_latent_kwh": &r.CoilLatentKWh, "coil_total_kwh": &r.CoilTotalKWh,
		"coil_total_gross_kwh": &r.CoilTotalGrossKWh, "reheat_kwh": &r.ReheatKWh, "reheat_needed_kwh": &r.ReheatNeededKWh,
		"reheat_avoidable_kwh": &r.ReheatAvoidKWh, "reheat_input_kwh": &r.ReheatInputKWh, "cooling_input_kwh": &r.CoolingInputKWh,
		"cooling_avoidable_input_kwh": &r.CoolingAvoidKWh, "fan_heat_kwh": &r.FanHeatKWh, "water_reevaporated_kg": &r.WaterReevaporatedKg, "electricity_kwh": &r.ElectricityKWh,
		"fuel_kwh": &r.FuelKWh, "reheat_coil_ratio": &r.ReheatCoilRatio, "coil_eer": &r.CoilEER, "effective_eer": &r.EffectiveEER, "effective_eer_cost_basis": &r.EffectiveEERCost,
		"shr": &r.SHR, "water_per_kwh_l": &r.WaterPerKWhL, "shc_h": &r.SHCHours, "shc_unneeded_h": &r.SHCUnneededH,
		"entering_temp_c": &r.EnteringTempC, "entering_dewpoint_c": &r.EnteringDewPointC, "leaving_temp_c": &r.LeavingTempC, "leaving_dewpoint_c": &r.LeavingDewPointC,
		"required_leaving_temp_c": &r.RequiredLeavingC, "supply_temp_c": &r.SupplyTempC, "overcooling_k": &r.OvercoolingK,
		"humidity_need_h": &r.HumidityNeedHours, "outdoor_temp_c": &r.OutdoorTempC, "outdoor_dewpoint_c": &r.OutdoorDewPointC, "humidity_shortfall_kg": &r.ShortfallKg, "humidity_shortfall_h": &r.ShortfallHours,
		"shortfall_cooling_kwh": &r.ShortfallCoolKWh, "shortfall_reheat_kwh": &r.ShortfallReheatKWh, "cost": &r.Cost, "cost_avoidable": &r.CostAvoidable, "co2_kg": &r.CO2Kg,
		"co2_avoidable_kg": &r.CO2AvoidableKg, "water_removed_kg_u95": &r.WaterRemovedKgU95, "coil_total_kwh_u95": &r.CoilTotalKWhU95,
		"reheat_kwh_u95": &r.ReheatKWhU95, "reheat_avoidable_kwh_u95": &r.ReheatAvoidKWhU95,
	}
}

// HasFlag reports whether the record carries flag f.
func (r *Record) HasFlag(f string) bool {
	for _, x := range r.Flags {
		if x == f {
			return true
		}
	}
	return false
}

func ratio(a, b float64) float64 {
	if b == 0 || math.IsNaN(a) || math.IsNaN(b) {
		return math.NaN()
	}
	return a / b
}

// HasCoolingInput reports whether the hour has a cooling input: false when
// it could not be computed (a metered unit whose meter was silent with no
// rated efficiency to stand in, flagged FlagCoolingMissing; stored before
// that flag, an empty or infinite value).
func (r *Record) HasCoolingInput() bool {
	return !math.IsNaN(r.CoolingInputKWh) && !math.IsInf(r.CoolingInputKWh, 0)
}

// CoolingGap counts the hours without a cooling input and sums the coil
// and reheat figures of those hours, which a ratio over many hours (an
// EER of sums) leaves out of its numerator as their input is out of its
// denominator. Sums of the cost and energy fields skip such hours'
// empty values; the count says how many were skipped.
type CoolingGap struct {
	Hours          int
	CoilKWh        float64 // coil_total_kwh of those hours
	ReheatKWh      float64 // reheat_kwh
	ReheatInputKWh float64 // reheat_input_kwh
}

// Add counts r when it has no cooling input.
func (g *CoolingGap) Add(r *Record) {
	if r.HasCoolingInput() {
		return
	}
	g.Hours++
	g.CoilKWh += finiteOr0(r.CoilTotalKWh)
	g.ReheatKWh += finiteOr0(r.ReheatKWh)
	g.ReheatInputKWh += finiteOr0(r.ReheatInputKWh)
}

// Merge adds the gap of other hours (a day's, say) to g.
func (g *CoolingGap) Merge(o CoolingGap) {
	g.Hours += o.Hours
	g.CoilKWh += o.CoilKWh
	g.ReheatKWh += o.ReheatKWh
	g.ReheatInputKWh += o.ReheatInputKWh
}

func finiteOr0(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0
	}
	return v
}
