// Package ingest turns trend data into what the engine reads: it aligns
// samples onto a regular time grid (Aligner) and cuts them into
// metrics.Hour values, from a store (StoreHours, over a SeriesReader) or
// from export records (RecordHours). It also indexes the configured points
// by series name (PointIndex), inspects what a series holds for "dewline
// check" (PointCheck), and writes hourly records as CSV or JSON
// (HourlyWriter).
//
// Its subpackages are the adapters to outside data: csvfile (CSV trend
// exports), store (the interfaces every store implements), embedded (the
// default store, one SQLite file), influx (InfluxDB, the only importer of
// the InfluxDB client), draft (a configuration proposed from what a
// building logs) and outfile (every output file written whole or not at
// all).
//
// Units: values leave this package in SI (°C, Pa, m, m³/s, kW, kWh, kg,
// humidity ratio kg/kg, RH and positions as fractions 0..1); the unit table
// is psychro's (psychro.LookupUnit). ingest does no I/O of its own beyond
// the writers and readers it is handed, and never logs.
package ingest
