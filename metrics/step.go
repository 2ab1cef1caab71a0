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
	tRet, retHum, oaRH, oaFlow         float64 // return air, outdoor RH and airflow for mixing
}

// humidity sensor forms
const (
	humNone = iota
	humRH
	humDewPoint
)

// stepOut is the physics of one step, as rates (kW, kg/s). The figures
// that carry an uncertainty keep their gradient with respect to the sensors.
type stepOut struct {
	mDa                      float64 // dry-air mass flow, kg/s
	wIn, wOut                float64
	water                    dv // kg/s condensed
	total                    dv // coil load with the condensate term, kW
	sens, lat, gross         float64
	fanHeat                  float64 // kW
	reheat                   dv      // kW of heat added by the reheat coil
	reheatNeeded             float64
	reheatAvoid              dv
	coilNeeded, coilAvoid    float64 // kW of coil load needed / caused by over-cooling
	coolIn, coolAvoidIn      float64 // kW of cooling input (electric) total / avoidable
	reheatIn                 float64 // kW of reheat input (electric, or fuel for hot water)
	coolOn, reheatOn         bool
	humidityNeed             bool    // entering air wetter than the target allows
	tReq                     float64 // coil leaving temperature the target requires, +Inf when none
	tNeed                    float64 // coil temperature needed (T_c)
	wReq                     float64 // supply humidity ratio the target requires
	moistureAdded            bool    // measured leaving air wetter than entering beyond uncertainty while the coil cools
	wetterOut                bool
	measuredOut              bool    // a leaving sensor gave the leaving humidity
	reevaporated             float64 // kg/s the wet coil gives back to the air while it does not cool
	sensorW                  float64 // the leaving sensor's humidity ratio, when it reads
	shortfall                float64 // kg/s of water the target needed removed and the coil left in
	shortCool, shortReheat   float64 // kW of cooling and reheat meeting the target would have taken
	gainAssumed              bool    // a space target used the assumed space moisture gain
	rhLv                     float64 // leaving RH used for the required temperature
	enteringSupersat         bool    // entering dew point above dry bulb (sensor problem)
	reheatWithoutCoil        bool    // supply warmer than leaving with no reheat coil
	meteredCool, meteredHeat bool
}

// engine evaluates steps for one unit, caching the target's required temperature.
type engine struct {
	u                      *AirHandler
	p                      float64
	humIn, lvHum, spaceHum int
	mix                    bool // entering state mixed from return and outdoor air
	retHum                 int
	hasFanKW, hasCoolKW    bool
	hasReheatKW, hasSpaceT bool
	wTarget                float64 // humidity ratio of the target (supply or space)
	reqW, reqRH            float64 // cache of tRequired for a constant target
	dryMarginK             float64 // a coil leaving this far above the entering dew point is dry
	bf                     float64 // coil bypass factor, from the assumed leaving RH
	bfD                    dv      // bf with its gradient on sensBF (the assumption's uncertainty)
	bfU                    float64 // 95 % half-width of bf from that of the assumed leaving RH
	hourShare              float64 // outdoor-air share of the hour's steps where the temperatures tell it; NaN when none
	reqT, reqSlope         float64 // cached T_required and dT/dW at reqW
	reqOK                  bool
	// p_ws memos, one per call site (see satMemo)
	memoIn, memoLv, memoLvT, memoSpace, memoRet, memoOut, memoLvAt, memoADP, memoADPNeed satMemo
	memoDP, memoDry                                                                      dpMemo
}

