package psychro

import "math"

// HumRatioFromVapPressure returns W (kg/kg) from the partial pressure of
// water vapour pwPa and the total pressure pPa (ASHRAE ch. 1 eq. 20).
func HumRatioFromVapPressure(pwPa, pPa float64) (float64, error) {
	if err := checkPressure(pPa); err != nil {
		return 0, err
	}
	if !finite(pwPa) {
		return 0, notFinite(inVapPressure, pwPa)
	}
	if pwPa < 0 {
		return 0, outOfRange(inVapPressure, pwPa, "must not be negative")
	}
	if pwPa >= pPa {
		return 0, outOfRange(inPressure, pPa, "at or below the vapour pressure; check the pressure unit")
	}
	return MolarMassRatio * pwPa / (pPa - pwPa), nil
}

// VapPressureFromHumRatio returns the partial pressure of water vapour in Pa
// from W (kg/kg) and total pressure pPa (eq. 20 solved for p_w).
func VapPressureFromHumRatio(w, pPa float64) (float64, error) {
	if err := checkPressure(pPa); err != nil {
		return 0, err
	}
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	return pPa * w / (MolarMassRatio + w), nil
}

// SatHumRatio returns the humidity ratio at saturation W_s (kg/kg) at tC and
// pPa (eq. 20 with p_w = p_ws(t)). It is an error when p_ws(t) reaches the total pressure
// (boiling), where no saturated moist air exists.
func SatHumRatio(tC, pPa float64) (float64, error) {
	return satHumRatio(inDryBulb, tC, pPa, "at or below the saturation pressure at this temperature (water boils)")
}

// satHumRatio is W_s (kg/kg) at temperature tC, the input named in, and
// pressure pPa (eq. 20 with p_w = p_ws(t)); why is the pressure's range
// when p_ws(t) reaches it.
func satHumRatio(in string, tC, pPa float64, why string) (float64, error) {
	if err := checkTemp(in, tC); err != nil {
		return 0, err
	}
	if err := checkPressure(pPa); err != nil {
		return 0, err
	}
	pws := satVapPressure(tC)
	if pws >= pPa {
		return 0, outOfRange(inPressure, pPa, why)
	}
	return MolarMassRatio * pws / (pPa - pws), nil
}

// HumRatioFromRH returns W (kg/kg) from dry bulb tC, relative humidity rhFrac
// (0..1) and total pressure pPa (eqs. 22 and 20; RH as defined by eq. 24).
func HumRatioFromRH(tC, rhFrac, pPa float64) (float64, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	if err := checkRH(inRH, rhFrac); err != nil {
		return 0, err
	}
	if err := checkPressure(pPa); err != nil {
		return 0, err
	}
	pw := rhFrac * satVapPressure(tC)
	if pw >= pPa {
		return 0, outOfRange(inPressure, pPa, "at or below the vapour pressure; check the pressure unit")
	}
	return MolarMassRatio * pw / (pPa - pw), nil
}

// RHFromHumRatio returns the relative humidity (fraction) of air at tC with
// humidity ratio w at pressure pPa (eq. 24). A result above 1 means the
// values describe supersaturated air (fog) or a sensor error; callers decide.
func RHFromHumRatio(tC, w, pPa float64) (float64, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	pw, err := VapPressureFromHumRatio(w, pPa)
	if err != nil {
		return 0, err
	}
	return pw / satVapPressure(tC), nil
}

// HumRatioFromDewPoint returns W (kg/kg) of air whose dew point is tdC at
// pressure pPa (eq. 20 with p_w = p_ws(t_d)).
func HumRatioFromDewPoint(tdC, pPa float64) (float64, error) {
	return satHumRatio(inDewPoint, tdC, pPa, "at or below the vapour pressure at this dew point")
}

// DewPointFromHumRatio returns the dew point (°C) of air with humidity ratio
// w at pressure pPa. W = 0 has no dew point and is an error.
func DewPointFromHumRatio(w, pPa float64) (float64, error) {
	pw, err := vapPressureWithDewPoint(w, pPa)
	if err != nil {
		return 0, err
	}
	return dewPoint(pw)
}

