package airstate

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/dewline/dewline/psychro"
)

// Inputs are the readings as typed, each with its unit (or a bare number in
// the unit system named by Units).
type Inputs struct {
	DryBulb, RH, DewPoint, WetBulb, HumRatio string
	Altitude, Pressure                       string
	// Units is the display unit system: "si", "ip" or "auto" (that of
	// DryBulb).
	Units string
}

// Air is a resolved state and how to show it.
type Air struct {
	State psychro.State
	IP    bool // show in IP units
	// Warning, when set, says how an ambiguous reading was read (an RH
	// typed as a fraction is read as a percentage).
	Warning string
}

// InputError is a reading that cannot be read as given: the fix is the
// user's. Other errors of Resolve are states out of the formulas' range.
type InputError struct{ msg string }

func (e *InputError) Error() string { return e.msg }

func inputf(format string, a ...any) error { return &InputError{fmt.Sprintf(format, a...)} }

// Resolve reads the inputs into a state.
func Resolve(in Inputs) (Air, error) {
	var air Air
	if in.Units != "auto" && in.Units != "si" && in.Units != "ip" {
		return air, inputf("--units %q: use si, ip or auto", in.Units)
	}
	// Bare numbers take the unit system named by Units; with auto, a
	// temperature must carry its unit, so 75 is never silently read as °C.
	defT, defP, defL := "", "", ""
	switch in.Units {
	case "si":
		defT, defP, defL = "C", "kPa", "m"
	case "ip":
		defT, defP, defL = "F", "psi", "ft"
	}
	if in.DryBulb == "" {
		return air, inputf("--db is required, e.g. --db 75F")
	}
	tC, tUnit, err := psychro.ParseQuantity(in.DryBulb, psychro.KindTemperature, defT)
	if err != nil {
		return air, inputf("--db: %v", err)
	}
	air.IP = in.Units == "ip" || (in.Units == "auto" && tUnit.Name == "°F")

	pPa := psychro.StandardPressurePa
	switch {
	case in.Altitude != "" && in.Pressure != "":
		return air, inputf("give --altitude or --pressure, not both")
	case in.Altitude != "":
		z, _, err := psychro.ParseQuantity(in.Altitude, psychro.KindLength, defL)
		if err != nil {
			return air, inputf("--altitude: %v", err)
		}
		if pPa, err = psychro.PressureFromAltitude(z); err != nil {
			return air, fmt.Errorf("--altitude: %w", err)
		}
	case in.Pressure != "":
		if pPa, _, err = psychro.ParseQuantity(in.Pressure, psychro.KindPressure, defP); err != nil {
			return air, inputf("--pressure: %v", err)
		}
	}

	given := 0
	for _, s := range []string{in.RH, in.DewPoint, in.WetBulb, in.HumRatio} {
		if s != "" {
			given++
		}
	}
	if given != 1 {
		return air, inputf("give exactly one of --rh, --dp, --wb, --w with --db")
	}
	var s psychro.State
	switch {
	case in.RH != "":
		v, _, err := psychro.ParseQuantity(in.RH, psychro.KindRH, "%")
		if err != nil {
			return air, inputf("--rh: %v", err)
		}
		if v < 0 || v > 1 {
			return air, inputf("--rh %s: relative humidity must be between 0 and 100 %%", in.RH)
		}
		if n, err := strconv.ParseFloat(strings.TrimSpace(in.RH), 64); err == nil && n > 0 && n <= 1 {
			// A fraction typed where a percentage is read: say which was used.
			pct := strconv.FormatFloat(n*100, 'f', -1, 64)
			air.Warning = fmt.Sprintf("--rh %s was read as %s %%; for %s %% give --rh %s", in.RH, in.RH, pct, pct)
		}
		if s, err = psychro.NewStateRH(tC, v, pPa); err != nil {
			return air, fmt.Errorf("--rh: %w", err)
		}
	case in.DewPoint != "":
		v, _, err := psychro.ParseQuantity(in.DewPoint, psychro.KindTemperature, defT)
		if err != nil {
			return air, inputf("--dp: %v", err)
		}
		if s, err = psychro.NewStateDewPoint(tC, v, pPa); err != nil {
			return air, fmt.Errorf("--dp: %w", err)
		}
	case in.WetBulb != "":
		v, _, err := psychro.ParseQuantity(in.WetBulb, psychro.KindTemperature, defT)
		if err != nil {
			return air, inputf("--wb: %v", err)
		}
		if air.IP {
			// Field readings in °F follow the IP form of the wet-bulb equation.
			s, err = psychro.NewStateIPWetBulb(psychro.CToF(tC), psychro.CToF(v), psychro.PaToPsi(pPa))
		} else {
			s, err = psychro.NewStateWetBulb(tC, v, pPa)
		}
		if err != nil {
			return air, fmt.Errorf("--wb: %w", err)
		}
	default:
		v, _, err := psychro.ParseQuantity(in.HumRatio, psychro.KindHumRatio, "kg/kg")
		if err != nil {
			return air, inputf("--w: %v", err)
		}
		if s, err = psychro.NewStateHumRatio(tC, v, pPa); err != nil {
			return air, fmt.Errorf("--w: %w", err)
		}
	}
	air.State = s
	return air, nil
}