// wFromHum returns W from a dual temperature and a dual humidity reading of
// the given form; supersat reports a dew point above the dry bulb (taken
// as saturation).
func (e *engine) wFromHum(form int, t, hum dv, m *satMemo) (w dv, supersat, ok bool) {
	switch form {
	case humRH:
		if hum.v < 0 {
			return dv{}, false, false
		}
		if hum.v > 1 {
			hum = cst(1)
		}
		pws, ok := pwsD(t, m)
		if !ok {
			return dv{}, false, false
		}
		pw := pws.mul(hum)
		if pw.v >= e.p {
			return dv{}, false, false
		}
		return wFromPw(pw, e.p), false, true
	case humDewPoint:
		if hum.v > t.v+0.01 {
			supersat = true
			hum = t
		}
		pw, ok := pwsD(hum, m)
		if !ok || pw.v >= e.p {
			return dv{}, supersat, false
		}
		return wFromPw(pw, e.p), supersat, true
	}
	return dv{}, false, false
}

// wFromRH is wFromHum(humRH, cst(t), cst(rh), m).v without the gradient
// arithmetic on zeros: the same operations on the values, so the same bits.
func (e *engine) wFromRH(t, rh float64, m *satMemo) (float64, bool) {
	if rh < 0 {
		return 0, false
	}
	if rh > 1 {
		rh = 1
	}
	pws, _, ok := m.at(t)
	if !ok {
		return 0, false
	}
	pw := pws * rh
	if pw >= e.p {
		return 0, false
	}
	return pw * psychro.MolarMassRatio / (e.p - pw), true
}

// mixMinDeltaK is the smallest outdoor-to-return temperature difference
// from which the outdoor-air share is taken from the three temperatures:
// with ±0.3 K sensors, 3 K gives the share to within about 0.15 (common
// practice, no source).
const mixMinDeltaK = 3

// mixedW is the humidity ratio of the air entering the coil, mixed from
// return and outdoor air: W = x W_oa + (1 - x) W_ra, x the outdoor air's
// share of the dry-air mass. x comes from the three temperatures, x = (t_ma
// - t_ra) / (t_oa - t_ra), when outdoor and return differ by mixMinDeltaK
// or more; else from the outdoor airflow over the supply airflow; else the
// mean share of the hour's steps where the temperatures told it (a damper
// moves slowly); else the configured minimum share. The return humidity carries the entering
// humidity sensor's uncertainty, the mixed-air temperature the share's.
func (e *engine) mixedW(x *stepIn, tIn dv) (dv, bool) {
	if math.IsNaN(x.tRet) || math.IsNaN(x.retHum) || math.IsNaN(x.tOut) || math.IsNaN(x.oaRH) {
		return dv{}, false
	}
	wRa, _, ok := e.wFromHum(e.retHum, cst(x.tRet), seed(x.retHum, sensHumIn), &e.memoRet)
	if !ok {
		return dv{}, false
	}
	wOa, _, ok := e.wFromHum(humRH, cst(x.tOut), cst(x.oaRH), &e.memoOut)
	if !ok {
		return dv{}, false
	}
	// The share's own 95 % half-width rides on the sensShare gradient
	// (its accuracy is 1): from the return and outdoor sensors' bias
	// (dx/dt_ra = (x - 1)/d, dx/dt_oa = -x/d; the mixed-air sensor's is
	// carried on its own gradient), from the two airflow stations, or the
	// assumption's.
	var share dv
	a := e.u.Accuracy
	switch d := x.tOut - x.tRet; {
	case math.Abs(d) >= mixMinDeltaK:
		share = tIn.addc(-x.tRet).scale(1 / d)
		if share.v < 0 {
			share = cst(0)
		} else if share.v > 1 {
			share = cst(1)
		}
		share.g[sensShare] = a.TempK * math.Hypot(1-share.v, share.v) / math.Abs(d)
	case !math.IsNaN(x.oaFlow) && x.flow > 0:
		share = cst(math.Min(1, x.oaFlow/x.flow))
		share.g[sensShare] = share.v * a.FlowFrac * math.Sqrt2
	case !math.IsNaN(e.hourShare):
		share = cst(e.hourShare)
		share.g[sensShare] = ShareHourU
	case e.u.MinOutdoor > 0:
		share = cst(e.u.MinOutdoor)
		share.g[sensShare] = ShareMinU
	default:
		return dv{}, false
	}
	return wOa.sub(wRa).mul(share).add(wRa), true
}

