package metrics

import "github.com/dewline/dewline/psychro"

// The sensors whose calibration bias the engine propagates, and the
// assumptions it makes where a building has no sensor, as indexes of a dual
// number's gradient.
const (
	sensTIn   = iota // entering dry bulb, per K
	sensHumIn        // entering RH (per unit fraction) or dew point (per K)
	sensTLv          // coil leaving dry bulb, per K
	sensLvHum        // coil leaving RH or dew point
	sensTSup         // supply dry bulb, per K
	sensBF           // the bypass factor of the assumed coil leaving RH, per unit BF
	sensShare        // the outdoor-air share, per its own 95 % half-width (the step's gradient carries it)
	sensGain         // the assumed space moisture gain, per kg/kg
	nSens
)

// dv is a value with its gradient with respect to the sensors (forward-mode
// automatic differentiation). The engine computes every figure that carries
// an uncertainty in dv arithmetic, so one pass yields the figure and its
// first-order sensitivity to each sensor's bias, with no extra evaluation
// of the psychrometric functions.
//
// The operations are methods on the result, r.op(a, b) setting r = a op b,
// with operands by pointer: a dv is 72 bytes, and passing and returning it
// by value copied it at every operation of the step, which cost more than
// the arithmetic. r may be one of the operands. Each element's operations
// stay those of the plain form named in each comment, in the same order,
// so the results are the same bits.
type dv struct {
	v float64
	g [nSens]float64
}

func cst(v float64) dv { return dv{v: v} }

func seed(v float64, i int) dv {
	d := dv{v: v}
	d.g[i] = 1
	return d
}

// set makes r the constant v.
func (r *dv) set(v float64) { *r = dv{v: v} }

// add sets r = a + b.
func (r *dv) add(a, b *dv) {
	r.v = a.v + b.v
	for i := range r.g {
		r.g[i] = a.g[i] + b.g[i]
	}
}

// sub sets r = a - b.
func (r *dv) sub(a, b *dv) {
	r.v = a.v - b.v
	for i := range r.g {
		r.g[i] = a.g[i] - b.g[i]
	}
}

// mul sets r = a b.
func (r *dv) mul(a, b *dv) {
	av, bv := a.v, b.v
	for i := range r.g {
		r.g[i] = a.g[i]*bv + av*b.g[i]
	}
	r.v = av * bv
}

// div sets r = a / b.
func (r *dv) div(a, b *dv) {
	av, bv := a.v, b.v
	inv := 1 / (bv * bv)
	for i := range r.g {
		r.g[i] = (a.g[i]*bv - av*b.g[i]) * inv
	}
	r.v = av / bv
}

// scale sets r = k a.
func (r *dv) scale(a *dv, k float64) {
	r.v = a.v * k
	for i := range r.g {
		r.g[i] = a.g[i] * k
	}
}

// addc sets r = a + k.
func (r *dv) addc(a *dv, k float64) {
	r.v = a.v + k
	r.g = a.g
}

// dmin sets r to the smaller of a and b, a whole operand; at a tie the
// first wins.
func (r *dv) dmin(a, b *dv) {
	if b.v < a.v {
		*r = *b
	} else {
		*r = *a
	}
}

// satMemo remembers the saturation pressure and slope one call site of the
// step evaluated last: a trend logged on change of value, or a slow
// sensor, holds the same reading for many steps, and the exponential and
// logarithm cost more than the rest of the step's arithmetic.
type satMemo struct {
	t, p, d float64
	ok, set bool
}

// at returns p_ws and dp_ws/dt at t, and false out of range, exactly as
// psychro.SatVapPressureSlope would.
func (m *satMemo) at(t float64) (p, d float64, ok bool) {
	if !m.set || t != m.t {
		p, d, err := psychro.SatVapPressureSlope(t)
		m.t, m.p, m.d, m.ok, m.set = t, p, d, err == nil, true
	}
	return m.p, m.d, m.ok
}

