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
	modelledCool             bool // the cooling input came from the rated EER or plant kW/ton
	coolUnknown              bool // the coil cooled, and neither meter nor model gave its input
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
	gainD                  dv      // the assumed space gain with its gradient on sensGain
	rOverP                 float64 // R_da / p, of the actual-volume airflow
	copT, cop              float64 // the DX model's COP at outdoor temperature copT (copAt)
	copSet                 bool
	// p_ws memos, one per call site (see satMemo)
	memoIn, memoLv, memoLvT, memoSpace, memoSpaceT, memoRet, memoOut, memoLvAt, memoADP, memoADPNeed satMemo
	memoDP, memoDry                                                                                  dpMemo
	scratch                                                                                          stepScratch
	out                                                                                              stepOut
}

// stepScratch holds the step's intermediate dual numbers, so that they
// are neither copied nor zeroed at each step (each is set before it is
// read). The sensor readings (tIn ... humLv) are seeded once an hour by
// newScratch and only their value changes from step to step: nothing
// writes to them.
type stepScratch struct {
	tIn, tLv, tSup, humIn, humLv              dv
	tCoil, wIn, wLv, wOut, m, hIn, mcp, dtFan dv
	tSupEff, wReq, tReq, wc, needed, t        dv
}

// newScratch seeds the sensor readings' gradients.
func newScratch() stepScratch {
	return stepScratch{tIn: seed(0, sensTIn), tLv: seed(0, sensTLv), tSup: seed(0, sensTSup),
		humIn: seed(0, sensHumIn), humLv: seed(0, sensLvHum)}
}

// wFromHum sets w to W from a dual temperature and a dual humidity reading
// of the given form; supersat reports a dew point above the dry bulb
// (taken as saturation). w may be changed when ok is false.
func (e *engine) wFromHum(w *dv, form int, t, hum *dv, m *satMemo) (supersat, ok bool) {
	switch form {
	case humRH:
		if hum.v < 0 {
			return false, false
		}
		if hum.v > 1 {
			hum = &dvOne
		}
		if !w.pws(t, m) {
			return false, false
		}
		w.mul(w, hum)
		if w.v >= e.p {
			return false, false
		}
		w.wFromPw(w, e.p)
		return false, true
	case humDewPoint:
		if hum.v > t.v+0.01 {
			supersat = true
			hum = t
		}
		if !w.pws(hum, m) || w.v >= e.p {
			return supersat, false
		}
		w.wFromPw(w, e.p)
		return supersat, true
	}
	return false, false
}

