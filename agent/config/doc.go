// Package config is dewline's configuration: one YAML file, used by every
// command.
//
// Parse decodes it strictly (unknown keys are errors, with the nearest
// known key as the fix), fills in documented defaults and validates it,
// returning every problem at once with its line and a fix (ConfigError).
// Load reads a file; LoadPartial keeps the valid air handlers and reports
// the broken ones, for the agent. Units are parsed once here: quantities in
// the file carry their unit ("13 °C", "55 F", "400 m"), and the engine
// parameters of an air handler come out in SI (Config.Unit). Secrets never
// live in the file: the InfluxDB token and the webhook and HTTP secrets
// come from environment variables (or a file named in one) and never reach
// logs.
//
// Parsing has no side effects: config opens no store, starts nothing and
// never logs. It imports metrics, psychro and ingest/csvfile (for the
// export reading options) only.
package config
