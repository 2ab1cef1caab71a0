// Package grafana defines dewline's Grafana dashboards for the results the
// agent writes to InfluxDB (measurements dewline_hourly and dewline_alert),
// once, in Go, with the Apache-2.0 Grafana Foundation SDK builders; the
// JSON files under dashboards/ are generated from it:
//
//	go generate ./deploy/grafana
//
// Three dashboards (an overview of the air handlers by money at stake, one
// air handler's hours, and the alerts), each in two flavours: InfluxQL
// (dashboards/influxql, for an InfluxDB 1.x data source) and Flux
// (dashboards/flux, for InfluxDB 2.x, Cloud, or 1.8 with Flux enabled).
// provisioning/ holds Grafana's provisioning files that load them.
//
// Every query of every panel is tested against a real InfluxDB server
// holding an analysis's results, and must return what dewline's own JSON
// API returns for the same period (cmd/dewline/grafana_test.go).
//
// Nothing here imports or vendors Grafana itself; dewline's program does
// not import this package.
package grafana

//go:generate go run ./gen
