// Package airstate answers "dewline air": it reads a dry bulb with one more
// field reading (relative humidity, dew point, wet bulb or humidity ratio)
// and an altitude or a barometric pressure, each typed with its unit, into
// a psychro.State (Resolve), and lays the state out as a table in SI or IP
// units (Table) or as JSON with the units in the key names (JSON).
//
// Like psychro it does no I/O: it returns text and bytes for the command
// to print.
package airstate
