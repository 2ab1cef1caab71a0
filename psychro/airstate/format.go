package airstate

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/dewline/dewline/psychro"
)

// airJSON is the JSON form of a state: SI, units in the key names.
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

// JSON is one indented JSON object of the state's SI values, rounded to
// six significant digits, ending in a newline.
func JSON(s psychro.State) ([]byte, error) {
	b, err := json.MarshalIndent(airJSON{
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
	}, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
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

type row struct{ label, value, unit string }

func table(title string, rows []row) string {
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
	return b.String()
}

// Table lays the state out, one property a line, in IP units if ip and in
// SI otherwise.
func Table(s psychro.State, ip bool) string {
	if ip {
		return tableIP(s)
	}
	return table(fmt.Sprintf("moist air at %.3f kPa (ASHRAE Handbook - Fundamentals 2017, ch. 1)", s.PressurePa/1000), []row{
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

func tableIP(s psychro.State) string {
	p := s.IP()
	return table(fmt.Sprintf("moist air at %.3f psia, %.2f inHg (ASHRAE Handbook - Fundamentals 2017, ch. 1)", p.PressurePsia, s.PressurePa/psychro.PaPerInHg), []row{
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
