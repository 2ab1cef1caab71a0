package psychro

import "math"

// Hyland-Wexler coefficients, ASHRAE Handbook - Fundamentals (2017) ch. 1.
// Eq. 5, over ice, -100..0 °C.
const (
	c1 = -5.6745359e+03
	c2 = 6.3925247e+00
	c3 = -9.6778430e-03
	c4 = 6.2215701e-07
	c5 = 2.0747825e-09
	c6 = -9.4840240e-13
	c7 = 4.1635019e+00
)

// Eq. 6, over liquid water, 0..200 °C.
const (
	c8  = -5.8002206e+03
	c9  = 1.3914993e+00
	c10 = -4.8640239e-02
	c11 = 4.1764768e-05
	c12 = -1.4452093e-08
	c13 = 6.5459673e+00
)

// SatVapPressure returns the saturation pressure of water vapour in Pa at
// tC (°C): over ice at or below the triple point (ASHRAE ch. 1 eq. 5), over
// liquid water above it (eq. 6). Valid for -100..200 °C.
func SatVapPressure(tC float64) (float64, error) {
	if err := checkTemp(inTemperature, tC); err != nil {
		return 0, err
	}
	return satVapPressure(tC), nil
}

// lnSatVapPressure is ln(p_ws / Pa) from eqs. 5 and 6, unchecked.
func lnSatVapPressure(tC float64) float64 {
	t := tC + ZeroCelsiusK
	if tC <= TriplePointC {
		return c1/t + c2 + t*(c3+t*(c4+t*(c5+t*c6))) + c7*math.Log(t)
	}
	return c8/t + c9 + t*(c10+t*(c11+t*c12)) + c13*math.Log(t)
}

// dLnSatVapPressure is d ln(p_ws)/dt in 1/K, the analytic derivative of eqs. 5 and 6.
func dLnSatVapPressure(tC float64) float64 {
	t := tC + ZeroCelsiusK
	if tC <= TriplePointC {
		return -c1/(t*t) + c3 + t*(2*c4+t*(3*c5+t*4*c6)) + c7/t
	}
	return -c8/(t*t) + c10 + t*(2*c11+t*3*c12) + c13/t
}

// d2LnSatVapPressure is d² ln(p_ws)/dt² in 1/K², the second derivative of eqs. 5 and 6.
func d2LnSatVapPressure(tC float64) float64 {
	t := tC + ZeroCelsiusK
	if tC <= TriplePointC {
		return 2*c1/(t*t*t) + 2*c4 + t*(6*c5+t*12*c6) - c7/(t*t)
	}
	return 2*c8/(t*t*t) + 2*c11 + 6*c12*t - c13/(t*t)
}

func satVapPressure(tC float64) float64 { return math.Exp(lnSatVapPressure(tC)) }

// satPressureMin and satPressureMax are p_ws at the ends of the valid range.
var (
	satPressureMin = satVapPressure(MinTempC)
	satPressureMax = satVapPressure(MaxTempC)
)

// DewPointFromVapPressure returns the dew point (°C; frost point below the
// triple point) at which the saturation pressure equals pwPa, by Newton
// iteration on ln p_ws (eqs. 5 and 6 inverted). The handbook's explicit fits
// (eqs. 39-40) are less accurate and narrower, so they only seed the iteration.
func DewPointFromVapPressure(pwPa float64) (float64, error) {
	if !finite(pwPa) {
		return 0, notFinite(inVapPressure, pwPa)
	}
	if pwPa < satPressureMin || pwPa > satPressureMax {
		return 0, outOfRange(inVapPressure, pwPa, "outside the saturation pressures of -100..200 °C")
	}
	return dewPoint(pwPa)
}

// dewPoint inverts eqs. 5/6 for a pressure already known to be in range.
func dewPoint(pwPa float64) (float64, error) {
	lnPw := math.Log(pwPa)
	// Seed with the Magnus form over water or ice (a few hundredths of a
	// kelvin from the answer in the HVAC range), then Newton: ln p_ws is
	// smooth and nearly linear in 1/T, so two or three steps reach 1e-9 K.
	td := magnusDewPoint(lnPw)
	for i := 0; i < 50; i++ {
		step := (lnSatVapPressure(td) - lnPw) / dLnSatVapPressure(td)
		next := clamp(td-step, MinTempC, MaxTempC)
		// Newton converges quadratically and ln p_ws is nearly linear in t
		// (|f''/2f'| < 0.01 /K), so after a step below 1e-4 K the error
		// left is below 1e-10 K.
		if math.Abs(next-td) < 1e-4 {
			return next, nil
		}
		td = next
	}
	return 0, &InputError{Input: inVapPressure, Value: pwPa, Reason: "dew point iteration did not converge", Err: ErrNoConvergence}
}

// magnusDewPoint is the Magnus form's dew point over water or ice for
// ln(p_w / Pa), clamped to the valid range: the seed of the iterations.
func magnusDewPoint(lnPw float64) float64 {
	var td float64
	g := lnPw - lnMagnusP0
	if g >= 0 {
		td = 243.12 * g / (17.62 - g)
	} else {
		td = 272.62 * g / (22.46 - g)
	}
	return clamp(td, MinTempC, MaxTempC)
}

// dewPointBelow returns a lower bound of the dew point for a pressure in
// range (within about 1e-3 K of it in the HVAC range, 0.1 K at 200 °C):
// one Newton step from the Magnus seed.
// ln p_ws is concave in t (eqs. 5 and 6, and the kink at the triple point
// bends the same way), so its tangent lies above it and the step lands at
// or below the root wherever it starts.
func dewPointBelow(pwPa float64) float64 {
	lnPw := math.Log(pwPa)
	td := magnusDewPoint(lnPw)
	return clamp(td-(lnSatVapPressure(td)-lnPw)/dLnSatVapPressure(td), MinTempC, MaxTempC)
}

// lnMagnusP0 is ln(611.2 Pa), the reference pressure of the Magnus seed.
var lnMagnusP0 = math.Log(611.2)

func clamp(v, lo, hi float64) float64 {
	if v < lo {
		return lo
	}
	if v > hi {
		return hi
	}
	return v
}

// SatVapPressureSlope returns the saturation pressure p_ws (Pa) at tC and
// its derivative dp_ws/dt (Pa/K), from eqs. 5 and 6 differentiated
// analytically; for propagating sensor errors without extra evaluations.
func SatVapPressureSlope(tC float64) (pws, dPdT float64, err error) {
	if err := checkTemp(inTemperature, tC); err != nil {
		return 0, 0, err
	}
	p := satVapPressure(tC)
	return p, p * dLnSatVapPressure(tC), nil
}
