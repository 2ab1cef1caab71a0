// Package ingest holds dewline's adapters to outside data: reading trend
// points from InfluxDB and CSV exports, the embedded store, and the
// alignment of trend samples onto a regular time grid.
//
// Units: values leave this package in SI (°C, Pa, m, m³/s, kW, kWh, kg,
// humidity ratio kg/kg, RH and positions as fractions 0..1); the unit table
// is psychro's (psychro.LookupUnit).
//
// ingest is the only package that imports the InfluxDB client.
package ingest