// leavingW is the coil leaving humidity ratio when no sensor measures it,
// by the apparatus-dew-point / bypass-factor model of a cooling coil
// (ASHRAE Handbook - Fundamentals, ch. 1 and HVAC Systems and Equipment,
// cooling coils, memory): a share BF of the air passes the coil untouched,
// the rest leaves saturated at the apparatus dew point ADP, so the leaving
// dry bulb is t_lv = ADP + BF (t_in - ADP) and W_out = W_s(ADP) + BF (W_in -
// W_s(ADP)) when W_s(ADP) < W_in, else W_in (the coil surface is above the
// entering dew point: a dry coil). The rule is continuous: condensation
// starts where the apparatus dew point reaches the entering dew point,
// with no step. BF comes from the assumed leaving RH (see bypassFactor).
func (e *engine) leavingW(tIn, t, wIn dv, m *satMemo) dv {
	if t.v >= tIn.v {
		return wIn
	}
	bf := e.bfD
	adp := unbypass(t, tIn, bf)
	pws, ok := pwsD(adp, m)
	if !ok || pws.v >= e.p {
		return wIn
	}
	ws := wFromPw(pws, e.p)
	if ws.v >= wIn.v {
		return wIn
	}
	return rebypass(wIn, ws, bf)
}

// leavingWAt is the leaving humidity ratio of air at t and relative
// humidity rh, never wetter than the entering air: the rule with a
// measured leaving RH.
func (e *engine) leavingWAt(t, wIn dv, rh float64) dv {
	pws, ok := pwsD(t, &e.memoLvAt)
	if !ok {
		return wIn
	}
	return dmin(wIn, wFromPw(pws.scale(rh), e.p))
}

// Rating point from which the bypass factor follows: the entering air of
// the AHRI unitary rating, 80 °F dry bulb / 67 °F wet bulb (memory), cooled
// to 55 °F, a usual design leaving temperature (common practice, no source).
const (
	bfRefInC  = 26.6667
	bfRefWbC  = 19.4444
	bfRefOutC = 12.7778
)

// bypassFactor returns the bypass factor of a coil that leaves the rating
// point's air at relative humidity rh: the line from the entering state
// through the leaving state meets saturation at the apparatus dew point,
// and BF = (t_lv - ADP) / (t_in - ADP). 1 % RH below saturation is about
// 0.02 of BF; rh = 1 gives BF = 0.
func bypassFactor(rh, p float64) float64 {
	wIn, err := psychro.HumRatioFromWetBulb(bfRefInC, bfRefWbC, p)
	if err != nil || rh >= 1 {
		return 0
	}
	wOut := wAtRH(bfRefOutC, rh, p)
	lo, hi := -20.0, bfRefOutC // ADP between; the line's W at ADP minus W_s(ADP) changes sign once
	for i := 0; i < 60; i++ {
		adp := (lo + hi) / 2
		// the line E -> L extended to adp
		wLine := wOut + (wOut-wIn)*(bfRefOutC-adp)/(bfRefInC-bfRefOutC)
		if wLine > wAtRH(adp, 1, p) {
			lo = adp // the line is still above saturation: the crossing is warmer
		} else {
			hi = adp
		}
	}
	adp := (lo + hi) / 2
	return (bfRefOutC - adp) / (bfRefInC - adp)
}

