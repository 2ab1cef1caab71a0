package metrics

import (
	"math"

	"github.com/dewline/dewline/psychro"
)

// stepIn holds one grid step's readings in SI. NaN marks a missing optional
// reading; the required ones are checked before a step is evaluated.
type stepIn struct {
	tIn, humIn, tLv, lvHum, tSup, flow float64 // humIn/lvHum: RH fraction or dew point °C per humKind
	fanKW, coolKW, reheatKW, tOut      float64
	spaceT, spaceHum                   float64
	coolValve, reheatValve             float64
}

// humidity sensor forms
const (
	humNone = iota
	humRH
	humDewPoint
)

// stepOut is the physics of one step, as rates (kW, kg/s).
type stepOut struct {
	mDa                       float64 // dry-air mass flow, kg/s
	wIn, wOut                 float64
	water                     float64 // kg/s condensed
	sens, lat, total, gross   float64 // coil, kW
	fanHeat                   float64 // kW
	reheat                    float64 // kW of heat added by the reheat coil
	reheatNeeded, reheatAvoid float64 // kW
	coilNeeded, coilAvoid     float64 // kW of coil load needed / caused by over-cooling
	coolIn, coolAvoidIn       float64 // kW of cooling input (electric) total / avoidable
	reheatIn                  float64 // kW of reheat input (electric, or fuel for hot water)
	coolOn, reheatOn          bool
	humidityNeed              bool    // entering air wetter than the target allows
	tReq                      float64 // coil leaving temperature the target requires, +Inf when none
	tNeed                     float64 // coil temperature needed (T_c)
	wReq                      float64 // supply humidity ratio the target requires
	moistureAdded             bool    // measured leaving air wetter than entering beyond uncertainty
	enteringSupersat          bool    // entering dew point above dry bulb (sensor problem)
	reheatWithoutCoil         bool    // supply warmer than leaving with no reheat coil
	meteredCool, meteredHeat  bool
}

// engine evaluates steps for one unit, caching the target's required temperature.
type engine struct {
	u                      *Unit
	p                      float64
	humIn, lvHum, spaceHum int
	hasFanKW, hasCoolKW    bool
	hasReheatKW, hasSpaceT bool
	wTarget                float64 // humidity ratio of the target (supply or space)
	cacheW, cacheT         float64
}

// wFromHum returns W from a temperature and a humidity reading of the given form.
func (e *engine) wFromHum(form int, tC, hum float64) (w float64, supersat bool, ok bool) {
	switch form {
	case humRH:
		pws, err := psychro.SatVapPressure(tC)
		if err != nil || hum < 0 {
			return 0, false, false
		}
		if hum > 1 {
			hum = 1
		}
		pw := hum * pws
		return psychro.MolarMassRatio * pw / (e.p - pw), false, pw < e.p
	case humDewPoint:
		if hum > tC+0.01 {
			supersat = true
			hum = tC
		}
		pw, err := psychro.SatVapPressure(hum)
		if err != nil || pw >= e.p {
			return 0, supersat, false
		}
		return psychro.MolarMassRatio * pw / (e.p - pw), supersat, true
	}
	return 0, false, false
}

// wAt returns W of air at tC and relative humidity rh.
func (e *engine) wAt(tC, rh float64) float64 {
	pws, _ := psychro.SatVapPressure(tC)
	return e.wFromPws(pws, rh)
}

func (e *engine) wFromPws(pws, rh float64) float64 {
	pw := rh * pws
	return psychro.MolarMassRatio * pw / (e.p - pw)
}

// leavingW is the coil leaving humidity ratio by the assumed-RH rule: the
// coil condenses only when it cools below the entering dew point, and never
// adds moisture.
func (e *engine) leavingW(tLv, wIn float64) float64 {
	pwIn := e.p * wIn / (psychro.MolarMassRatio + wIn)
	pws, _ := psychro.SatVapPressure(tLv)
	if pws >= pwIn { // leaving at or above the entering dew point: dry coil
		return wIn
	}
	return math.Min(wIn, e.wFromPws(pws, e.u.LeavingRH))
}

