package psychro

import "math"

// StateIP is a State shown in inch-pound units.
type StateIP struct {
	DryBulbF           float64 // °F
	HumRatio           float64 // lb water / lb dry air
	GrainsPerLb        float64 // grains water / lb dry air
	PressurePsia       float64 // psia
	RH                 float64 // fraction 0..1
	VapPressurePsia    float64 // psia
	DewPointF          float64 // °F
	WetBulbF           float64 // °F
	EnthalpyBtuPerLb   float64 // Btu / lb dry air, IP datum (dry air at 0 °F, water at 32 °F)
	VolumeFt3PerLb     float64 // ft³ / lb dry air
	DensityLbPerFt3    float64 // lb moist air / ft³
	DegreeOfSaturation float64
}

// IP returns the state in IP units. The wet bulb is solved again with the IP
// form of eq. 33/35 (see HumRatioFromWetBulbIP). Enthalpy uses the IP form of eq. 32,
// h = 0.240 t + W (1061 + 0.444 t) Btu/lb, whose datum differs from the SI
// one, so it is not a unit conversion of EnthalpyKJPerKg.
func (s State) IP() StateIP {
	tF := CToF(s.DryBulbC)
	return StateIP{
		DryBulbF:           tF,
		HumRatio:           s.HumRatio,
		GrainsPerLb:        HumRatioToGrainsPerLb(s.HumRatio),
		PressurePsia:       PaToPsi(s.PressurePa),
		RH:                 s.RH,
		VapPressurePsia:    PaToPsi(s.VapPressurePa),
		DewPointF:          CToF(s.DewPointC),
		WetBulbF:           s.wetBulbF(),
		EnthalpyBtuPerLb:   EnthalpyIP(tF, s.HumRatio),
		VolumeFt3PerLb:     s.VolumeM3PerKg / M3PerFt3 * KgPerLb,
		DensityLbPerFt3:    s.DensityKgPerM3 * M3PerFt3 / KgPerLb,
		DegreeOfSaturation: s.DegreeOfSaturation,
	}
}

// EnthalpyIP returns moist-air enthalpy in Btu per lb of dry air at tF (°F)
// with humidity ratio w (ASHRAE ch. 1 eq. 32, IP form). It performs no range
// check; use it on validated states.
func EnthalpyIP(tF, w float64) float64 { return 0.240*tF + w*(1061+0.444*tF) }

// NewStateIPRH returns the state at tF (°F), rhFrac and pPsia, computed in SI.
func NewStateIPRH(tF, rhFrac, pPsia float64) (State, error) {
	return NewStateRH(FToC(tF), rhFrac, PsiToPa(pPsia))
}

// wetBulbF solves the IP form for the state's wet bulb; the SI result seeds
// nothing and is returned only if the IP solve fails (it cannot for a valid state).
func (s State) wetBulbF() float64 {
	twb, err := wetBulb(&wbIP, s.DryBulbC, s.HumRatio, s.PressurePa, s.DewPointC)
	if err != nil {
		twb = s.WetBulbC
	}
	return CToF(twb)
}

// HumRatioFromWetBulbIP returns W (lb/lb) from dry bulb tF, wet bulb twbF
// (°F) and pressure pPsia with the IP form of ASHRAE ch. 1 eq. 33 (eq. 35
// below 32 °F): W = ((1093 - 0.556 t*) W_s* - 0.240 (t - t*)) / (1093 + 0.444 t - t*).
func HumRatioFromWetBulbIP(tF, twbF, pPsia float64) (float64, error) {
	return humRatioFromWetBulb(&wbIP, FToC(tF), FToC(twbF), PsiToPa(pPsia))
}

// WetBulbFromHumRatioIP returns the wet bulb (°F) of air at tF with humidity
// ratio w at pPsia, inverting the IP form of eq. 33/35.
func WetBulbFromHumRatioIP(tF, w, pPsia float64) (float64, error) {
	tC, pPa := FToC(tF), PsiToPa(pPsia)
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	td, err := DewPointFromHumRatio(w, pPa)
	if err != nil {
		return 0, err
	}
	if td > tC+1e-9 {
		return 0, outOfRange(inHumRatio, w, "above saturation at this dry bulb (dew point above dry bulb)")
	}
	twb, err := wetBulb(&wbIP, tC, w, pPa, math.Min(td, tC))
	return CToF(twb), err
}

// NewStateIPWetBulb returns the state at dry bulb tF, wet bulb twbF (°F) and
// pPsia, with W from the IP form of eq. 33/35.
func NewStateIPWetBulb(tF, twbF, pPsia float64) (State, error) {
	w, err := HumRatioFromWetBulbIP(tF, twbF, pPsia)
	if err != nil {
		return State{}, err
	}
	return NewStateHumRatio(FToC(tF), w, PsiToPa(pPsia))
}
