package metrics

import (
	"fmt"
	"math"
	"sort"
	"time"

	"github.com/dewline/dewline/psychro"
)

// Flags a record may carry. They are data-quality findings and facts about
// the hour, stable strings for filters and alert rules.
const (
	FlagNoData             = "no_data"
	FlagLowCoverage        = "low_coverage"
	FlagOutOfRange         = "out_of_range:" // + role
	FlagFlat               = "flat:"         // + role: identical readings all hour
	FlagMoistureAdded      = "coil_adds_moisture"
	FlagSupersaturated     = "entering_above_saturation"
	FlagReheatWithoutCoil  = "supply_warmer_without_reheat"
	FlagReheatMeter        = "reheat_meter_mismatch"
	FlagWaterInUncertainty = "water_within_uncertainty"
	FlagModelledCooling    = "cooling_input_modelled"
)

// Compute turns one aligned hour into a record. It never fails: missing or
// implausible data lower the coverage and raise flags.
func Compute(u *Unit, hr *Hour) Record {
	e := newEngine(u, hr)
	n := hr.Steps()
	dtH := hr.Step.Hours()
	rec := Record{HourStart: hr.Start.UTC(), AHU: hr.AHU}

	var (
		valid, coolOnSteps, needSteps, moistSteps, supersatSteps, noCoilSteps, modelled int
		sumTIn, sumWIn, sumTLv, sumTSup, sumReq, sumOver                                float64
		reheatElecIn, reheatAvoidIn, meterHeat, computedHeat                            float64
		meterSteps                                                                      int
	)
	in := &stepIn{}
	c := e.columns(hr)
	for i := 0; i < n; i++ {
		c.fill(in, i)
		o, ok := e.step(in)
		if !ok {
			continue
		}
		valid++
		rec.DryAirKg += o.mDa * 3600 * dtH
		rec.WaterRemovedKg += o.water * 3600 * dtH
		rec.CoilSensibleKWh += o.sens * dtH
		rec.CoilLatentKWh += o.lat * dtH
		rec.CoilTotalKWh += o.total * dtH
		rec.CoilTotalGrossKWh += o.gross * dtH
		rec.ReheatKWh += o.reheat * dtH
		rec.ReheatNeededKWh += o.reheatNeeded * dtH
		rec.ReheatAvoidKWh += o.reheatAvoid * dtH
		rec.ReheatInputKWh += o.reheatIn * dtH
		rec.CoolingInputKWh += o.coolIn * dtH
		rec.CoolingAvoidKWh += o.coolAvoidIn * dtH
		rec.FanHeatKWh += o.fanHeat * dtH
		if o.reheat > 0 {
			reheatAvoidIn += o.reheatIn * o.reheatAvoid / o.reheat * dtH
		}
		if u.Reheat == ReheatElectric {
			reheatElecIn += o.reheatIn * dtH
		}
		if o.meteredHeat {
			meterSteps++
			meterHeat += o.reheatIn * dtH
			computedHeat += o.reheat * dtH
		}
		if !o.meteredCool && o.coolOn {
			modelled++
		}
		if o.coolOn && o.reheatOn {
			rec.SHCHours += dtH
			if !(o.humidityNeed && o.water > 0) {
				rec.SHCUnneededH += dtH
			}
		}
		if o.humidityNeed {
			rec.HumidityNeedHours += dtH
			needSteps++
			sumReq += o.tReq
		}
		if o.coolOn {
			coolOnSteps++
			sumOver += math.Max(0, o.tNeed-in.tLv)
		}
		if o.moistureAdded {
			moistSteps++
		}
		if o.enteringSupersat {
			supersatSteps++
		}
		if o.reheatWithoutCoil {
			noCoilSteps++
		}
		sumTIn += in.tIn
		sumWIn += o.wIn
		sumTLv += in.tLv
		sumTSup += in.tSup
	}
	rec.Coverage = float64(valid) / float64(n)
	nan := math.NaN()
	rec.EnteringTempC, rec.EnteringDewPointC, rec.LeavingTempC, rec.SupplyTempC = nan, nan, nan, nan
	rec.RequiredLeavingC, rec.OvercoolingK = nan, nan
	if valid > 0 {
		fv := float64(valid)
		rec.EnteringTempC, rec.LeavingTempC, rec.SupplyTempC = sumTIn/fv, sumTLv/fv, sumTSup/fv
		// Dew point of the hour's mean humidity ratio.
		w := sumWIn / fv
		if td, err := psychro.DewPointFromHumRatio(w, u.PressurePa); err == nil {
			rec.EnteringDewPointC = td
		}
	}
	if needSteps > 0 {
		rec.RequiredLeavingC = sumReq / float64(needSteps)
	}
	if coolOnSteps > 0 {
		rec.OvercoolingK = sumOver / float64(coolOnSteps)
	}
	rec.ElectricityKWh = rec.CoolingInputKWh + reheatElecIn
	if u.Reheat == ReheatHotWater {
		rec.FuelKWh = rec.ReheatInputKWh
	}
	rec.ReheatCoilRatio = ratio(rec.ReheatKWh, rec.CoilTotalKWh)
	rec.CoilEER = psychro.COPToEER(ratio(rec.CoilTotalKWh, rec.CoolingInputKWh))
	rec.EffectiveEER = psychro.COPToEER(ratio(rec.CoilTotalKWh-rec.ReheatKWh, rec.CoolingInputKWh+rec.ReheatInputKWh))
	rec.SHR = ratio(rec.CoilSensibleKWh, rec.CoilTotalKWh)
	rec.WaterPerKWhL = ratio(rec.WaterRemovedKg, rec.CoolingInputKWh+rec.ReheatInputKWh) // 1 kg of condensate is about 1 L

	pr := u.Prices
	avoidElec := rec.CoolingAvoidKWh
	avoidFuel := 0.0
	if u.Reheat == ReheatHotWater {
		avoidFuel = reheatAvoidIn
	} else {
		avoidElec += reheatAvoidIn
	}
	rec.Cost = rec.ElectricityKWh*pr.ElectricityPerKWh + rec.FuelKWh*pr.FuelPerKWh
	rec.CostAvoidable = avoidElec*pr.ElectricityPerKWh + avoidFuel*pr.FuelPerKWh
	rec.CO2Kg = rec.ElectricityKWh*pr.ElectricityCO2KgPerKWh + rec.FuelKWh*pr.FuelCO2KgPerKWh
	rec.CO2AvoidableKg = avoidElec*pr.ElectricityCO2KgPerKWh + avoidFuel*pr.FuelCO2KgPerKWh

	e.uncertainty(hr, &rec)

	// Findings.
	var flags []string
	switch {
	case valid == 0:
		flags = append(flags, FlagNoData)
	case rec.Coverage < u.Thresholds.MinCoverage:
		flags = append(flags, FlagLowCoverage)
	}
	roles := make([]string, 0, len(hr.Quality))
	for r := range hr.Quality {
		roles = append(roles, string(r))
	}
	sort.Strings(roles)
	for _, r := range roles {
		q := hr.Quality[Role(r)]
		if q.OutOfRange > 0 || q.NotFinite > 0 {
			flags = append(flags, FlagOutOfRange+r)
		}
		if flatRoles[Role(r)] && q.Samples >= 10 && q.OutOfRange == 0 && isFlat(hr.Values[Role(r)]) {
			flags = append(flags, FlagFlat+r)
		}
	}
	if moistSteps >= 5 {
		flags = append(flags, FlagMoistureAdded)
	}
	if supersatSteps >= 5 {
		flags = append(flags, FlagSupersaturated)
	}
	if noCoilSteps >= 5 {
		flags = append(flags, FlagReheatWithoutCoil)
	}
	if meterSteps > 0 && math.Max(meterHeat, computedHeat) > 0.5 &&
		math.Abs(meterHeat-computedHeat) > u.Thresholds.MeterTolerance*math.Max(meterHeat, computedHeat) {
		flags = append(flags, FlagReheatMeter)
	}
	if coolOnSteps > 0 && rec.WaterRemovedKg < rec.WaterRemovedKgU95 {
		flags = append(flags, FlagWaterInUncertainty)
	}
	if modelled > 0 {
		flags = append(flags, FlagModelledCooling)
	}
	rec.Flags = flags
	return rec
}