// tRequired returns the coil leaving temperature at which air at the
// assumed leaving RH has humidity ratio w (cached: targets change rarely).
func (e *engine) tRequired(w float64) float64 {
	if w == e.cacheW {
		return e.cacheT
	}
	pw := e.p * w / (psychro.MolarMassRatio + w)
	t, err := psychro.DewPointFromVapPressure(pw / e.u.LeavingRH)
	if err != nil {
		t = math.Inf(-1)
	}
	e.cacheW, e.cacheT = w, t
	return t
}

func h(tC, w float64) float64 { return psychro.CpDryAir*tC + w*(psychro.HgZero+psychro.CpVapour*tC) }

func cp(w float64) float64 { return psychro.CpDryAir + psychro.CpVapour*w }

// condensate is the enthalpy of water leaving the coil at tC, kJ/kg.
func condensate(tC float64) float64 {
	if tC >= 0 {
		return psychro.CpLiquidWater * tC
	}
	return -psychro.HeatOfFusion + psychro.CpIce*tC
}

// step evaluates one step. ok is false when a required reading is missing
// or the readings describe no possible air state.
func (e *engine) step(x *stepIn) (o stepOut, ok bool) {
	u := e.u
	if math.IsNaN(x.tIn) || math.IsNaN(x.humIn) || math.IsNaN(x.tLv) || math.IsNaN(x.tSup) || math.IsNaN(x.flow) {
		return o, false
	}
	wIn, supersat, ok := e.wFromHum(e.humIn, x.tIn, x.humIn)
	if !ok {
		return o, false
	}
	o.wIn, o.enteringSupersat = wIn, supersat

	// Leaving humidity: measured when a sensor reads, else the assumed-RH rule.
	wOut := math.NaN()
	if e.lvHum != humNone && !math.IsNaN(x.lvHum) {
		if w, _, ok := e.wFromHum(e.lvHum, x.tLv, x.lvHum); ok {
			wOut = w
			// A leaving sensor that reads wetter than the entering air beyond
			// its accuracy is a sensor finding, not a negative latent load.
			tol := 0.0
			switch e.lvHum {
			case humRH:
				tol = e.wAt(x.tLv, u.Accuracy.RH) // W span of the RH accuracy at the leaving temperature
			case humDewPoint:
				w2, _, _ := e.wFromHum(humDewPoint, x.tLv, x.lvHum-u.Accuracy.DewPointK)
				tol = wOut - w2
			}
			if wOut > wIn+tol {
				o.moistureAdded = true
			}
			wOut = math.Min(wOut, wIn)
		}
	}
	if math.IsNaN(wOut) {
		wOut = e.leavingW(x.tLv, wIn)
	}
	o.wOut = wOut

	// Dry-air mass flow on the configured basis.
	switch u.Basis {
	case BasisStandard:
		o.mDa = psychro.StandardAirDensity * x.flow
	default:
		t, w := x.tSup, wOut
		switch u.FlowAt {
		case RoleEnteringTemp:
			t, w = x.tIn, wIn
		case RoleLeavingTemp:
			t = x.tLv
		}
		v := psychro.RDryAir * (t + psychro.ZeroCelsiusK) * (1 + 1.607858*w) / e.p
		o.mDa = x.flow / v
	}
	m := o.mDa

	// Cooling coil.
	hIn, hOut := h(x.tIn, wIn), h(x.tLv, wOut)
	if x.tIn-x.tLv > u.Thresholds.CoilDeadbandK && m > 0 {
		o.coolOn = true
		o.water = m * (wIn - wOut)
		o.gross = m * (hIn - hOut)
		o.total = o.gross - o.water*condensate(x.tLv)
		o.sens = m * cp(wIn) * (x.tIn - x.tLv)
		o.lat = o.total - o.sens
	}

	// Supply fan heat between coil and supply sensor.
	dtFan := 0.0
	if u.Fan == FanDrawThrough && m > 0 {
		if e.hasFanKW && !math.IsNaN(x.fanKW) {
			o.fanHeat = x.fanKW
			dtFan = x.fanKW / (m * cp(wOut))
		} else {
			dtFan = u.FanRiseK
			o.fanHeat = m * cp(wOut) * dtFan
		}
	}

	// Reheat: the rise from coil leaving to supply that the fan does not explain.
	tSupEff := x.tSup - dtFan
	if rise := tSupEff - x.tLv; rise > u.Thresholds.ReheatDeadbandK && m > 0 {
		if u.Reheat == ReheatNone {
			o.reheatWithoutCoil = true
		} else {
			o.reheatOn = true
			o.reheat = m * cp(wOut) * rise
		}
	}

	// What the humidity target required.
	switch u.Target.Kind {
	case TargetSupplyDewPoint:
		o.wReq = e.wTarget
	default:
		wSpace := e.wTarget
		if u.Target.Kind == TargetSpaceRH {
			ts := u.Target.SpaceTempC
			if e.hasSpaceT && !math.IsNaN(x.spaceT) {
				ts = x.spaceT
			}
			wSpace = e.wAt(ts, u.Target.RH)
		}
		// The supply must be drier than the space limit by the moisture the
		// space adds, seen as the space's W above the supply's when both
		// are trended.
		gain := 0.0
		if e.spaceHum != humNone && e.hasSpaceT && !math.IsNaN(x.spaceT) && !math.IsNaN(x.spaceHum) {
			if ws, _, ok := e.wFromHum(e.spaceHum, x.spaceT, x.spaceHum); ok && ws > wOut {
				gain = ws - wOut
			}
		}
		o.wReq = math.Max(wSpace-gain, 1e-5)
	}
	o.tReq = math.Inf(1)
	if wIn > o.wReq {
		o.humidityNeed = true
		o.tReq = e.tRequired(o.wReq)
	}
	tc := math.Min(x.tIn, math.Min(tSupEff, o.tReq))
	o.tNeed = tc
	wc := wIn
	if tc < x.tIn {
		wc = e.leavingW(tc, wIn)
		mw := m * (wIn - wc)
		o.coilNeeded = math.Max(0, m*(hIn-h(tc, wc))-mw*condensate(tc))
	}
	if o.reheatOn {
		o.reheatNeeded = math.Max(0, m*(h(tSupEff, wc)-h(tc, wc)))
		o.reheatAvoid = math.Max(0, o.reheat-o.reheatNeeded)
	}
	if o.coolOn {
		o.coilAvoid = math.Max(0, o.total-o.coilNeeded)
	}

	// Purchased energy.
	switch {
	case e.hasCoolKW && !math.IsNaN(x.coolKW):
		o.meteredCool = true
		o.coolIn = x.coolKW
		if o.total > 0 {
			o.coolAvoidIn = x.coolKW * o.coilAvoid / o.total
		}
	case u.Cooling == CoolingDX:
		cop := u.copAt(x.tOut)
		o.coolIn, o.coolAvoidIn = o.total/cop, o.coilAvoid/cop
	case u.Cooling == CoolingChilledWater:
		o.coolIn, o.coolAvoidIn = o.total*u.PlantKWPerKW, o.coilAvoid*u.PlantKWPerKW
	}
	switch u.Reheat {
	case ReheatElectric:
		if e.hasReheatKW && !math.IsNaN(x.reheatKW) {
			o.meteredHeat = true
			o.reheatIn = x.reheatKW
		} else {
			o.reheatIn = o.reheat
		}
	case ReheatHotWater:
		o.reheatIn = o.reheat / u.BoilerEff
	}
	return o, true
}
