// Package compare measures the change of an air handler's energy between a
// period before a change of its sequence and a period after it, from the
// hourly records the engine computed (metrics.Record).
//
// The method is the bin method on the entering dew point (bins.go).
//
// Units: SI throughout (kWh, kg, °C); money in the site's currency.
//
// compare does no I/O, reads no clock and never logs: the caller reads the
// hours from a store and gives them to an Analysis (New, Add, Result), so
// every figure can be tested from records built by hand.
package compare
