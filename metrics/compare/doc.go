// Package compare measures the change of an air handler's energy between a
// period before a change of its sequence and a period after it, from the
// hourly records the engine computed (metrics.Record).
//
// The headline is the avoided energy of a baseline model, in the manner of
// ASHRAE Guideline 14 and IPMVP Option B (retrofit isolation): per unit
// and quantity (reheat, cooling input, water removed, cost), a change-point
// regression of the before period's hours on the entering state times the
// airflow, with occupied and unoccupied hours of the week (model.go),
// projected onto the after period's hours (baseline.go). Its fit is judged
// by Guideline 14's CV(RMSE), NMBE and R² (stats.go) and its avoided
// energy carries the guideline's savings uncertainty with the correction
// for autocorrelated hourly residuals, beside the regression's own
// prediction interval; the larger decides whether a change is significant.
// The supply dew point in both periods says whether the humidity target
// held. The bin method on the entering dew point (bins.go) stays as a
// transparent check.
//
// Units: SI throughout (kWh, kg, °C); money in the site's currency.
//
// compare does no I/O, reads no clock and never logs: the caller reads the
// hours from a store and gives them to an Analysis (New, Add, Result), so
// every figure can be tested from records built by hand.
package compare