// flatRoles are sensors whose readings never sit exactly still in operation.
var flatRoles = map[Role]bool{
	RoleEnteringTemp: true, RoleEnteringRH: true, RoleEnteringDewPoint: true, RoleLeavingTemp: true,
	RoleLeavingRH: true, RoleLeavingDewPoint: true, RoleSupplyTemp: true, RoleSpaceRH: true, RoleOutdoorTemp: true,
}

func isFlat(v []float64) bool {
	first, seen := math.NaN(), 0
	for _, x := range v {
		if math.IsNaN(x) {
			continue
		}
		if seen == 0 {
			first = x
		} else if x != first {
			return false
		}
		seen++
	}
	return seen > len(v)/2
}

func newEngine(u *Unit, hr *Hour) *engine {
	e := &engine{u: u, p: u.PressurePa, cacheW: math.NaN()}
	switch {
	case hr.Has(RoleEnteringRH):
		e.humIn = humRH
	case hr.Has(RoleEnteringDewPoint):
		e.humIn = humDewPoint
	}
	switch {
	case hr.Has(RoleLeavingRH):
		e.lvHum = humRH
	case hr.Has(RoleLeavingDewPoint):
		e.lvHum = humDewPoint
	}
	if hr.Has(RoleSpaceRH) {
		e.spaceHum = humRH
	}
	e.hasFanKW = hr.Has(RoleFanPower)
	e.hasCoolKW = hr.Has(RoleCoolingPower)
	e.hasReheatKW = hr.Has(RoleReheatPower)
	e.hasSpaceT = hr.Has(RoleSpaceTemp)
	switch u.Target.Kind {
	case TargetSupplyDewPoint, TargetSpaceDewPoint:
		if pw, err := psychro.SatVapPressure(u.Target.DewPointC); err == nil {
			e.wTarget = psychro.MolarMassRatio * pw / (e.p - pw)
		}
	}
	return e
}

