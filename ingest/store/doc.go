// Package store declares, once, what dewline keeps and reads in a store:
// trend series (SeriesReader, SampleWriter), the results of an analysis
// (ResultWriter), the agent's results, alert rule states, checkpoints and
// webhook events (AgentStore), and the dashboard's read side (Results,
// dashboards.Results). Store gathers them for one opened backend.
//
// Each backend implements them beside its own schema: ingest/embedded (one
// SQLite file, the default) and ingest/influx (InfluxDB, with the webhook
// queue in a local embedded file). cmd/dewline chooses the backend once,
// from the configuration, in its one wiring function; nothing else branches
// on the kind of store.
//
// The package holds no implementation: it imports no backend, does no I/O
// of its own and never logs, so the runner and the dashboards can depend on
// it. Adopt, "dewline adopt", works through the UntaggedAdopter interface
// and prints to the writer it is handed.
package store
