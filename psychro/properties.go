package psychro

// Enthalpy returns the moist-air enthalpy in kJ per kg of dry air at tC with
// humidity ratio w (ASHRAE ch. 1 eq. 32; datum: dry air and liquid water at 0 °C).
func Enthalpy(tC, w float64) (float64, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	return enthalpy(tC, w), nil
}

func enthalpy(tC, w float64) float64 { return CpDryAir*tC + w*(HgZero+CpVapour*tC) }

// DryBulbFromEnthalpy returns the dry bulb (°C) of moist air with enthalpy
// hKJkg (kJ/kg dry air) and humidity ratio w (eq. 32 solved for t).
func DryBulbFromEnthalpy(hKJkg, w float64) (float64, error) {
	if !finite(hKJkg) {
		return 0, notFinite(inEnthalpy, hKJkg)
	}
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	t := (hKJkg - HgZero*w) / (CpDryAir + CpVapour*w)
	if err := checkTemp(inDryBulb, t); err != nil {
		return 0, outOfRange(inEnthalpy, hKJkg, "gives a dry bulb outside -100..200 °C")
	}
	return t, nil
}

// HumRatioFromEnthalpy returns W (kg/kg) of moist air at tC with enthalpy
// hKJkg (eq. 32 solved for W). A negative result is an error: no moist air
// at that temperature has so little enthalpy.
func HumRatioFromEnthalpy(hKJkg, tC float64) (float64, error) {
	if !finite(hKJkg) {
		return 0, notFinite(inEnthalpy, hKJkg)
	}
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	w := (hKJkg - CpDryAir*tC) / (HgZero + CpVapour*tC)
	if w < 0 {
		return 0, outOfRange(inEnthalpy, hKJkg, "below the enthalpy of dry air at this temperature")
	}
	return w, nil
}

// SpecificVolume returns the moist-air specific volume in m³ per kg of dry
// air (eq. 26: v = R_da T (1 + 1.607858 W) / p).
func SpecificVolume(tC, w, pPa float64) (float64, error) {
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	if err := checkPressure(pPa); err != nil {
		return 0, err
	}
	return specificVolume(tC, w, pPa), nil
}

func specificVolume(tC, w, pPa float64) float64 {
	return RDryAir * (tC + ZeroCelsiusK) * (1 + 1.607858*w) / pPa
}

// Density returns the moist-air density in kg of moist air per m³,
// ρ = (1 + W) / v (ASHRAE ch. 1 definition of moist-air density, with eq. 26).
func Density(tC, w, pPa float64) (float64, error) {
	v, err := SpecificVolume(tC, w, pPa)
	if err != nil {
		return 0, err
	}
	return (1 + w) / v, nil
}

// MoistSpecificHeat returns the specific heat of moist air in kJ per kg of
// dry air per kelvin, c_p = 1.006 + 1.86 W (the derivative of eq. 32 in t).
func MoistSpecificHeat(w float64) (float64, error) {
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	return CpDryAir + CpVapour*w, nil
}

// CondensateEnthalpy returns the enthalpy in kJ/kg of the water that leaves
// a coil at tC: liquid, h_w = 4.186 t, at or above 0 °C; frost,
// h = -333.4 + 2.1 t, below (the liquid and ice terms of eqs. 33 and 35).
func CondensateEnthalpy(tC float64) (float64, error) {
	if err := checkTemp(inTemperature, tC); err != nil {
		return 0, err
	}
	return condensateEnthalpy(tC), nil
}

func condensateEnthalpy(tC float64) float64 {
	if tC >= 0 {
		return CpLiquidWater * tC
	}
	return -HeatOfFusion + CpIce*tC
}