// cols holds the hour's value slices by role, looked up once per hour
// (nil for unmapped roles).
type cols struct {
	tIn, humIn, tLv, lvHum, tSup, flow, fanKW, coolKW, reheatKW, tOut, spaceT, spaceHum []float64
}

func (e *engine) columns(hr *Hour) cols {
	c := cols{
		tIn: hr.Values[RoleEnteringTemp], tLv: hr.Values[RoleLeavingTemp], tSup: hr.Values[RoleSupplyTemp],
		flow: hr.Values[RoleSupplyFlow], fanKW: hr.Values[RoleFanPower], coolKW: hr.Values[RoleCoolingPower],
		reheatKW: hr.Values[RoleReheatPower], tOut: hr.Values[RoleOutdoorTemp], spaceT: hr.Values[RoleSpaceTemp],
		spaceHum: hr.Values[RoleSpaceRH],
	}
	switch e.humIn {
	case humRH:
		c.humIn = hr.Values[RoleEnteringRH]
	case humDewPoint:
		c.humIn = hr.Values[RoleEnteringDewPoint]
	}
	switch e.lvHum {
	case humRH:
		c.lvHum = hr.Values[RoleLeavingRH]
	case humDewPoint:
		c.lvHum = hr.Values[RoleLeavingDewPoint]
	}
	return c
}

func at(v []float64, i int) float64 {
	if v == nil {
		return math.NaN()
	}
	return v[i]
}

// fill copies step i into in (NaN for unmapped roles).
func (c *cols) fill(in *stepIn, i int) {
	in.tIn, in.humIn, in.tLv, in.lvHum = at(c.tIn, i), at(c.humIn, i), at(c.tLv, i), at(c.lvHum, i)
	in.tSup, in.flow, in.fanKW, in.coolKW = at(c.tSup, i), at(c.flow, i), at(c.fanKW, i), at(c.coolKW, i)
	in.reheatKW, in.tOut, in.spaceT, in.spaceHum = at(c.reheatKW, i), at(c.tOut, i), at(c.spaceT, i), at(c.spaceHum, i)
}

// sensor is one reading whose calibration bias is propagated.
type sensor struct {
	name  string
	delta float64
	shift func(in *stepIn, d float64)
}

