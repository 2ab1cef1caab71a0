package metrics

import (
	"fmt"
	"math"
	"sort"
	"sync"
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
	FlagWrongUnit          = "wrong_unit:"   // + role: the values look logged in another unit than configured (RoleQuality.OtherUnit)
	FlagMoistureAdded      = "coil_adds_moisture"
	FlagSupersaturated     = "entering_above_saturation"
	FlagReheatWithoutCoil  = "supply_warmer_without_reheat"
	FlagReheatMeter        = "reheat_meter_mismatch"
	FlagWaterInUncertainty = "water_within_uncertainty"
	FlagModelledCooling    = "cooling_input_modelled"
	FlagCoolingMissing     = "cooling_input_missing" // the coil cooled while cooling_kw read nothing and no rated EER or plant kW/ton could stand in
	FlagSpaceGainAssumed   = "space_gain_assumed"
	FlagCOPImplausible     = "cop_implausible"        // air-side coil load over metered cooling input outside 1.5-7
	FlagLeavingSensorOut   = "leaving_sensor_missing" // a mapped leaving humidity sensor read nothing; the coil model took over
	FlagSupplyBelowCoil    = "supply_below_coil"      // supply reads more than SupplyBelowCoilK colder than the coil leaving air
)

// SupplyBelowCoilK is how far the supply may read below the coil leaving
// air before the pair is implausible: nothing between a cooling coil and
// the supply cools the air further (the fan and duct only add heat), so a
// supply well below the coil is a sensor or unit mistake, such as °C
// logged as °F. Two sensors' calibration and stratification allow about
// 3 K (common practice, no source).
const SupplyBelowCoilK = 3.0