// tRequired returns the coil leaving temperature at which the coil leaves
// air at humidity ratio w. With a measured leaving RH rh (a wet coil's
// sensor), air at rh: p_ws(T) = p_w(w) / RH. Otherwise the bypass-factor
// model in closed form: W_s(ADP) = (w - BF W_in) / (1 - BF), T = ADP + BF
// (t_in - ADP).
func (e *engine) tRequired(w, tIn, wIn dv, rh float64, measured bool) dv {
	if !measured {
		bf := e.bfD
		ws := unbypass(w, wIn, bf)
		if ws.v <= 0 {
			return cst(math.Inf(-1))
		}
		adp := e.dewPointD(ws)
		return bypass(adp, tIn, bf)
	}
	// A fixed target gives the same temperature every step: cache it with
	// its slope, and carry w's gradient (the assumed space gain) through.
	if !(e.reqOK && w.v == e.reqW && rh == e.reqRH) {
		wv := dv{v: w.v}
		wv.g[0] = 1
		r := e.dewPointD(pwToW(pwFromW(wv, e.p).scale(1/rh), e.p))
		e.reqW, e.reqRH, e.reqT, e.reqSlope, e.reqOK = w.v, rh, r.v, r.g[0], true
	}
	r := dv{v: e.reqT}
	if !math.IsInf(r.v, 0) {
		for i := range r.g {
			r.g[i] = w.g[i] * e.reqSlope
		}
	}
	return r
}

// pwToW is W from a vapour pressure (the same as wFromPw; named for the
// direction it is read in).
func pwToW(pw dv, p float64) dv { return wFromPw(pw, p) }

// dewPointD is the dew point of a dual humidity ratio.
func (e *engine) dewPointD(w dv) dv {
	pw := pwFromW(w, e.p)
	t, d, ok := e.memoDP.at(pw.v)
	if !ok {
		return cst(math.Inf(-1))
	}
	r := dv{v: t}
	for i := range r.g {
		r.g[i] = pw.g[i] / d
	}
	return r
}

// dpMemo remembers the last dew point one call site evaluated, with the
// slope dp_ws/dt there (see satMemo).
type dpMemo struct {
	key, t, d float64
	ok, set   bool
}

// at returns the dew point of vapour pressure pw and dp_ws/dt at it, false
// out of range, as psychro.DewPointFromVapPressure and
// psychro.SatVapPressureSlope would.
func (m *dpMemo) at(pw float64) (t, d float64, ok bool) {
	if !m.set || pw != m.key {
		t, err := psychro.DewPointFromVapPressure(pw)
		var d float64
		if err == nil {
			_, d, _ = psychro.SatVapPressureSlope(t)
		}
		m.key, m.t, m.d, m.ok, m.set = pw, t, d, err == nil, true
	}
	return m.t, m.d, m.ok
}

// fromW returns the dew point of humidity ratio w at pressure p, false
// where psychro.DewPointFromHumRatio fails.
func (m *dpMemo) fromW(w, p float64) (float64, bool) {
	if !m.set || w != m.key {
		t, err := psychro.DewPointFromHumRatio(w, p)
		m.key, m.t, m.ok, m.set = w, t, err == nil, true
	}
	return m.t, m.ok
}

// condensateD is the enthalpy of water leaving the coil at t, kJ/kg.
func condensateD(t dv) dv {
	if t.v >= 0 {
		return t.scale(psychro.CpLiquidWater)
	}
	return t.scale(psychro.CpIce).addc(-psychro.HeatOfFusion)
}