// dvOne is the constant 1 (read only).
var dvOne = cst(1)

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
func (e *engine) mixedW(w *dv, x *stepIn, tIn *dv) bool {
	if math.IsNaN(x.tRet) || math.IsNaN(x.retHum) || math.IsNaN(x.tOut) || math.IsNaN(x.oaRH) {
		return false
	}
	var wRa, wOa dv
	tRet, retHum := cst(x.tRet), seed(x.retHum, sensHumIn)
	if _, ok := e.wFromHum(&wRa, e.retHum, &tRet, &retHum, &e.memoRet); !ok {
		return false
	}
	tOut, oaRH := cst(x.tOut), cst(x.oaRH)
	if _, ok := e.wFromHum(&wOa, humRH, &tOut, &oaRH, &e.memoOut); !ok {
		return false
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
		share.addc(tIn, -x.tRet)
		share.scale(&share, 1/d)
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
		return false
	}
	// wOa.sub(wRa).mul(share).add(wRa)
	w.rebypass(&wOa, &wRa, &share)
	return true
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
//
// r is set to the result; it must not be one of the operands.
func (e *engine) leavingW(r, tIn, t, wIn *dv, m *satMemo) {
	if t.v >= tIn.v {
		*r = *wIn
		return
	}
	var ws dv
	ws.unbypass(t, tIn, &e.bfD) // the apparatus dew point
	m.from(ws.v, &e.memoDP)
	if !ws.pws(&ws, m) || ws.v >= e.p {
		*r = *wIn
		return
	}
	ws.wFromPw(&ws, e.p)
	if ws.v >= wIn.v {
		*r = *wIn
		return
	}
	r.rebypass(wIn, &ws, &e.bfD)
}

// leavingWAt is the leaving humidity ratio of air at t and relative
// humidity rh, never wetter than the entering air: the rule with a
// measured leaving RH.
// r must not be one of the operands.
func (e *engine) leavingWAt(r, t, wIn *dv, rh float64) {
	if !r.pws(t, &e.memoLvAt) {
		*r = *wIn
		return
	}
	r.scale(r, rh)
	r.wFromPw(r, e.p)
	r.dmin(wIn, r)
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
//
// r is set to the result; it must not be one of the operands.
func (e *engine) tRequired(r, w, tIn, wIn *dv, rh float64, measured bool) {
	if !measured {
		r.unbypass(w, wIn, &e.bfD) // W_s(ADP)
		if r.v <= 0 {
			r.set(math.Inf(-1))
			return
		}
		e.dewPointD(r, r)
		r.bypass(r, tIn, &e.bfD)
		return
	}
	// A fixed target gives the same temperature every step: cache it with
	// its slope, and carry w's gradient (the assumed space gain) through.
	if !(e.reqOK && w.v == e.reqW && rh == e.reqRH) {
		wv := dv{v: w.v}
		wv.g[0] = 1
		wv.pwFromW(&wv, e.p)
		wv.scale(&wv, 1/rh)
		wv.wFromPw(&wv, e.p)
		e.dewPointD(&wv, &wv)
		e.reqW, e.reqRH, e.reqT, e.reqSlope, e.reqOK = w.v, rh, wv.v, wv.g[0], true
	}
	r.set(e.reqT)
	if !math.IsInf(r.v, 0) {
		for i := range r.g {
			r.g[i] = w.g[i] * e.reqSlope
		}
	}
}

// dewPointD sets r to the dew point of a dual humidity ratio w; -Inf
// (constant) out of range.
func (e *engine) dewPointD(r, w *dv) {
	r.pwFromW(w, e.p)
	t, d, ok := e.memoDP.at(r.v)
	if !ok {
		r.set(math.Inf(-1))
		return
	}
	for i := range r.g {
		r.g[i] /= d
	}
	r.v = t
}

// dpMemo remembers the last dew point one call site evaluated, with p_ws
// and its slope dp_ws/dt there when at evaluated them (slope; see satMemo).
type dpMemo struct {
	key, t, p, d   float64
	ok, set, slope bool
}

// at returns the dew point of vapour pressure pw and dp_ws/dt at it, false
// out of range, as psychro.DewPointFromVapPressure and
// psychro.SatVapPressureSlope would.
func (m *dpMemo) at(pw float64) (t, d float64, ok bool) {
	if !m.set || pw != m.key {
		t, err := psychro.DewPointFromVapPressure(pw)
		var p, d float64
		slope := false
		if err == nil {
			var errS error
			p, d, errS = psychro.SatVapPressureSlope(t)
			slope = errS == nil
		}
		m.key, m.t, m.p, m.d, m.ok, m.set, m.slope = pw, t, p, d, err == nil, true, slope
	}
	return m.t, m.d, m.ok
}

// fromW returns the dew point of humidity ratio w at pressure p, false
// where psychro.DewPointFromHumRatio fails.
func (m *dpMemo) fromW(w, p float64) (float64, bool) {
	if !m.set || w != m.key {
		t, err := psychro.DewPointFromHumRatio(w, p)
		m.key, m.t, m.ok, m.set, m.slope = w, t, err == nil, true, false
	}
	return m.t, m.ok
}

// coilLoads sets water = m (W_in - W_out) and total = m (h_in - h_out) -
// water h_w(t_lv), h_out the enthalpy at t_lv and W_out and h_w the
// condensate's (condensate), and returns the gross load m (h_in - h_out):
// m.mul(wIn.sub(wOut)) and m.mul(hIn.sub(hD(tLv, wOut))).sub(water.mul(h_w))
// in one pass, each element's operations in the same order (the same bits).
func coilLoads(water, total, m, wIn, wOut, hIn, tLv *dv) (gross float64) {
	mv, tv, wv := m.v, tLv.v, wOut.v
	s := tv*psychro.CpVapour + psychro.HgZero
	cw, cdv := psychro.CpLiquidWater, tv*psychro.CpLiquidWater
	if !(tv >= 0) { // as condensate
		cw, cdv = psychro.CpIce, tv*psychro.CpIce+-psychro.HeatOfFusion
	}
	dwv := wIn.v - wv
	dhv := hIn.v - (tv*psychro.CpDryAir + wv*s)
	waterv := mv * dwv
	for i := range water.g {
		tg := tLv.g[i]
		hOutG := tg*psychro.CpDryAir + (wOut.g[i]*s + wv*(tg*psychro.CpVapour))
		waterG := m.g[i]*dwv + mv*(wIn.g[i]-wOut.g[i])
		grossG := m.g[i]*dhv + mv*(hIn.g[i]-hOutG)
		water.g[i] = waterG
		total.g[i] = grossG - (waterG*cdv + waterv*(tg*cw))
	}
	gross = mv * dhv
	water.v = waterv
	total.v = gross - waterv*cdv
	return gross
}

// step evaluates one step into o, which it overwrites. It returns false
// when a required reading is missing or the readings describe no possible
// air state. The step's dual numbers live in o and in e's scratch (see dv):
// nothing is copied or allocated per step.
func (e *engine) step(x *stepIn, o *stepOut) bool {
	u := e.u
	*o = stepOut{}
	if math.IsNaN(x.tIn) || (!e.mix && math.IsNaN(x.humIn)) || math.IsNaN(x.tLv) || math.IsNaN(x.tSup) || math.IsNaN(x.flow) {
		return false
	}
	s := &e.scratch
	tIn, tLv, tSup := &s.tIn, &s.tLv, &s.tSup
	tIn.v, tLv.v, tSup.v = x.tIn, x.tLv, x.tSup // seeded by newScratch
	wIn := &s.wIn
	var supersat, ok bool
	if e.mix {
		ok = e.mixedW(wIn, x, tIn)
	} else {
		s.humIn.v = x.humIn
		supersat, ok = e.wFromHum(wIn, e.humIn, tIn, &s.humIn, &e.memoIn)
	}
	if !ok {
		return false
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
			if m := e.massFlowV(x, tIn, tLv, tSup, wIn, wIn); m > 0 {
				rise = kw / (m * cp(wIn.v))
			}
		}
		tCoil = &s.tCoil
		tCoil.addc(tIn, rise)
	}

	// Leaving humidity. Physics first: a coil leaving clearly above the
	// entering dew point (by more than twice the sensors' combined
	// uncertainty, so a coil wetted on part of its surface still counts)
	// condenses nothing, whatever a leaving sensor reads. Otherwise a
	// leaving sensor refines the wet coil; its noise is kept on both sides
	// (clipping only the wet side would turn noise into water) and the
	// hour's water is clipped at zero instead. Without a sensor, the
	// assumed-RH rule.
	wOut := &s.wOut
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
		w := &s.wLv
		s.humLv.v = x.lvHum
		if _, ok := e.wFromHum(w, e.lvHum, tLv, &s.humLv, &e.memoLv); ok {
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
				*wOut = *w
				if w.v < wIn.v {
					mt := &e.memoLvT
					if e.lvHum == humRH {
						mt = &e.memoLv // the sensor's own dry bulb, just evaluated
					}
					if pws, _, ok := mt.at(x.tLv); ok && pws > 0 {
						o.rhLv = math.Max(0.5, math.Min(1, pwFromWV(w.v, e.p)/pws))
					}
				}
			}
		}
	}
	if !measured {
		e.leavingW(wOut, tCoil, tLv, wIn, &e.memoADP)
	}
	o.measuredOut = measured
	o.wOut = wOut.v

	m := &s.m
	e.massFlow(m, x, tIn, tLv, tSup, wIn, wOut)
	o.mDa = m.v

	// Cooling coil.
	hIn := &s.hIn
	hIn.hD(tCoil, wIn)
	coilDT := tCoil.v - x.tLv
	if !(coilDT > u.Thresholds.CoilDeadbandK) && sensorW > wIn.v && m.v > 0 {
		o.reevaporated = m.v * (sensorW - wIn.v)
	}
	if coilDT > u.Thresholds.CoilDeadbandK && m.v > 0 {
		o.coolOn = true
		o.moistureAdded = o.wetterOut
		o.gross = coilLoads(&o.water, &o.total, m, wIn, wOut, hIn, tLv)
		o.sens = m.v * cp(wIn.v) * coilDT
		o.lat = o.total.v - o.sens
	}
	if u.Fan == FanBlowThrough && m.v > 0 {
		o.fanHeat = m.v * cp(wIn.v) * (tCoil.v - tIn.v)
	}

	// Supply fan heat between coil and supply sensor.
	mcp := &s.mcp // m c_p(W_out)
	mcp.cpD(wOut)
	mcp.mul(m, mcp)
	dtFan := &s.dtFan
	dtFan.set(0)
	if u.Fan == FanDrawThrough && m.v > 0 {
		if kw, ok := e.fanKW(x); ok {
			o.fanHeat = kw
			k := cst(kw)
			dtFan.div(&k, mcp)
		} else {
			dtFan.set(u.FanRiseK)
			o.fanHeat = m.v * cp(wOut.v) * u.FanRiseK
		}
	}

	// Reheat: the rise from coil leaving to supply that the fan does not explain.
	tSupEff := &s.tSupEff
	tSupEff.sub(tSup, dtFan)
	rise := &s.t
	rise.sub(tSupEff, tLv)
	if rise.v > u.Thresholds.ReheatDeadbandK && m.v > 0 {
		if u.Reheat == ReheatNone {
			o.reheatWithoutCoil = true
		} else {
			o.reheatOn = true
			o.reheat.mul(mcp, rise)
		}
	}

	// What the humidity target required.
	wReq := &s.wReq
	wReq.set(e.wTarget)
	if u.Target.Kind != TargetSupplyDewPoint {
		wSpace := e.wTarget
		if u.Target.Kind == TargetSpaceRH {
			ts := u.Target.SpaceTempC
			if e.hasSpaceT && !math.IsNaN(x.spaceT) {
				ts = x.spaceT
			}
			wSpace = e.wAtRHSpace(ts, u.Target.RH)
		}
		// The supply must be drier than the space limit by the moisture the
		// space adds, seen as the space's W above the supply's when both
		// are trended (space sensors are taken as exact), else the
		// configured or default gain (an assumption the hour is flagged for).
		c := cst(wSpace)
		wReq.sub(&c, &e.gainD)
		o.gainAssumed = true
		if e.spaceHum != humNone && e.hasSpaceT && !math.IsNaN(x.spaceT) && !math.IsNaN(x.spaceHum) {
			if ws, ok := e.wFromRH(x.spaceT, x.spaceHum, &e.memoSpace); ok {
				// the observed gain, none when the space reads no wetter
				wReq.set(wSpace)
				if ws > wOut.v {
					c := cst(wSpace - ws)
					wReq.add(&c, wOut)
				}
				o.gainAssumed = false
			}
		}
		if wReq.v < 1e-5 {
			wReq.set(1e-5)
		}
	}
	o.wReq = wReq.v
	tReq := &s.tReq
	tReq.set(math.Inf(1))
	if wIn.v > wReq.v {
		o.humidityNeed = true
		e.tRequired(tReq, wReq, tCoil, wIn, o.rhLv, measured)
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
	// tc = dmin(tCoil, dmin(tSupEff, tReq)): the coldest, a whole operand
	tc := tSupEff
	if tReq.v < tSupEff.v {
		tc = tReq
	}
	if !(tc.v < tCoil.v) {
		tc = tCoil
	}
	o.tNeed = tc.v
	wc := wIn
	if tc.v < tCoil.v {
		wc = &s.wc
		if measured {
			e.leavingWAt(wc, tc, wIn, o.rhLv)
		} else {
			e.leavingW(wc, tCoil, tc, wIn, &e.memoADPNeed)
		}
		mw := m.v * (wIn.v - wc.v)
		o.coilNeeded = math.Max(0, m.v*(hIn.v-h(tc.v, wc.v))-mw*condensate(tc.v))
	}
	if o.reheatOn {
		// Needed never exceeds what was delivered: a coil warmer than the
		// target required left a shortfall, reported on its own.
		// needed = min(reheat, max(0, m c_p(W_c) (t_supply,eff - t_c)))
		needed, t := &s.needed, &s.t
		needed.cpD(wc)
		needed.mul(m, needed)
		t.sub(tSupEff, tc)
		needed.mul(needed, t)
		if !(needed.v > 0) {
			needed.set(0)
		}
		if !(needed.v < o.reheat.v) {
			*needed = o.reheat
		}
		o.reheatNeeded = needed.v
		o.reheatAvoid.sub(&o.reheat, needed)
		if !(o.reheatAvoid.v > 0) {
			o.reheatAvoid.set(0)
		}
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
	case u.Cooling == CoolingDX && u.RatedCOP > 0:
		// The avoidable input is what the load beyond the needed one drew:
		// at part load each kWh of coil load costs more input (PLF).
		o.modelledCool = true
		cop := e.copAt(x.tOut)
		o.coolIn = u.modelledCoolIn(total, cop)
		o.coolAvoidIn = o.coolIn - u.modelledCoolIn(total-o.coilAvoid, cop)
	case u.Cooling == CoolingChilledWater && u.PlantKWPerKW > 0:
		o.modelledCool = true
		o.coolIn, o.coolAvoidIn = total*u.PlantKWPerKW, o.coilAvoid*u.PlantKWPerKW
	case o.coolOn:
		// A metered unit without an efficiency to fall back on, its meter
		// silent while the coil cools: the input is unknown, not zero and
		// not load / 0. A coil that does not cool draws none (stays 0).
		o.coolIn, o.coolAvoidIn = math.NaN(), math.NaN()
		o.coolUnknown = true
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
	return true
}

// copAt is u.copAt(tOutC), remembered for the last outdoor temperature
// (an outdoor sensor changes seldom from one step to the next).
func (e *engine) copAt(tOutC float64) float64 {
	if !e.copSet || math.Float64bits(tOutC) != math.Float64bits(e.copT) {
		e.copT, e.cop, e.copSet = tOutC, e.u.copAt(tOutC), true
	}
	return e.cop
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

// massFlow sets m to the dry-air mass flow on the configured basis:
// standard air is dry air at 1.204 kg/m³, so m_da = 1.204 Q; an actual
// volume is read at the sensor's state, m_da = Q / v (eq. 26), with the
// leaving humidity wOut at the supply or coil leaving sensor.
func (e *engine) massFlow(m *dv, x *stepIn, tIn, tLv, tSup, wIn, wOut *dv) {
	if e.u.Basis == BasisStandard {
		m.set(psychro.StandardAirDensity * x.flow)
		return
	}
	t, w := e.flowState(tIn, tLv, tSup, wIn, wOut)
	// v = t.addc(ZeroCelsiusK).mul(w.scale(1.607858).addc(1)).scale(R/p),
	// m = cst(Q).div(v), in one pass
	a, b := t.v+psychro.ZeroCelsiusK, w.v*1.607858+1
	v := a * b * e.rOverP
	inv := 1 / (v * v)
	for i := range m.g {
		vg := (t.g[i]*b + a*(w.g[i]*1.607858)) * e.rOverP
		m.g[i] = (0*v - x.flow*vg) * inv
	}
	m.v = x.flow / v
}

// massFlowV is massFlow's value alone.
func (e *engine) massFlowV(x *stepIn, tIn, tLv, tSup, wIn, wOut *dv) float64 {
	if e.u.Basis == BasisStandard {
		return psychro.StandardAirDensity * x.flow
	}
	t, w := e.flowState(tIn, tLv, tSup, wIn, wOut)
	return x.flow / ((t.v + psychro.ZeroCelsiusK) * (w.v*1.607858 + 1) * e.rOverP)
}

// flowState is the state at the airflow sensor: the supply (default), the
// entering or the coil leaving air.
func (e *engine) flowState(tIn, tLv, tSup, wIn, wOut *dv) (t, w *dv) {
	switch e.u.FlowAt {
	case RoleEnteringTemp:
		return tIn, wIn
	case RoleLeavingTemp:
		return tLv, wOut
	}
	return tSup, wOut
}

// h is moist-air enthalpy (eq. 32), kJ/kg.
func h(tC, w float64) float64 { return psychro.CpDryAir*tC + w*(psychro.HgZero+psychro.CpVapour*tC) }

func cp(w float64) float64 { return psychro.CpDryAir + psychro.CpVapour*w }

// condensate is the enthalpy of water leaving the coil at tC, kJ/kg.
func condensate(tC float64) float64 {
	if tC >= 0 {
		return tC * psychro.CpLiquidWater
	}
	return tC*psychro.CpIce + -psychro.HeatOfFusion
}

// pwFromWV is the vapour pressure of humidity ratio w, pwFromW's value.
func pwFromWV(w, p float64) float64 { return w * p / (w + psychro.MolarMassRatio) }

// wAtRHSpace is wAtRH(tC, rh, e.p) through the space temperature's memo
// (psychro.SatVapPressure and SatVapPressureSlope give the same p_ws and
// fail alike).
func (e *engine) wAtRHSpace(tC, rh float64) float64 {
	pws, _, ok := e.memoSpaceT.at(tC)
	if !ok {
		return 0
	}
	pw := rh * pws
	return psychro.MolarMassRatio * pw / (e.p - pw)
}

// wAtRH returns W of air at tC and relative humidity rh (0 when tC is out of range).
func wAtRH(tC, rh, p float64) float64 {
	pws, err := psychro.SatVapPressure(tC)
	if err != nil {
		return 0
	}
	pw := rh * pws
	return psychro.MolarMassRatio * pw / (p - pw)
}
