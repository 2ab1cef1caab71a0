package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/dewline/dewline/psychro"
)

// airJSON is the --json output of "dewline air": SI, units in the key names.
type airJSON struct {
	DryBulbC           float64 `json:"dry_bulb_c"`
	RHPct              float64 `json:"rh_pct"`
	PressureKPa        float64 `json:"pressure_kpa"`
	HumidityRatio      float64 `json:"humidity_ratio"`
	HumidityRatioGrLb  float64 `json:"humidity_ratio_gr_per_lb"`
	VapourPressureKPa  float64 `json:"vapour_pressure_kpa"`
	DewPointC          float64 `json:"dew_point_c"`
	WetBulbC           float64 `json:"wet_bulb_c"`
	EnthalpyKJPerKg    float64 `json:"enthalpy_kj_per_kg"`
	SpecificVolumeM3Kg float64 `json:"specific_volume_m3_per_kg"`
	DensityKgM3        float64 `json:"density_kg_per_m3"`
	DegreeOfSaturation float64 `json:"degree_of_saturation"`
}

func runAir(_ context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("air", flag.ContinueOnError)
	db := fs.String("db", "", "dry bulb, e.g. 75F or 24C (required)")
	rh := fs.String("rh", "", "relative humidity, e.g. 50 or 50%")
	dp := fs.String("dp", "", "dew point, e.g. 55F or 13C")
	wb := fs.String("wb", "", "wet bulb, e.g. 62.5F or 17C")
	hr := fs.String("w", "", "humidity ratio, e.g. 0.0093 (kg/kg), 9.3g/kg or 65gr/lb")
	alt := fs.String("altitude", "", "site altitude for the standard-atmosphere pressure, e.g. 300m or 1000ft")
	pres := fs.String("pressure", "", "barometric pressure, e.g. 98.2kPa, 14.2psi or 29.1inHg (default: sea level)")
	units := fs.String("units", "auto", "display units: si, ip, or auto (those of --db)")
	asJSON := fs.Bool("json", false, "print one JSON object with SI values")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline air --db T (--rh RH | --dp T | --wb T | --w W) [--altitude Z | --pressure P] [--units si|ip] [--json]")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	if *units != "auto" && *units != "si" && *units != "ip" {
		return usagef("--units %q: use si, ip or auto", *units)
	}
	// Bare numbers take the unit system named by --units; with auto, a
	// temperature must carry its unit, so 75 is never silently read as °C.
	defT, defP, defL := "", "", ""
	switch *units {
	case "si":
		defT, defP, defL = "C", "kPa", "m"
	case "ip":
		defT, defP, defL = "F", "psi", "ft"
	}
	if *db == "" {
		return usagef("--db is required, e.g. --db 75F")
	}
	tC, tUnit, err := psychro.ParseQuantity(*db, psychro.KindTemperature, defT)
	if err != nil {
		return usagef("--db: %v", err)
	}
	ip := *units == "ip" || (*units == "auto" && tUnit.Name == "°F")

	pPa := psychro.StandardPressurePa
	switch {
	case *alt != "" && *pres != "":
		return usagef("give --altitude or --pressure, not both")
	case *alt != "":
		z, _, err := psychro.ParseQuantity(*alt, psychro.KindLength, defL)
		if err != nil {
			return usagef("--altitude: %v", err)
		}
		if pPa, err = psychro.PressureFromAltitude(z); err != nil {
			return fmt.Errorf("--altitude: %w", err)
		}
	case *pres != "":
		if pPa, _, err = psychro.ParseQuantity(*pres, psychro.KindPressure, defP); err != nil {
			return usagef("--pressure: %v", err)
		}
	}

	given := 0
	for _, s := range []string{*rh, *dp, *wb, *hr} {
		if s != "" {
			given++
		}
	}
	if given != 1 {
		return usagef("give exactly one of --rh, --dp, --wb, --w with --db")
	}
	var s psychro.State
	switch {
	case *rh != "":
		v, _, err := psychro.ParseQuantity(*rh, psychro.KindRH, "%")
		if err != nil {
			return usagef("--rh: %v", err)
		}
		if v < 0 || v > 1 {
			return usagef("--rh %s: relative humidity must be between 0 and 100 %%", *rh)
		}
		if n, err := strconv.ParseFloat(strings.TrimSpace(*rh), 64); err == nil && n > 0 && n <= 1 {
			// A fraction typed where a percentage is read: say which was used.
			e.log.Warn().Str("rh", *rh).Msgf("--rh %s was read as %s %%; for %s %% give --rh %s", *rh, *rh,
				strconv.FormatFloat(n*100, 'f', -1, 64), strconv.FormatFloat(n*100, 'f', -1, 64))
		}
		s, err = psychro.NewStateRH(tC, v, pPa)
		if err != nil {
			return fmt.Errorf("--rh: %w", err)
		}
	case *dp != "":
		v, _, err := psychro.ParseQuantity(*dp, psychro.KindTemperature, defT)
		if err != nil {
			return usagef("--dp: %v", err)
		}
		if s, err = psychro.NewStateDewPoint(tC, v, pPa); err != nil {
			return fmt.Errorf("--dp: %w", err)
		}
	case *wb != "":
		v, _, err := psychro.ParseQuantity(*wb, psychro.KindTemperature, defT)
		if err != nil {
			return usagef("--wb: %v", err)
		}
		if ip {
			// Field readings in °F follow the IP form of the wet-bulb equation.
			s, err = psychro.NewStateIPWetBulb(psychro.CToF(tC), psychro.CToF(v), psychro.PaToPsi(pPa))
		} else {
			s, err = psychro.NewStateWetBulb(tC, v, pPa)
		}
		if err != nil {
			return fmt.Errorf("--wb: %w", err)
		}
	default:
		v, _, err := psychro.ParseQuantity(*hr, psychro.KindHumRatio, "kg/kg")
		if err != nil {
			return usagef("--w: %v", err)
		}
		if s, err = psychro.NewStateHumRatio(tC, v, pPa); err != nil {
			return fmt.Errorf("--w: %w", err)
		}
	}
	if *asJSON {
		return writeAirJSON(e.stdout, s)
	}
	if ip {
		return writeAirIP(e.stdout, s)
	}
	return writeAirSI(e.stdout, s)
}

