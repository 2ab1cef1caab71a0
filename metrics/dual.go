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

func (a dv) add(b dv) dv {
	a.v += b.v
	for i := range a.g {
		a.g[i] += b.g[i]
	}
	return a
}

func (a dv) sub(b dv) dv {
	a.v -= b.v
	for i := range a.g {
		a.g[i] -= b.g[i]
	}
	return a
}

func (a dv) mul(b dv) dv {
	r := dv{v: a.v * b.v}
	for i := range r.g {
		r.g[i] = a.g[i]*b.v + a.v*b.g[i]
	}
	return r
}

func (a dv) div(b dv) dv {
	r := dv{v: a.v / b.v}
	inv := 1 / (b.v * b.v)
	for i := range r.g {
		r.g[i] = (a.g[i]*b.v - a.v*b.g[i]) * inv
	}
	return r
}

func (a dv) scale(k float64) dv {
	a.v *= k
	for i := range a.g {
		a.g[i] *= k
	}
	return a
}

func (a dv) addc(k float64) dv {
	a.v += k
	return a
}

// dmin and dmax pick a whole operand; at a tie the first wins.
func dmin(a, b dv) dv {
	if b.v < a.v {
		return b
	}
	return a
}

func dmax(a, b dv) dv {
	if b.v > a.v {
		return b
	}
	return a
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

// pwsD is the saturation pressure of a dual temperature, through the call
// site's memo.
func pwsD(t dv, m *satMemo) (dv, bool) {
	p, d, ok := m.at(t.v)
	if !ok {
		return dv{}, false
	}
	r := dv{v: p}
	for i := range r.g {
		r.g[i] = d * t.g[i]
	}
	return r, true
}

// wFromPw is W = 0.621945 p_w / (p - p_w) (ASHRAE ch. 1 eq. 20).
func wFromPw(pw dv, p float64) dv {
	// pw.scale(MolarMassRatio).div(cst(p).sub(pw)) in one pass, each
	// element's operations in the same order (the same bits).
	a, b := pw.v*psychro.MolarMassRatio, p-pw.v
	r := dv{v: a / b}
	inv := 1 / (b * b)
	for i := range r.g {
		r.g[i] = (pw.g[i]*psychro.MolarMassRatio*b - a*(0-pw.g[i])) * inv
	}
	return r
}

// pwFromW inverts wFromPw.
func pwFromW(w dv, p float64) dv {
	// w.scale(p).div(w.addc(MolarMassRatio)) in one pass, as wFromPw.
	a, b := w.v*p, w.v+psychro.MolarMassRatio
	r := dv{v: a / b}
	inv := 1 / (b * b)
	for i := range r.g {
		r.g[i] = (w.g[i]*p*b - a*w.g[i]) * inv
	}
	return r
}

// hD is moist-air enthalpy, eq. 32, in kJ/kg.
func hD(t, w dv) dv {
	// t.scale(CpDryAir).add(w.mul(t.scale(CpVapour).addc(HgZero))) in one
	// pass, each element's operations in the same order (the same bits).
	s := t.v*psychro.CpVapour + psychro.HgZero
	r := dv{v: t.v*psychro.CpDryAir + w.v*s}
	for i := range r.g {
		r.g[i] = t.g[i]*psychro.CpDryAir + (w.g[i]*s + w.v*(t.g[i]*psychro.CpVapour))
	}
	return r
}

// cpD is the moist specific heat 1.006 + 1.86 W.
func cpD(w dv) dv { return w.scale(psychro.CpVapour).addc(psychro.CpDryAir) }

// The bypass-factor model's three forms, each in one pass with each
// element's operations in the order of the dual-number expression named
// (the same bits), with no temporaries.

// unbypass is a.sub(b.mul(bf)).div(cst(1).sub(bf)): (a - BF b) / (1 - BF).
func unbypass(a, b, bf dv) dv {
	n := a.v - b.v*bf.v
	den := 1 - bf.v
	r := dv{v: n / den}
	inv := 1 / (den * den)
	for i := range r.g {
		r.g[i] = ((a.g[i]-(b.g[i]*bf.v+b.v*bf.g[i]))*den - n*(0-bf.g[i])) * inv
	}
	return r
}

// bypass is a.mul(cst(1).sub(bf)).add(b.mul(bf)): (1 - BF) a + BF b.
func bypass(a, b, bf dv) dv {
	om := 1 - bf.v
	r := dv{v: a.v*om + b.v*bf.v}
	for i := range r.g {
		r.g[i] = (a.g[i]*om + a.v*(0-bf.g[i])) + (b.g[i]*bf.v + b.v*bf.g[i])
	}
	return r
}

// rebypass is a.sub(b).mul(bf).add(b): BF (a - b) + b.
func rebypass(a, b, bf dv) dv {
	d := a.v - b.v
	r := dv{v: d*bf.v + b.v}
	for i := range r.g {
		r.g[i] = ((a.g[i]-b.g[i])*bf.v + d*bf.g[i]) + b.g[i]
	}
	return r
}