// Compute turns one aligned hour into a record. It never fails: missing or
// implausible data lower the coverage and raise flags.
func Compute(u *AirHandler, hr *Hour) Record {
	var e engine // on the stack: one hour's engine is not kept
	e.init(u, hr)
	n := hr.Steps()
	dtH := hr.Step.Hours()
	rec := Record{HourStart: hr.Start.UTC(), AHU: hr.AHU}

	var (
		valid, coolOnSteps, needSteps, moistSteps, supersatSteps, noCoilSteps, modelled int
		belowCoilSteps, unknownCool                                                     int
		sumTIn, sumWIn, sumWLv, sumTLv, sumTSup, sumReq, sumOver                        float64
		reheatElecIn, reheatAvoidIn, meterHeat, computedHeat                            float64
		meterSteps, gainSteps, lvOutSteps, copSteps, meteredSteps                       int
		meterAll                                                                        float64
		copCoil, copIn                                                                  float64
	)
	in, o := &stepIn{}, &e.out
	lastOff := -1 << 30 // step index of the last step with the coil off
	var sens [nSens][4]float64
	c := e.columns(hr)
	if e.mix {
		e.hourShare = c.share(n)
	}
	for i := 0; i < n; i++ {
		c.fill(in, i)
		if !e.step(in, o) {
			lastOff = i
			continue
		}
		if !o.coolOn || o.meteredCool && o.coolIn <= 0 {
			lastOff = i
		}
		// A wet coil that sat still gives its water back to the first air
		// through it: leaving air wetter than the entering air within
		// reevapWindow of the coil being off is that water, not a sensor
		// fault, and not a negative water removal.
		if o.moistureAdded && time.Duration(i-lastOff)*hr.Step <= reevapWindow {
			o.moistureAdded = false
			o.reevaporated += o.mDa * (o.sensorW - o.wIn)
			if o.water.v < 0 {
				o.water = dv{}
			}
		}
		valid++
		rec.DryAirKg += o.mDa * 3600 * dtH
		rec.WaterRemovedKg += o.water.v * 3600 * dtH
		rec.CoilSensibleKWh += o.sens * dtH
		rec.CoilLatentKWh += o.lat * dtH
		rec.CoilTotalKWh += o.total.v * dtH
		rec.CoilTotalGrossKWh += o.gross * dtH
		rec.ReheatKWh += o.reheat.v * dtH
		rec.ReheatNeededKWh += o.reheatNeeded * dtH
		rec.ReheatAvoidKWh += o.reheatAvoid.v * dtH
		// A sensor's bias is the same all hour: its effect on an hourly
		// total is the sum of the steps' sensitivities.
		for k := 0; k < nSens; k++ {
			sens[k][0] += o.water.g[k] * 3600 * dtH
			sens[k][1] += o.total.g[k] * dtH
			sens[k][2] += o.reheat.g[k] * dtH
			sens[k][3] += o.reheatAvoid.g[k] * dtH
		}
		rec.ReheatInputKWh += o.reheatIn * dtH
		rec.CoolingInputKWh += o.coolIn * dtH
		rec.CoolingAvoidKWh += o.coolAvoidIn * dtH
		rec.FanHeatKWh += o.fanHeat * dtH
		rec.WaterReevaporatedKg += o.reevaporated * 3600 * dtH
		if o.reheat.v > 0 {
			reheatAvoidIn += o.reheatIn * o.reheatAvoid.v / o.reheat.v * dtH
		}
		if u.Reheat == ReheatElectric {
			reheatElecIn += o.reheatIn * dtH
		}
		// A meter reading no more heat than the air side's deadband can
		// hide (twice the deadband's rise) agrees with an air side that
		// sees no reheat: such steps are no evidence either way.
		if o.meteredHeat {
			meteredSteps++
			meterAll += o.reheatIn * dtH
		}
		if o.meteredHeat && (o.reheatOn || o.mDa <= 0 ||
			o.reheatIn > 2*u.Thresholds.ReheatDeadbandK*o.mDa*cp(o.wOut)) {
			meterSteps++
			meterHeat += o.reheatIn * dtH
			computedHeat += o.reheat.v * dtH
		}
		if o.modelledCool && o.coolOn {
			modelled++
		}
		if o.coolUnknown {
			unknownCool++
		}
		if o.coolOn && o.reheatOn {
			rec.SHCHours += dtH
			if !(o.humidityNeed && o.water.v > 0) {
				rec.SHCUnneededH += dtH
			}
		}
		if o.shortfall > 0 {
			rec.ShortfallKg += o.shortfall * 3600 * dtH
			rec.ShortfallCoolKWh += o.shortCool * dtH
			rec.ShortfallReheatKWh += o.shortReheat * dtH
			if o.wOut > o.wReq*(1+shortfallTol) {
				rec.ShortfallHours += dtH
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
		if o.gainAssumed {
			gainSteps++
		}
		if e.lvHum != humNone && math.IsNaN(in.lvHum) {
			lvOutSteps++
		}
		if o.meteredCool && o.coolOn {
			copCoil += o.total.v * dtH
			copIn += o.coolIn * dtH
			copSteps++
		}
		if o.enteringSupersat {
			supersatSteps++
		}
		if o.reheatWithoutCoil {
			noCoilSteps++
		}
		if in.tSup < in.tLv-SupplyBelowCoilK {
			belowCoilSteps++
		}
		sumTIn += in.tIn
		sumWIn += o.wIn
		sumWLv += o.wOut
		sumTLv += in.tLv
		sumTSup += in.tSup
	}
	rec.Coverage = float64(valid) / float64(n)
	// A leaving sensor's noise was kept on both sides step by step; what the
	// hour cannot tell from zero is no water.
	rec.WaterRemovedKg = math.Max(0, rec.WaterRemovedKg)
	nan := math.NaN()
	rec.EnteringTempC, rec.EnteringDewPointC, rec.LeavingTempC, rec.LeavingDewPointC, rec.SupplyTempC = nan, nan, nan, nan, nan
	rec.RequiredLeavingC, rec.OvercoolingK = nan, nan
	if valid > 0 {
		fv := float64(valid)
		rec.EnteringTempC, rec.LeavingTempC, rec.SupplyTempC = sumTIn/fv, sumTLv/fv, sumTSup/fv
		// Dew point of the hour's mean humidity ratio.
		w := sumWIn / fv
		if td, err := psychro.DewPointFromHumRatio(w, u.PressurePa); err == nil {
			rec.EnteringDewPointC = td
		}
		if td, err := psychro.DewPointFromHumRatio(sumWLv/fv, u.PressurePa); err == nil {
			rec.LeavingDewPointC = td
		}
	}
	rec.OutdoorTempC, rec.OutdoorDewPointC = outdoorMeans(c.tOut, c.oaRH, u.PressurePa, &e.memoOut)
	if needSteps > 0 {
		rec.RequiredLeavingC = sumReq / float64(needSteps)
	}
	if coolOnSteps > 0 {
		rec.OvercoolingK = sumOver / float64(coolOnSteps)
	}
	e.uncertainty(&sens, &rec)

	// A reheat meter and the air side measure the same heat (electric
	// reheat: heat = input). Where they agree within their combined 95 %
	// uncertainty, U_c = sqrt(U_air² + U_meter²), the hour's reheat is
	// their inverse-variance weighted mean, R = (A/U_A² + M/U_M²) / (1/U_A²
	// + 1/U_M²), with U_R = (1/U_A² + 1/U_M²)^-1/2, so the better
	// measurement counts for more; needed and avoidable reheat scale with
	// it. Where they disagree by more, one of them is wrong: the hour keeps
	// both (the air side in reheat, the meter in reheat input) and is
	// flagged. The meter's half-width is the power accuracy times its
	// reading; a meter must cover every covered step to be weighed.
	meterDisagrees := false
	if meterSteps > 0 && math.Max(meterHeat, computedHeat) > 0.5 {
		comb := math.Hypot(rec.ReheatKWhU95, u.Accuracy.PowerFrac*meterHeat)
		meterDisagrees = math.Abs(meterHeat-computedHeat) > comb
	}
	if u.Reheat == ReheatElectric && valid > 0 && meteredSteps == valid && !meterDisagrees {
		a, ua := rec.ReheatKWh, rec.ReheatKWhU95
		m, um := meterAll, u.Accuracy.PowerFrac*meterAll
		if a > 0 && m > 0 && ua > 0 && um > 0 {
			wa, wm := 1/(ua*ua), 1/(um*um)
			r := (wa*a + wm*m) / (wa + wm)
			k := r / a
			rec.ReheatKWh, rec.ReheatKWhU95 = r, 1/math.Sqrt(wa+wm)
			rec.ReheatNeededKWh *= k
			rec.ReheatAvoidKWh *= k
			rec.ReheatAvoidKWhU95 *= k
			rec.ReheatInputKWh, reheatElecIn, reheatAvoidIn = r, r, rec.ReheatAvoidKWh
		}
	}

	rec.ElectricityKWh = rec.CoolingInputKWh + reheatElecIn
	if u.Reheat == ReheatHotWater {
		rec.FuelKWh = rec.ReheatInputKWh
	}
	rec.ReheatCoilRatio = ratio(rec.ReheatKWh, rec.CoilTotalKWh)
	rec.CoilEER = psychro.COPToEER(ratio(rec.CoilTotalKWh, rec.CoolingInputKWh))
	// Effective EER on electricity only: fuel kWh are not electric kWh and
	// are not added to them. The cost-basis figure counts fuel as the
	// electricity its price would buy at the site's prices.
	rec.EffectiveEER = psychro.COPToEER(ratio(rec.CoilTotalKWh-rec.ReheatKWh, rec.ElectricityKWh))
	rec.EffectiveEERCost = math.NaN()
	if pr := u.Prices; pr.ElectricityPerKWh > 0 {
		rec.EffectiveEERCost = psychro.COPToEER(ratio(rec.CoilTotalKWh-rec.ReheatKWh, rec.ElectricityKWh+rec.FuelKWh*pr.FuelPerKWh/pr.ElectricityPerKWh))
	}
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
		if q.OtherUnit != "" {
			flags = append(flags, FlagWrongUnit+r)
		}
		if flatRoles[Role(r)] && q.OutOfRange == 0 &&
			(q.Flat || q.Samples >= 10 && isFlat(hr.Values[Role(r)]) || slowFlatRoles[Role(r)] && q.FlatFor >= FlatSpan) {
			flags = append(flags, FlagFlat+r)
		}
	}
	// A fault reads wetter much of the time; a noisy sensor on a dry coil
	// now and then (one 5-minute sample fills five steps).
	if moistSteps >= 5 && 4*moistSteps >= coolOnSteps {
		flags = append(flags, FlagMoistureAdded)
	}
	if supersatSteps >= 5 {
		flags = append(flags, FlagSupersaturated)
	}
	if noCoilSteps >= 5 {
		flags = append(flags, FlagReheatWithoutCoil)
	}
	if belowCoilSteps >= 5 {
		flags = append(flags, FlagSupplyBelowCoil)
	}
	if meterDisagrees {
		flags = append(flags, FlagReheatMeter)
	}
	if coolOnSteps > 0 && rec.WaterRemovedKg < rec.WaterRemovedKgU95 {
		flags = append(flags, FlagWaterInUncertainty)
	}
	if modelled > 0 {
		flags = append(flags, FlagModelledCooling)
	}
	if unknownCool > 0 {
		flags = append(flags, FlagCoolingMissing)
	}
	if gainSteps > 0 {
		flags = append(flags, FlagSpaceGainAssumed)
	}
	if lvOutSteps >= 5 {
		flags = append(flags, FlagLeavingSensorOut)
	}
	// The air side and the meter must tell one story: a vapour-compression
	// unit's coil load over its electric input lies between about 1.5 and
	// 7 (DX and chiller plants alike; common practice, no source). Outside,
	// the airflow, the entering humidity or the meter is wrong.
	if copSteps*2 >= n && copIn > 0.5 {
		if c := copCoil / copIn; c < 1.5 || c > 7 {
			flags = append(flags, FlagCOPImplausible)
		}
	}
	rec.Flags = flags
	return rec
}

// shortfallTol is how much wetter than the target the coil leaving air
// may be before the step counts towards the hours above the target: 2 % of
// W, about 0.3 K of dew point (common practice, no source).
const shortfallTol = 0.02

// reevapWindow is how long after the coil was off leaving air wetter than
// the entering air counts as water the wet coil gives back (a dew-point or
// RH sensor also lags by a few minutes behind such a start; common
// practice, no source).
const reevapWindow = 10 * time.Minute

// flatRoles are sensors whose readings never sit exactly still in operation.
var flatRoles = map[Role]bool{
	RoleEnteringTemp: true, RoleEnteringRH: true, RoleEnteringDewPoint: true, RoleLeavingTemp: true,
	RoleLeavingRH: true, RoleLeavingDewPoint: true, RoleSupplyTemp: true, RoleSpaceRH: true, RoleOutdoorTemp: true,
	RoleReturnTemp: true, RoleReturnRH: true, RoleReturnDewPoint: true, RoleOutdoorRH: true,
}

// slowFlatRoles are the sensors of air whose state no controller holds:
// humidity and outdoor temperature. One that repeats its exact value for
// FlatSpan is stuck, however seldom it is logged (a 15-minute or
// change-of-value log gives too few samples in an hour to tell). Supply and
// coil leaving temperatures sit at their set points and are left to the
// one-hour rule (common practice, no source).
var slowFlatRoles = map[Role]bool{
	RoleEnteringRH: true, RoleEnteringDewPoint: true, RoleLeavingRH: true, RoleLeavingDewPoint: true,
	RoleSpaceRH: true, RoleReturnRH: true, RoleReturnDewPoint: true, RoleOutdoorRH: true, RoleOutdoorTemp: true,
}

// FlatSpan is how long a humidity or outdoor sensor must repeat exactly the
// same value before it is flagged flat whatever its logging interval
// (common practice, no source: such a sensor in moving air does not repeat
// its reading for three hours at 0.1 % RH resolution).
const FlatSpan = 3 * time.Hour

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

func (e *engine) init(u *AirHandler, hr *Hour) {
	*e = engine{u: u, p: u.PressurePa}
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
	if e.humIn == humNone && hr.Has(RoleReturnTemp) && hr.Has(RoleOutdoorTemp) && hr.Has(RoleOutdoorRH) {
		switch {
		case hr.Has(RoleReturnRH):
			e.mix, e.retHum = true, humRH
		case hr.Has(RoleReturnDewPoint):
			e.mix, e.retHum = true, humDewPoint
		}
	}
	e.hasFanKW = hr.Has(RoleFanPower)
	e.hasCoolKW = hr.Has(RoleCoolingPower)
	e.hasReheatKW = hr.Has(RoleReheatPower)
	e.hasSpaceT = hr.Has(RoleSpaceTemp)
	// The dry-coil margin: twice the combined 95 % uncertainty of the
	// leaving temperature and the entering dew point. An RH sensor's dew
	// point uncertainty is taken near 60 % RH and 15 °C, where d ln p_ws /
	// dT is about 0.065 /K (ASHRAE ch. 1 eq. 6, evaluated).
	a := u.Accuracy
	tdU := a.RH / 0.6 / 0.065
	if e.humIn == humDewPoint {
		tdU = a.DewPointK
	}
	e.dryMarginK = 2 * math.Hypot(a.TempK, tdU)
	e.hourShare = math.NaN()
	e.bf = bypassFor(u.LeavingRH, e.p)
	e.bfD = seed(e.bf, sensBF)
	e.gainD = seed(u.SpaceGain, sensGain)
	e.rOverP = psychro.RDryAir / e.p
	e.scratch = newScratch()
	// The assumed leaving RH's uncertainty as the bypass factor's: half
	// the change of BF across the band (BF is far from linear near
	// saturation, where it reaches 0).
	if u.LeavingRHU > 0 {
		lo, hi := math.Max(0.5, u.LeavingRH-u.LeavingRHU), math.Min(1, u.LeavingRH+u.LeavingRHU)
		e.bfU = math.Abs(bypassFor(lo, e.p)-bypassFor(hi, e.p)) / 2
	}
	switch u.Target.Kind {
	case TargetSupplyDewPoint, TargetSpaceDewPoint:
		if pw, err := psychro.SatVapPressure(u.Target.DewPointC); err == nil {
			e.wTarget = psychro.MolarMassRatio * pw / (e.p - pw)
		}
	}
}

// cols holds the hour's value slices by role, looked up once per hour
// (nil for unmapped roles).
type cols struct {
	tIn, humIn, tLv, lvHum, tSup, flow, fanKW, coolKW, reheatKW, tOut, spaceT, spaceHum []float64
	tRet, retHum, oaRH, oaFlow                                                          []float64
}

func (e *engine) columns(hr *Hour) cols {
	c := cols{
		tIn: hr.Values[RoleEnteringTemp], tLv: hr.Values[RoleLeavingTemp], tSup: hr.Values[RoleSupplyTemp],
		flow: hr.Values[RoleSupplyFlow], fanKW: hr.Values[RoleFanPower], coolKW: hr.Values[RoleCoolingPower],
		reheatKW: hr.Values[RoleReheatPower], tOut: hr.Values[RoleOutdoorTemp], spaceT: hr.Values[RoleSpaceTemp],
		spaceHum: hr.Values[RoleSpaceRH],
		tRet:     hr.Values[RoleReturnTemp], oaRH: hr.Values[RoleOutdoorRH], oaFlow: hr.Values[RoleOutdoorFlow],
	}
	switch e.retHum {
	case humRH:
		c.retHum = hr.Values[RoleReturnRH]
	case humDewPoint:
		c.retHum = hr.Values[RoleReturnDewPoint]
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

// share returns the mean outdoor-air share over the hour's steps where the
// outdoor and return temperatures differ by mixMinDeltaK or more, NaN when
// there are none.
func (c *cols) share(n int) float64 {
	if c.tRet == nil || c.tOut == nil || c.tIn == nil {
		return math.NaN()
	}
	sum, k := 0.0, 0
	for i := 0; i < n; i++ {
		d := c.tOut[i] - c.tRet[i]
		if math.IsNaN(d) || math.IsNaN(c.tIn[i]) || math.Abs(d) < mixMinDeltaK {
			continue
		}
		sum += math.Max(0, math.Min(1, (c.tIn[i]-c.tRet[i])/d))
		k++
	}
	if k == 0 {
		return math.NaN()
	}
	return sum / float64(k)
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
	in.tRet, in.retHum, in.oaRH, in.oaFlow = at(c.tRet, i), at(c.retHum, i), at(c.oaRH, i), at(c.oaFlow, i)
}

// uncertainty sets the 95 % half-widths by first-order propagation of
// sensor bias. A calibration error is the same all hour, so each sensor's
// effect on an hourly total is the hour's sum of per-step sensitivities
// (exact derivatives, carried through the step by dual numbers) times the
// sensor's accuracy; the sensors' effects are independent and add in
// quadrature. Airflow scales every mass-proportional figure, so its share
// is the accuracy times the figure itself.
func (e *engine) uncertainty(sens *[nSens][4]float64, rec *Record) {
	a := e.u.Accuracy
	var acc [nSens]float64
	acc[sensTIn], acc[sensTLv], acc[sensTSup] = a.TempK, a.TempK, a.TempK
	// The assumptions: the coil's bypass factor (from the assumed leaving
	// RH), the outdoor-air share (its half-width rides on the gradient)
	// and the space moisture gain.
	acc[sensBF], acc[sensShare], acc[sensGain] = e.bfU, 1, SpaceGainRelU*e.u.SpaceGain
	humIn := e.humIn
	if e.mix {
		humIn = e.retHum
	}
	for _, x := range []struct {
		form, idx int
	}{{humIn, sensHumIn}, {e.lvHum, sensLvHum}} {
		switch x.form {
		case humRH:
			acc[x.idx] = a.RH
		case humDewPoint:
			acc[x.idx] = a.DewPointK
		}
	}
	vals := [4]float64{rec.WaterRemovedKg, rec.CoilTotalKWh, rec.ReheatKWh, rec.ReheatAvoidKWh}
	var sumSq [4]float64
	for j := range vals {
		for k := 0; k < nSens; k++ {
			d := sens[k][j] * acc[k]
			sumSq[j] += d * d
		}
		f := a.FlowFrac * vals[j]
		sumSq[j] += f * f
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

// bypassFor caches bypassFactor by leaving RH and pressure: units share a
// handful of settings, and the search costs sixty saturation pressures.
func bypassFor(rh, p float64) float64 {
	k := [2]float64{rh, p}
	bfMu.Lock()
	defer bfMu.Unlock()
	if v, ok := bfCache[k]; ok {
		return v
	}
	v := bypassFactor(rh, p)
	if len(bfCache) > 256 {
		clear(bfCache)
	}
	bfCache[k] = v
	return v
}

var (
	bfMu    sync.Mutex
	bfCache = map[[2]float64]float64{}
)