// vapPressureWithDewPoint is the vapour pressure (Pa) of air with humidity
// ratio w at pressure pPa (eq. 20), refused where the dew point would lie
// outside -100..200 °C, the range of the saturation pressure formula.
func vapPressureWithDewPoint(w, pPa float64) (float64, error) {
	pw, err := VapPressureFromHumRatio(w, pPa)
	if err != nil {
		return 0, err
	}
	if pw < satPressureMin {
		return 0, outOfRange(inHumRatio, w, "too dry: the dew point would be below -100 °C")
	}
	if pw > satPressureMax {
		return 0, outOfRange(inHumRatio, w, "the dew point would be above 200 °C")
	}
	return pw, nil
}

// HumRatioFromWetBulb returns W (kg/kg) from dry bulb tC, thermodynamic wet
// bulb twbC and pressure pPa: ASHRAE ch. 1 eq. 33 when the wet bulb is at or
// above freezing, eq. 35 (ice bulb) below.
func HumRatioFromWetBulb(tC, twbC, pPa float64) (float64, error) {
	return humRatioFromWetBulb(&wbSI, tC, twbC, pPa)
}

func humRatioFromWetBulb(form *wbForm, tC, twbC, pPa float64) (float64, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	if err := checkTemp(inWetBulb, twbC); err != nil {
		return 0, err
	}
	if err := checkPressure(pPa); err != nil {
		return 0, err
	}
	if twbC > tC {
		return 0, outOfRange(inWetBulb, twbC, "above the dry bulb; swap the values or check the units")
	}
	pws := satVapPressure(twbC)
	if pws >= pPa {
		return 0, outOfRange(inPressure, pPa, "at or below the saturation pressure at the wet bulb")
	}
	w := form.w(tC, twbC, MolarMassRatio*pws/(pPa-pws))
	if w < 0 {
		return 0, outOfRange(inWetBulb, twbC, "too low for this dry bulb: no moist air has that wet bulb")
	}
	return w, nil
}

// wbForm holds the coefficients of eq. 33 (wet bulb over water) and eq. 35
// (over ice) in one unit system. The handbook prints an SI and an IP form
// whose coefficients are rounded separately, so they differ by up to 0.3 %
// in W below freezing; each system's results use its own form.
type wbForm struct {
	perK, off  float64 // the form's temperature = perK °C + off
	freezing   float64 // wet bulb where eq. 35 takes over, in the form's unit
	cpa, cpv   float64 // dry-air and vapour specific heats
	aW, bW, fW float64 // eq. 33: ((aW - bW t*) Ws* - cpa (t - t*)) / (aW + cpv t - fW t*)
	aI, bI, fI float64 // eq. 35, the same shape with ice terms
}

var (
	wbSI = wbForm{perK: 1, off: 0, freezing: 0,
		cpa: CpDryAir, cpv: CpVapour, aW: HgZero, bW: 2.326, fW: CpLiquidWater, aI: 2830, bI: 0.24, fI: CpIce}
	wbIP = wbForm{perK: 1.8, off: 32, freezing: 32,
		cpa: 0.240, cpv: 0.444, aW: 1093, bW: 0.556, fW: 1, aI: 1220, bI: 0.04, fI: 0.48}
)

// toSys converts °C to the form's temperature unit.
func (f *wbForm) toSys(tC float64) float64 { return tC*f.perK + f.off }

// w returns W from eq. 33 or 35 given W_s* at the wet bulb (temperatures in °C).
func (f *wbForm) w(tC, twbC, wsStar float64) float64 {
	return f.wBranch(tC, twbC, wsStar, f.toSys(twbC) < f.freezing)
}

// wBranch evaluates eq. 35 (ice) when ice is true, else eq. 33.
func (f *wbForm) wBranch(tC, twbC, wsStar float64, ice bool) float64 {
	t, ts := f.toSys(tC), f.toSys(twbC)
	a, b, g := f.aW, f.bW, f.fW
	if ice {
		a, b, g = f.aI, f.bI, f.fI
	}
	return ((a-b*ts)*wsStar - f.cpa*(t-ts)) / (a + f.cpv*t - g*ts)
}