// step evaluates one step. ok is false when a required reading is missing
// or the readings describe no possible air state.
func (e *engine) step(x *stepIn) (o stepOut, ok bool) {
	u := e.u
	if math.IsNaN(x.tIn) || (!e.mix && math.IsNaN(x.humIn)) || math.IsNaN(x.tLv) || math.IsNaN(x.tSup) || math.IsNaN(x.flow) {
		return o, false
	}
	tIn, tLv, tSup := seed(x.tIn, sensTIn), seed(x.tLv, sensTLv), seed(x.tSup, sensTSup)
	var wIn dv
	var supersat bool
	if e.mix {
		wIn, ok = e.mixedW(x, tIn)
	} else {
		wIn, supersat, ok = e.wFromHum(e.humIn, tIn, seed(x.humIn, sensHumIn), &e.memoIn)
	}
	if !ok {
		return o, false
	}
	o.wIn, o.enteringSupersat = wIn.v, supersat

	// A blow-through fan sits between the entering (mixed-air) sensor and
	// the coil: its heat reaches the coil, which cools the air from t_in +
	// Δt_fan. Δt_fan = fan kW / (m_da c_p) with the fan_kw point or the
	// rated fan power, else the configured rise (all of the fan's power
	// ends up as heat in the air stream: the motor is taken to sit in it).
	tCoil := tIn
	if u.Fan == FanBlowThrough {
		rise := u.FanRiseK
		if kw, ok := e.fanKW(x); ok {
			rise = 0
			if m := e.massFlow(x, tIn, tLv, tSup, wIn, wIn); m.v > 0 {
				rise = kw / (m.v * cp(wIn.v))
			}
		}
		tCoil = tIn.addc(rise)
	}

	// Leaving humidity. Physics first: a coil leaving clearly above the
	// entering dew point (by more than twice the sensors' combined
	// uncertainty, so a coil wetted on part of its surface still counts)
	// condenses nothing, whatever a leaving sensor reads. Otherwise a
	// leaving sensor refines the wet coil; its noise is kept on both sides
	// (clipping only the wet side would turn noise into water) and the
	// hour's water is clipped at zero instead. Without a sensor, the
	// assumed-RH rule.
	var wOut dv
	measured := false
	sensorW := math.NaN()
	o.rhLv = u.LeavingRH
	dry := false
	if e.lvHum != humNone && !math.IsNaN(x.lvHum) {
		if td, ok := e.memoDry.fromW(wIn.v, e.p); ok && x.tLv > td+e.dryMarginK {
			dry = true
		}
	}
	if e.lvHum != humNone && !math.IsNaN(x.lvHum) {
		if w, _, ok := e.wFromHum(e.lvHum, tLv, seed(x.lvHum, sensLvHum), &e.memoLv); ok {
			// A leaving sensor that reads wetter than the entering air beyond
			// its accuracy while the coil cools is a sensor finding, not a
			// negative latent load; with the coil off it is water the wet
			// coil gives back to the air.
			tol := 0.0
			switch e.lvHum {
			case humRH:
				tol = w.g[sensLvHum] * u.Accuracy.RH
			case humDewPoint:
				tol = w.g[sensLvHum] * u.Accuracy.DewPointK
			}
			o.wetterOut = w.v > wIn.v+tol
			sensorW = w.v
			o.sensorW = w.v
			if !dry {
				measured = true
				wOut = w
				if w.v < wIn.v {
					mt := &e.memoLvT
					if e.lvHum == humRH {
						mt = &e.memoLv // the sensor's own dry bulb, just evaluated
					}
					if pws, _, ok := mt.at(x.tLv); ok && pws > 0 {
						o.rhLv = math.Max(0.5, math.Min(1, pwFromW(w, e.p).v/pws))
					}
				}
			}
		}
	}
	if !measured {
		wOut = e.leavingW(tCoil, tLv, wIn, &e.memoADP)
	}
	o.measuredOut = measured
	o.wOut = wOut.v

	m := e.massFlow(x, tIn, tLv, tSup, wIn, wOut)
	o.mDa = m.v

	// Cooling coil.
	hIn, hOut := hD(tCoil, wIn), hD(tLv, wOut)
	coilDT := tCoil.v - x.tLv
	if !(coilDT > u.Thresholds.CoilDeadbandK) && sensorW > wIn.v && m.v > 0 {
		o.reevaporated = m.v * (sensorW - wIn.v)
	}
	if coilDT > u.Thresholds.CoilDeadbandK && m.v > 0 {
		o.coolOn = true
		o.moistureAdded = o.wetterOut
		o.water = m.mul(wIn.sub(wOut))
		gross := m.mul(hIn.sub(hOut))
		o.total = gross.sub(o.water.mul(condensateD(tLv)))
		o.gross = gross.v
		o.sens = m.v * cp(wIn.v) * coilDT
		o.lat = o.total.v - o.sens
	}
	if u.Fan == FanBlowThrough && m.v > 0 {
		o.fanHeat = m.v * cp(wIn.v) * (tCoil.v - tIn.v)
	}

	// Supply fan heat between coil and supply sensor.
	dtFan := cst(0)
	if u.Fan == FanDrawThrough && m.v > 0 {
		if kw, ok := e.fanKW(x); ok {
			o.fanHeat = kw
			dtFan = cst(kw).div(m.mul(cpD(wOut)))
		} else {
			dtFan = cst(u.FanRiseK)
			o.fanHeat = m.v * cp(wOut.v) * u.FanRiseK
		}
	}

	// Reheat: the rise from coil leaving to supply that the fan does not explain.
	tSupEff := tSup.sub(dtFan)
	rise := tSupEff.sub(tLv)
	if rise.v > u.Thresholds.ReheatDeadbandK && m.v > 0 {
		if u.Reheat == ReheatNone {
			o.reheatWithoutCoil = true
		} else {
			o.reheatOn = true
			o.reheat = m.mul(cpD(wOut)).mul(rise)
		}
	}

	// What the humidity target required.
	wReq := cst(e.wTarget)
	if u.Target.Kind != TargetSupplyDewPoint {
		wSpace := e.wTarget
		if u.Target.Kind == TargetSpaceRH {
			ts := u.Target.SpaceTempC
			if e.hasSpaceT && !math.IsNaN(x.spaceT) {
				ts = x.spaceT
			}
			wSpace = wAtRH(ts, u.Target.RH, e.p)
		}
		// The supply must be drier than the space limit by the moisture the
		// space adds, seen as the space's W above the supply's when both
		// are trended (space sensors are taken as exact), else the
		// configured or default gain (an assumption the hour is flagged for).
		gain := dv{v: u.SpaceGain}
		gain.g[sensGain] = 1
		wReq = cst(wSpace).sub(gain)
		o.gainAssumed = true
		if e.spaceHum != humNone && e.hasSpaceT && !math.IsNaN(x.spaceT) && !math.IsNaN(x.spaceHum) {
			if ws, ok := e.wFromRH(x.spaceT, x.spaceHum, &e.memoSpace); ok {
				// the observed gain, none when the space reads no wetter
				wReq = cst(wSpace)
				if ws > wOut.v {
					wReq = cst(wSpace - ws).add(wOut)
				}
				o.gainAssumed = false
			}
		}
		if wReq.v < 1e-5 {
			wReq = cst(1e-5)
		}
	}
	o.wReq = wReq.v
	tReq := cst(math.Inf(1))
	if wIn.v > wReq.v {
		o.humidityNeed = true
		tReq = e.tRequired(wReq, tCoil, wIn, o.rhLv, measured)
	}
	o.tReq = tReq.v
	// Too little dehumidification: the coil left air wetter than the target
	// allows while the entering air needed drying. What meeting the target
	// would have taken: cooling from the actual leaving state down to
	// T_required (with the condensate), and, at the same supply
	// temperature, the reheat for the extra cooling.
	if o.humidityNeed && wOut.v > wReq.v && m.v > 0 {
		o.shortfall = m.v * (wOut.v - wReq.v)
		if x.tLv > tReq.v {
			o.shortCool = math.Max(0, m.v*(h(x.tLv, wOut.v)-h(tReq.v, wReq.v))-o.shortfall*condensate(tReq.v))
			o.shortReheat = m.v * cp(wReq.v) * (x.tLv - tReq.v)
		}
	}
	tc := dmin(tCoil, dmin(tSupEff, tReq))
	o.tNeed = tc.v
	wc := wIn
	if tc.v < tCoil.v {
		if measured {
			wc = e.leavingWAt(tc, wIn, o.rhLv)
		} else {
			wc = e.leavingW(tCoil, tc, wIn, &e.memoADPNeed)
		}
		mw := m.v * (wIn.v - wc.v)
		o.coilNeeded = math.Max(0, m.v*(hIn.v-h(tc.v, wc.v))-mw*condensate(tc.v))
	}
	if o.reheatOn {
		// Needed never exceeds what was delivered: a coil warmer than the
		// target required left a shortfall, reported on its own.
		needed := dmin(o.reheat, dmax(cst(0), m.mul(cpD(wc)).mul(tSupEff.sub(tc))))
		o.reheatNeeded = needed.v
		o.reheatAvoid = dmax(cst(0), o.reheat.sub(needed))
	}
	if o.coolOn {
		o.coilAvoid = math.Max(0, o.total.v-o.coilNeeded)
	}

	// Purchased energy.
	total := o.total.v
	switch {
	case e.hasCoolKW && !math.IsNaN(x.coolKW):
		o.meteredCool = true
		o.coolIn = x.coolKW
		if total > 0 {
			o.coolAvoidIn = x.coolKW * o.coilAvoid / total
		}
	case u.Cooling == CoolingDX:
		// The avoidable input is what the load beyond the needed one drew:
		// at part load each kWh of coil load costs more input (PLF).
		o.coolIn = u.modelledCoolIn(total, x.tOut)
		o.coolAvoidIn = o.coolIn - u.modelledCoolIn(total-o.coilAvoid, x.tOut)
	case u.Cooling == CoolingChilledWater:
		o.coolIn, o.coolAvoidIn = total*u.PlantKWPerKW, o.coilAvoid*u.PlantKWPerKW
	}
	switch u.Reheat {
	case ReheatElectric:
		if e.hasReheatKW && !math.IsNaN(x.reheatKW) {
			o.meteredHeat = true
			o.reheatIn = x.reheatKW
		} else {
			o.reheatIn = o.reheat.v
		}
	case ReheatHotWater:
		o.reheatIn = o.reheat.v / u.BoilerEff
	}
	return o, true
}

