// Package ingest holds dewline's adapters to outside data: reading trend
// points from InfluxDB and CSV exports, the embedded store, and the
// conversion of every unit a controls system may log into the SI units the
// rest of dewline works in.
//
// Units: values leave this package in SI (°C, Pa, m, m³/s, kW, kWh, kg,
// humidity ratio kg/kg, RH and positions as fractions 0..1). Conversions
// live in units.go; psychro holds the conversion constants.
//
// ingest is the only package that imports the InfluxDB client.
package ingest