// quadSeed solves the form's equation for t* with W_s(t*) replaced by
// w + s1 u + s2 u²/2, u = t* - tdC, s1 in 1/K and s2 in 1/K². The branch is
// chosen by the dew point.
func (f *wbForm) quadSeed(tC, tdC, w, s1, s2 float64) float64 {
	a, b, g := f.aW, f.bW, f.fW
	if f.toSys(tdC) < f.freezing {
		a, b, g = f.aI, f.bI, f.fI
	}
	// In the form's units, x = xd + u:
	// (a - b x)(w + s1 u + s2 u²/2) - cpa (t - x) = w (a + cpv t - g x).
	// With a - b x held at its value A, c2 u² + c1 u + c0 = 0; A is taken
	// at the dew point, then once more at the first answer.
	k := f.perK
	s1, s2 = s1/k, s2/(k*k)
	t, xd := f.toSys(tC), f.toSys(tdC)
	c0base := -f.cpa*(t-xd) - w*(a+f.cpv*t-g*xd)
	u := 0.0
	for range 2 {
		A := a - b*(xd+u)
		c2 := A * s2 / 2
		c1 := A*s1 + f.cpa + w*g
		c0 := A*w + c0base
		u = -2 * c0 / (c1 + math.Sqrt(c1*c1-4*c2*c0))
	}
	return (xd + u - f.off) / k
}

// derivs returns dW/dt* in 1/K and d²W/dt*² in 1/K² from eq. 33/35, given
// W_s* and its first and second derivatives in °C, for Halley's method.
func (f *wbForm) derivs(tC, twbC, wsStar, dWs, d2Ws float64) (d1, d2 float64) {
	t, ts := f.toSys(tC), f.toSys(twbC)
	a, b, g := f.aW, f.bW, f.fW
	if ts < f.freezing {
		a, b, g = f.aI, f.bI, f.fI
	}
	k := f.perK // the form's degrees per K
	n := (a-b*ts)*wsStar - f.cpa*(t-ts)
	den := a + f.cpv*t - g*ts
	dn := -b*k*wsStar + (a-b*ts)*dWs + f.cpa*k
	d2n := -2*b*k*dWs + (a-b*ts)*d2Ws
	dden := -g * k
	d1 = (dn*den - n*dden) / (den * den)
	d2 = (d2n - 2*dden*d1) / den
	return d1, d2
}

// WetBulbFromHumRatio returns the thermodynamic wet bulb (°C) of air at tC
// with humidity ratio w and pressure pPa: eq. 33/35 solved for t* by a
// Newton iteration kept inside the bracket [dew point, dry bulb].
func WetBulbFromHumRatio(tC, w, pPa float64) (float64, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	pw, err := vapPressureWithDewPoint(w, pPa)
	if err != nil {
		return 0, err
	}
	// The iteration needs only a bracket and a seed, not the dew point to
	// 1e-9 K: one Newton step on ln p_ws from the Magnus estimate lands
	// below the dew point (ln p_ws is concave in t), within about 1e-3 K
	// of it in the HVAC range and 0.1 K at 200 °C. Near saturation the
	// exact dew point decides whether the state exists.
	td := dewPointBelow(pw)
	if td > tC-nearSaturationK {
		if td, err = dewPoint(pw); err != nil {
			return 0, err
		}
		if td > tC+1e-9 {
			return 0, outOfRange(inHumRatio, w, "above saturation at this dry bulb (dew point above dry bulb)")
		}
	}
	return wetBulb(&wbSI, tC, w, pPa, math.Min(td, tC))
}

// nearSaturationK is how close to the dry bulb dewPointBelow's estimate
// may come before the exact dew point is computed: well above its error.
const nearSaturationK = 0.5