// from fills m with the saturation pressure and slope at t that the dew
// point memo dp evaluated last, when that dew point is t: the coil
// temperature a humidity target requires comes from a dew point, and the
// apparatus dew point of that temperature is most often that dew point
// again, to the bit. The values are SatVapPressureSlope's at t either way.
func (m *satMemo) from(t float64, dp *dpMemo) {
	if dp.slope && t == dp.t && (!m.set || t != m.t) {
		m.t, m.p, m.d, m.ok, m.set = t, dp.p, dp.d, true, true
	}
}

// pws sets r to the saturation pressure of a dual temperature, through
// the call site's memo; false out of range (r is then unchanged).
func (r *dv) pws(t *dv, m *satMemo) bool {
	p, d, ok := m.at(t.v)
	if !ok {
		return false
	}
	for i := range r.g {
		r.g[i] = d * t.g[i]
	}
	r.v = p
	return true
}

// wFromPw sets r = W = 0.621945 p_w / (p - p_w) (ASHRAE ch. 1 eq. 20):
// pw.scale(MolarMassRatio).div(cst(p).sub(pw)) in one pass.
func (r *dv) wFromPw(pw *dv, p float64) {
	a, b := pw.v*psychro.MolarMassRatio, p-pw.v
	inv := 1 / (b * b)
	for i := range r.g {
		g := pw.g[i]
		r.g[i] = (g*psychro.MolarMassRatio*b - a*(0-g)) * inv
	}
	r.v = a / b
}

// pwFromW sets r to the vapour pressure of humidity ratio w, inverting
// wFromPw: w.scale(p).div(w.addc(MolarMassRatio)) in one pass.
func (r *dv) pwFromW(w *dv, p float64) {
	a, b := w.v*p, w.v+psychro.MolarMassRatio
	inv := 1 / (b * b)
	for i := range r.g {
		g := w.g[i]
		r.g[i] = (g*p*b - a*g) * inv
	}
	r.v = a / b
}

// hD sets r to moist-air enthalpy, eq. 32, in kJ/kg:
// t.scale(CpDryAir).add(w.mul(t.scale(CpVapour).addc(HgZero))) in one pass.
func (r *dv) hD(t, w *dv) {
	tv, wv := t.v, w.v
	s := tv*psychro.CpVapour + psychro.HgZero
	for i := range r.g {
		r.g[i] = t.g[i]*psychro.CpDryAir + (w.g[i]*s + wv*(t.g[i]*psychro.CpVapour))
	}
	r.v = tv*psychro.CpDryAir + wv*s
}

// cpD sets r to the moist specific heat 1.006 + 1.86 W:
// w.scale(CpVapour).addc(CpDryAir).
func (r *dv) cpD(w *dv) {
	r.scale(w, psychro.CpVapour)
	r.v += psychro.CpDryAir
}

// The bypass-factor model's three forms, each in one pass with each
// element's operations in the order of the dual-number expression named
// (the same bits), with no temporaries.

// unbypass sets r = a.sub(b.mul(bf)).div(cst(1).sub(bf)): (a - BF b) / (1 - BF).
func (r *dv) unbypass(a, b, bf *dv) {
	av, bv, fv := a.v, b.v, bf.v
	n := av - bv*fv
	den := 1 - fv
	inv := 1 / (den * den)
	for i := range r.g {
		r.g[i] = ((a.g[i]-(b.g[i]*fv+bv*bf.g[i]))*den - n*(0-bf.g[i])) * inv
	}
	r.v = n / den
}

// bypass sets r = a.mul(cst(1).sub(bf)).add(b.mul(bf)): (1 - BF) a + BF b.
func (r *dv) bypass(a, b, bf *dv) {
	av, bv, fv := a.v, b.v, bf.v
	om := 1 - fv
	for i := range r.g {
		r.g[i] = (a.g[i]*om + av*(0-bf.g[i])) + (b.g[i]*fv + bv*bf.g[i])
	}
	r.v = av*om + bv*fv
}

// rebypass sets r = a.sub(b).mul(bf).add(b): BF (a - b) + b.
func (r *dv) rebypass(a, b, bf *dv) {
	bv, fv := b.v, bf.v
	d := a.v - bv
	for i := range r.g {
		r.g[i] = ((a.g[i]-b.g[i])*fv + d*bf.g[i]) + b.g[i]
	}
	r.v = d*fv + bv
}
