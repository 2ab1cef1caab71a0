// Package psychro computes moist-air properties and the coil and reheat
// processes of an air handler from the ASHRAE Handbook - Fundamentals (2017),
// chapter 1 ("Psychrometrics").
//
// # Units
//
// Everything inside is SI: temperatures in °C, pressures in Pa, humidity
// ratio W in kg of water per kg of dry air, enthalpy in kJ per kg of dry air,
// specific volume in m³ per kg of dry air, relative humidity as a fraction
// 0..1 (the names say so: rhFrac). IP values appear only at the edges, through
// the conversion helpers in units.go and the StateIP view in ip.go.
//
// # Formulation
//
// Saturation pressure is the Hyland-Wexler correlation (eq. 5 over ice, eq. 6
// over liquid water), switched at the triple point of water (0.01 °C), where
// both sides meet, so that the inverse (dew point) is continuous. Humidity
// ratio, enthalpy and specific volume use the ideal-gas relations of eqs. 20,
// 22, 24, 26 and 32. These fall below the handbook's tabulated Table 2 values
// (which include the enhancement factor) by about 0.4-0.6 % in W_s between 0
// and 50 °C; that is the handbook's own stated accuracy of the simple
// formulas, and it is far below the uncertainty of field humidity sensors.
// Dew point is found by inverting eqs. 5/6 with Newton's method on ln p_ws;
// wet bulb by solving eq. 33 (eq. 35 when the wet bulb is below freezing) with
// a safeguarded Newton iteration inside the bracket [dew point, dry bulb].
//
// Valid input: dry bulb -100..200 °C (the range of eqs. 5 and 6), relative
// humidity 0..1, pressure above the vapour pressure and below 10 MPa.
//
// # What it must never do
//
// psychro does no I/O, reads no clock and never logs. Impossible input (NaN
// or infinite values, RH outside 0..1, temperatures outside the range of the
// formulas, a pressure at or below the vapour pressure, a wet bulb above the
// dry bulb) returns an *InputError naming the input and the reason; no
// function returns a silent NaN. Hot paths do not allocate on success.
package psychro