// wetBulb solves for t* given a valid state and its dew point tdC.
func wetBulb(form *wbForm, tC, w, pPa, tdC float64) (float64, error) {
	lo, hi := tdC, tC
	if hi-lo < 1e-9 {
		return tC, nil
	}
	// At the freezing point eq. 35 gives a larger W than eq. 33, so for very
	// dry air a band of W has a root on both branches. Physically the wetted
	// bulb then sits on the ice-water plateau at the freezing point, which is
	// the answer returned (ASHRAE's equations leave the choice open).
	if lo < 0 && hi > 0 && pPa > satPressureZero {
		ws0 := MolarMassRatio * satPressureZero / (pPa - satPressureZero)
		if form.wBranch(tC, 0, ws0, false) < w && w < form.wBranch(tC, 0, ws0, true) {
			return 0, nil
		}
	}
	// Seed: replace W_s(t*) by its second-order Taylor polynomial at the dew
	// point, where W_s = W, and solve eq. 33/35 for t* (a quadratic then).
	// W_s grows faster than the polynomial, so the seed overshoots a
	// little; in dry air far less than the tangent's would.
	pwd := pPa * w / (MolarMassRatio + w)
	q := pPa - pwd
	l1 := dLnSatVapPressure(tdC)
	dp := pwd * l1
	d2p := pwd * (l1*l1 + d2LnSatVapPressure(tdC))
	s1 := MolarMassRatio * pPa * dp / (q * q)
	s2 := MolarMassRatio * pPa * (d2p*q + 2*dp*dp) / (q * q * q)
	t := form.quadSeed(tC, tdC, w, s1, s2)
	if !(t > lo && t < hi) {
		t = 0.5 * (lo + hi)
	}
	// Halley's method (the second derivative of W_s comes from the same
	// p_ws, with no further exponential or logarithm), kept inside the
	// bracket.
	for i := 0; i < 60; i++ {
		pws := satVapPressure(t)
		if pws >= pPa {
			// Only near boiling; step down by bisection.
			hi = t
			t = 0.5 * (lo + hi)
			continue
		}
		q := pPa - pws
		ws := MolarMassRatio * pws / q
		f := form.w(tC, t, ws) - w
		if f == 0 {
			return t, nil
		}
		if f > 0 {
			hi = t
		} else {
			lo = t
		}
		l1 := dLnSatVapPressure(t)
		dp := pws * l1
		d2p := pws * (l1*l1 + d2LnSatVapPressure(t))
		dws := MolarMassRatio * pPa * dp / (q * q)
		d2ws := MolarMassRatio * pPa * (d2p*q + 2*dp*dp) / (q * q * q)
		df, d2f := form.derivs(tC, t, ws, dws, d2ws)
		den := 2*df*df - f*d2f
		if df > 0 && den > 0 {
			step := 2 * f * df / den
			// Cubic convergence: the error left after a step d is about
			// K d³, K = |f3/6f1 - f2²/4f1²| with f1..f3 the derivatives of
			// eq. 33/35 in t*, under 0.01 /K² (W_s grows by under 10 %/K),
			// so a step below 1e-3 K leaves less than 1e-11 K
			// (TestWetBulb_Converged). Tested before the bracket: the last
			// step may be a rounding's width from its edge.
			if math.Abs(step) < 1e-3 {
				return t - step, nil
			}
			if next := t - step; next > lo && next < hi {
				t = next
				continue
			}
		}
		// The step left the bracket: bisect instead.
		t = 0.5 * (lo + hi)
		if hi-lo < 1e-9 {
			return t, nil
		}
	}
	return 0, &InputError{Input: inHumRatio, Value: w, Reason: "wet bulb iteration did not converge", Err: ErrNoConvergence}
}

// satPressureZero is p_ws at 0 °C (eq. 5).
var satPressureZero = satVapPressure(0)

// DegreeOfSaturation returns μ = W / W_s(t, p) (ASHRAE ch. 1 definition of the degree of saturation).
func DegreeOfSaturation(tC, w, pPa float64) (float64, error) {
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	ws, err := SatHumRatio(tC, pPa)
	if err != nil {
		return 0, err
	}
	return w / ws, nil
}