// fanKW is the supply fan's power: the fan_kw point when it reads, else
// the rated power (a fan running at its rating whenever air flows).
func (e *engine) fanKW(x *stepIn) (float64, bool) {
	if e.hasFanKW && !math.IsNaN(x.fanKW) {
		return x.fanKW, true
	}
	if e.u.FanRatedKW > 0 {
		return e.u.FanRatedKW, true
	}
	return 0, false
}

// massFlow is the dry-air mass flow on the configured basis: standard air
// is dry air at 1.204 kg/m³, so m_da = 1.204 Q; an actual volume is read
// at the sensor's state, m_da = Q / v (eq. 26), with the leaving humidity
// wOut at the supply or coil leaving sensor.
func (e *engine) massFlow(x *stepIn, tIn, tLv, tSup, wIn, wOut dv) dv {
	u := e.u
	if u.Basis == BasisStandard {
		return cst(psychro.StandardAirDensity * x.flow)
	}
	t, w := tSup, wOut
	switch u.FlowAt {
	case RoleEnteringTemp:
		t, w = tIn, wIn
	case RoleLeavingTemp:
		t = tLv
	}
	v := t.addc(psychro.ZeroCelsiusK).mul(w.scale(1.607858).addc(1)).scale(psychro.RDryAir / e.p)
	return cst(x.flow).div(v)
}

// h is moist-air enthalpy (eq. 32), kJ/kg.
func h(tC, w float64) float64 { return psychro.CpDryAir*tC + w*(psychro.HgZero+psychro.CpVapour*tC) }

func cp(w float64) float64 { return psychro.CpDryAir + psychro.CpVapour*w }

// condensate is the enthalpy of water leaving the coil at tC, kJ/kg.
func condensate(tC float64) float64 { return condensateD(cst(tC)).v }

// wAtRH returns W of air at tC and relative humidity rh (0 when tC is out of range).
func wAtRH(tC, rh, p float64) float64 {
	pws, err := psychro.SatVapPressure(tC)
	if err != nil {
		return 0
	}
	pw := rh * pws
	return psychro.MolarMassRatio * pw / (p - pw)
}