func writeAirJSON(w io.Writer, s psychro.State) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(airJSON{
		DryBulbC:           sig6(s.DryBulbC),
		RHPct:              sig6(s.RH * 100),
		PressureKPa:        math.Round(s.PressurePa) / 1000, // to the pascal
		HumidityRatio:      sig6(s.HumRatio),
		HumidityRatioGrLb:  sig6(psychro.HumRatioToGrainsPerLb(s.HumRatio)),
		VapourPressureKPa:  sig6(s.VapPressurePa / 1000),
		DewPointC:          sig6(s.DewPointC),
		WetBulbC:           sig6(s.WetBulbC),
		EnthalpyKJPerKg:    sig6(s.EnthalpyKJPerKg),
		SpecificVolumeM3Kg: sig6(s.VolumeM3PerKg),
		DensityKgM3:        sig6(s.DensityKgPerM3),
		DegreeOfSaturation: sig6(s.DegreeOfSaturation),
	})
}

// sig6 rounds to six significant digits: 80 °F reads 26.6667 °C, not
// 26.666666666666664. Six digits are finer than any input's precision and
// than the formulas' agreement with the handbook tables.
func sig6(v float64) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	r, err := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 6, 64), 64)
	if err != nil {
		return v
	}
	return r
}

type airRow struct{ label, value, unit string }

func writeTable(w io.Writer, title string, rows []airRow) error {
	lw, vw := 0, 0
	for _, r := range rows {
		lw = max(lw, len(r.label))
		vw = max(vw, len(r.value))
	}
	var b strings.Builder
	b.WriteString(title + "\n")
	for _, r := range rows {
		line := fmt.Sprintf("  %-*s  %*s  %s", lw, r.label, vw, r.value, r.unit)
		b.WriteString(strings.TrimRight(line, " ") + "\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func writeAirSI(w io.Writer, s psychro.State) error {
	return writeTable(w, fmt.Sprintf("moist air at %.3f kPa (ASHRAE Handbook - Fundamentals 2017, ch. 1)", s.PressurePa/1000), []airRow{
		{"dry bulb", f(s.DryBulbC, 2), "°C"},
		{"relative humidity", f(s.RH*100, 1), "%"},
		{"dew point", f(s.DewPointC, 2), "°C"},
		{"wet bulb", f(s.WetBulbC, 2), "°C"},
		{"humidity ratio", f(s.HumRatio*1000, 3), "g/kg dry air"},
		{"vapour pressure", f(s.VapPressurePa/1000, 4), "kPa"},
		{"enthalpy", f(s.EnthalpyKJPerKg, 2), "kJ/kg dry air"},
		{"specific volume", f(s.VolumeM3PerKg, 4), "m³/kg dry air"},
		{"density", f(s.DensityKgPerM3, 4), "kg/m³"},
		{"degree of saturation", f(s.DegreeOfSaturation, 4), ""},
	})
}

func writeAirIP(w io.Writer, s psychro.State) error {
	p := s.IP()
	return writeTable(w, fmt.Sprintf("moist air at %.3f psia, %.2f inHg (ASHRAE Handbook - Fundamentals 2017, ch. 1)", p.PressurePsia, s.PressurePa/psychro.PaPerInHg), []airRow{
		{"dry bulb", f(p.DryBulbF, 1), "°F"},
		{"relative humidity", f(p.RH*100, 1), "%"},
		{"dew point", f(p.DewPointF, 1), "°F"},
		{"wet bulb", f(p.WetBulbF, 1), "°F"},
		{"humidity ratio", f(p.GrainsPerLb, 1), "gr/lb dry air"},
		{"humidity ratio", f(p.HumRatio, 5), "lb/lb"},
		{"vapour pressure", f(p.VapPressurePsia, 4), "psia"},
		{"enthalpy", f(p.EnthalpyBtuPerLb, 2), "Btu/lb dry air"},
		{"specific volume", f(p.VolumeFt3PerLb, 3), "ft³/lb dry air"},
		{"density", f(p.DensityLbPerFt3, 4), "lb/ft³"},
		{"degree of saturation", f(p.DegreeOfSaturation, 4), ""},
	})
}

func f(v float64, prec int) string { return fmt.Sprintf("%.*f", prec, v) }
