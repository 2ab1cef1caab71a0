// Package metrics turns aligned air-handler trend data into hourly
// dehumidification and reheat figures and evaluates alert rules over them.
// It also defines the vocabulary the other packages share: the roles a trend
// point can play on an air handler, where a point lives (PointRef), and the
// physical range each role may take.
//
// Units: SI throughout (°C, fractions for RH and positions, m³/s, kW, kWh, kg).
//
// metrics does no I/O, reads no clock and never logs: time comes in as data,
// so every function can be tested exhaustively and benchmarked alone.
package metrics