func (e *engine) sensors() []sensor {
	a := e.u.Accuracy
	s := []sensor{
		{"entering_temp", a.TempK, func(in *stepIn, d float64) { in.tIn += d }},
		{"leaving_temp", a.TempK, func(in *stepIn, d float64) { in.tLv += d }},
		{"supply_temp", a.TempK, func(in *stepIn, d float64) { in.tSup += d }},
	}
	switch e.humIn {
	case humRH:
		s = append(s, sensor{"entering_rh", a.RH, func(in *stepIn, d float64) { in.humIn = clamp01(in.humIn + d) }})
	case humDewPoint:
		s = append(s, sensor{"entering_dewpoint", a.DewPointK, func(in *stepIn, d float64) { in.humIn += d }})
	}
	switch e.lvHum {
	case humRH:
		s = append(s, sensor{"leaving_rh", a.RH, func(in *stepIn, d float64) { in.lvHum = clamp01(in.lvHum + d) }})
	case humDewPoint:
		s = append(s, sensor{"leaving_dewpoint", a.DewPointK, func(in *stepIn, d float64) { in.lvHum += d }})
	}
	return s
}

func clamp01(x float64) float64 { return math.Max(0, math.Min(1, x)) }

// uncertainty sets the 95 % half-widths by first-order propagation of
// sensor bias. A calibration error is the same all hour, so each sensor's
// effect on an hourly total is the hour's sum of per-step sensitivities
// times the sensor's accuracy (central differences over ±accuracy); the
// sensors' effects are independent and add in quadrature. Airflow scales
// every mass-proportional figure, so its share is the accuracy times the
// figure itself.
func (e *engine) uncertainty(hr *Hour, rec *Record) {
	var sumSq [4]float64
	n := hr.Steps()
	dtH := hr.Step.Hours()
	sensors := e.sensors()
	eff := make([][4]float64, len(sensors))
	c := e.columns(hr)
	base, plus, minus := &stepIn{}, &stepIn{}, &stepIn{}
	for i := 0; i < n; i++ {
		c.fill(base, i)
		if _, ok := e.step(base); !ok {
			continue
		}
		for k, s := range sensors {
			*plus, *minus = *base, *base
			s.shift(plus, s.delta)
			s.shift(minus, -s.delta)
			op, ok1 := e.step(plus)
			om, ok2 := e.step(minus)
			if !ok1 || !ok2 {
				continue
			}
			eff[k][0] += (op.water - om.water) / 2 * 3600 * dtH
			eff[k][1] += (op.total - om.total) / 2 * dtH
			eff[k][2] += (op.reheat - om.reheat) / 2 * dtH
			eff[k][3] += (op.reheatAvoid - om.reheatAvoid) / 2 * dtH
		}
	}
	for k := range eff {
		for j := range eff[k] {
			sumSq[j] += eff[k][j] * eff[k][j]
		}
	}
	f := e.u.Accuracy.FlowFrac
	vals := [4]float64{rec.WaterRemovedKg, rec.CoilTotalKWh, rec.ReheatKWh, rec.ReheatAvoidKWh}
	for k := range vals {
		sumSq[k] += (f * vals[k]) * (f * vals[k])
	}
	rec.WaterRemovedKgU95 = math.Sqrt(sumSq[0])
	rec.CoilTotalKWhU95 = math.Sqrt(sumSq[1])
	rec.ReheatKWhU95 = math.Sqrt(sumSq[2])
	rec.ReheatAvoidKWhU95 = math.Sqrt(sumSq[3])
}

// String summarises a record for logs and test messages.
func (r *Record) String() string {
	return fmt.Sprintf("%s %s cov=%.2f water=%.2fkg coil=%.2fkWh reheat=%.2fkWh (needed %.2f, avoidable %.2f) cool_in=%.2fkWh eer_eff=%.2f flags=%v",
		r.AHU, r.HourStart.Format(time.RFC3339), r.Coverage, r.WaterRemovedKg, r.CoilTotalKWh, r.ReheatKWh, r.ReheatNeededKWh, r.ReheatAvoidKWh, r.CoolingInputKWh, r.EffectiveEER, r.Flags)
}
