package psychro

import (
	"errors"
	"fmt"
	"math"
)

// ErrOutOfRange reports an input outside the range where the formulas hold.
var ErrOutOfRange = errors.New("out of range")

// ErrNotFinite reports an input that is NaN or infinite.
var ErrNotFinite = errors.New("not a finite number")

// ErrNoConvergence reports an iteration that did not converge. It indicates
// input at the very edge of the valid range; it is never expected inside it.
var ErrNoConvergence = errors.New("iteration did not converge")

// InputError names the input that made a calculation impossible and why.
// errors.Is matches it against ErrOutOfRange, ErrNotFinite or ErrNoConvergence.
type InputError struct {
	Input  string  // name of the argument, with its unit, e.g. "dry bulb (°C)"
	Value  float64 // the value given
	Reason string  // plain-language reason, e.g. "above 200 °C, the limit of ASHRAE eq. 6"
	Err    error   // the sentinel
}

func (e *InputError) Error() string {
	return fmt.Sprintf("%s = %g: %s", e.Input, e.Value, e.Reason)
}

// Unwrap returns the sentinel so that errors.Is works.
func (e *InputError) Unwrap() error { return e.Err }

func notFinite(input string, v float64) error {
	return &InputError{Input: input, Value: v, Reason: "not a finite number", Err: ErrNotFinite}
}

func outOfRange(input string, v float64, reason string) error {
	return &InputError{Input: input, Value: v, Reason: reason, Err: ErrOutOfRange}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Input names used in errors, kept in one place so messages stay stable.
const (
	inDryBulb     = "dry bulb (°C)"
	inDewPoint    = "dew point (°C)"
	inWetBulb     = "wet bulb (°C)"
	inTemperature = "temperature (°C)"
	inRH          = "relative humidity (fraction)"
	inPressure    = "pressure (Pa)"
	inVapPressure = "vapour pressure (Pa)"
	inHumRatio    = "humidity ratio (kg/kg)"
	inEnthalpy    = "enthalpy (kJ/kg)"
	inAltitude    = "altitude (m)"
	inMass        = "dry-air mass"
	inLeavingRH   = "leaving relative humidity (fraction)"
)

// checkTemp validates a temperature against the range of eqs. 5 and 6.
func checkTemp(input string, tC float64) error {
	if !finite(tC) {
		return notFinite(input, tC)
	}
	if tC < MinTempC {
		return outOfRange(input, tC, "below -100 °C, the lower limit of ASHRAE eq. 5")
	}
	if tC > MaxTempC {
		return outOfRange(input, tC, "above 200 °C, the upper limit of ASHRAE eq. 6")
	}
	return nil
}

// checkPressure validates a total pressure.
func checkPressure(pPa float64) error {
	if !finite(pPa) {
		return notFinite(inPressure, pPa)
	}
	if pPa <= 0 {
		return outOfRange(inPressure, pPa, "must be positive")
	}
	if pPa > MaxPressurePa {
		return outOfRange(inPressure, pPa, "above 10 MPa; the ideal-gas relations do not hold")
	}
	return nil
}

func checkRH(input string, rhFrac float64) error {
	if !finite(rhFrac) {
		return notFinite(input, rhFrac)
	}
	if rhFrac < 0 || rhFrac > 1 {
		return outOfRange(input, rhFrac, "must be between 0 and 1 (0-100 %)")
	}
	return nil
}

func checkHumRatio(w float64) error {
	if !finite(w) {
		return notFinite(inHumRatio, w)
	}
	if w < 0 {
		return outOfRange(inHumRatio, w, "must not be negative")
	}
	return nil
}
