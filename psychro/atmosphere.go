package psychro

import "math"

// PressureFromAltitude returns the standard-atmosphere barometric pressure in
// Pa at altitude altM metres (ASHRAE ch. 1 eq. 3:
// p = 101.325 (1 - 2.25577e-5 Z)^5.2559 kPa), valid in the troposphere.
func PressureFromAltitude(altM float64) (float64, error) {
	if !finite(altM) {
		return 0, notFinite(inAltitude, altM)
	}
	if altM < MinAltitudeM || altM > MaxAltitudeM {
		return 0, outOfRange(inAltitude, altM, "outside -5000..11000 m, where eq. 3 holds")
	}
	return StandardPressurePa * math.Pow(1-2.25577e-5*altM, 5.2559), nil
}

// TemperatureFromAltitude returns the standard-atmosphere temperature in °C
// at altitude altM metres (ASHRAE ch. 1 eq. 4: t = 15 - 0.0065 Z).
func TemperatureFromAltitude(altM float64) (float64, error) {
	if !finite(altM) {
		return 0, notFinite(inAltitude, altM)
	}
	if altM < MinAltitudeM || altM > MaxAltitudeM {
		return 0, outOfRange(inAltitude, altM, "outside -5000..11000 m, where eq. 4 holds")
	}
	return 15 - 0.0065*altM, nil
}

// SeaLevelPressure reduces a station pressure stationPa measured at altM
// metres with air temperature tC to sea level, with the hypsometric equation
// over an air column whose mean temperature follows a 6.5 K/km lapse rate
// (Hess, Introduction to Theoretical Meteorology, 1959, §6.5; Stull,
// Meteorology for Scientists and Engineers, 2000, ch. 1).
func SeaLevelPressure(stationPa, altM, tC float64) (float64, error) {
	if err := checkPressure(stationPa); err != nil {
		return 0, err
	}
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	if !finite(altM) {
		return 0, notFinite(inAltitude, altM)
	}
	return stationPa * math.Exp(altM/scaleHeightM(altM, tC)), nil
}

// StationPressure is the inverse of SeaLevelPressure.
func StationPressure(seaLevelPa, altM, tC float64) (float64, error) {
	if err := checkPressure(seaLevelPa); err != nil {
		return 0, err
	}
	if err := checkTemp(inDryBulb, tC); err != nil {
		return 0, err
	}
	if !finite(altM) {
		return 0, notFinite(inAltitude, altM)
	}
	return seaLevelPa / math.Exp(altM/scaleHeightM(altM, tC)), nil
}

// scaleHeightM is R T_column / g with the column's mean temperature.
func scaleHeightM(altM, tC float64) float64 {
	tColumn := tC + 0.0065*altM/2
	return 287.055 * (tColumn + ZeroCelsiusK) / 9.807
}
