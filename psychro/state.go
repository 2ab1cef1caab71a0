package psychro

import "math"

// State is a complete moist-air state, SI. Build it with one of the
// NewState... constructors, which validate their input.
type State struct {
	DryBulbC           float64 // dry bulb, °C
	HumRatio           float64 // W, kg water / kg dry air
	PressurePa         float64 // total (barometric) pressure, Pa
	RH                 float64 // relative humidity, fraction 0..1
	VapPressurePa      float64 // partial pressure of water vapour, Pa
	DewPointC          float64 // dew point (frost point below 0.01 °C), °C
	WetBulbC           float64 // thermodynamic wet bulb, °C
	EnthalpyKJPerKg    float64 // kJ / kg dry air
	VolumeM3PerKg      float64 // m³ / kg dry air
	DensityKgPerM3     float64 // kg moist air / m³
	DegreeOfSaturation float64 // μ = W / W_s
}

// rhSlack lets a state computed from a dew point equal to the dry bulb, or a
// wet bulb equal to it, land a few ulps above RH = 1 without being refused.
const rhSlack = 1e-9

// NewStateRH returns the state at dry bulb tC, relative humidity rhFrac
// (0..1) and pressure pPa.
func NewStateRH(tC, rhFrac, pPa float64) (State, error) {
	w, err := HumRatioFromRH(tC, rhFrac, pPa)
	if err != nil {
		return State{}, err
	}
	return complete(tC, w, pPa)
}

// NewStateDewPoint returns the state at dry bulb tC, dew point tdC and pressure pPa.
func NewStateDewPoint(tC, tdC, pPa float64) (State, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return State{}, err
	}
	if err := checkTemp(inDewPoint, tdC); err != nil {
		return State{}, err
	}
	if tdC > tC {
		return State{}, outOfRange(inDewPoint, tdC, "above the dry bulb; swap the values or check the units")
	}
	w, err := HumRatioFromDewPoint(tdC, pPa)
	if err != nil {
		return State{}, err
	}
	return complete(tC, w, pPa)
}

// NewStateWetBulb returns the state at dry bulb tC, wet bulb twbC and pressure pPa.
func NewStateWetBulb(tC, twbC, pPa float64) (State, error) {
	w, err := HumRatioFromWetBulb(tC, twbC, pPa)
	if err != nil {
		return State{}, err
	}
	return complete(tC, w, pPa)
}

// NewStateHumRatio returns the state at dry bulb tC, humidity ratio w and
// pressure pPa. W above saturation is an error.
func NewStateHumRatio(tC, w, pPa float64) (State, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return State{}, err
	}
	if err := checkHumRatio(w); err != nil {
		return State{}, err
	}
	if err := checkPressure(pPa); err != nil {
		return State{}, err
	}
	return complete(tC, w, pPa)
}

// complete fills in every property from validated t, W and p.
func complete(tC, w, pPa float64) (State, error) {
	pws := satVapPressure(tC)
	if pws >= pPa {
		return State{}, outOfRange(inPressure, pPa, "at or below the saturation pressure at this dry bulb (water boils)")
	}
	pw := pPa * w / (MolarMassRatio + w)
	rh := pw / pws
	if rh > 1+rhSlack {
		return State{}, outOfRange(inHumRatio, w, "above saturation at this dry bulb (RH over 100 %)")
	}
	rh = math.Min(rh, 1)
	s := State{
		DryBulbC:           tC,
		HumRatio:           w,
		PressurePa:         pPa,
		RH:                 rh,
		VapPressurePa:      pw,
		EnthalpyKJPerKg:    enthalpy(tC, w),
		VolumeM3PerKg:      specificVolume(tC, w, pPa),
		DegreeOfSaturation: w / (MolarMassRatio * pws / (pPa - pws)),
	}
	s.DensityKgPerM3 = (1 + w) / s.VolumeM3PerKg
	if pw < satPressureMin {
		return State{}, outOfRange(inHumRatio, w, "too dry: the dew point would be below -100 °C")
	}
	td, err := dewPoint(pw)
	if err != nil {
		return State{}, err
	}
	s.DewPointC = math.Min(td, tC)
	s.WetBulbC, err = wetBulb(&wbSI, tC, w, pPa, s.DewPointC)
	if err != nil {
		return State{}, err
	}
	return s, nil
}
