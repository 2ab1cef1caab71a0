// Package agent holds dewline's configuration and, as it grows, the run
// loop: schedule, checkpoints, backfill, write-back and notification.
//
// Configuration is one YAML file. Parse decodes it strictly (unknown keys are
// errors), fills in documented defaults and validates it, returning every
// problem at once with its line and a fix (ConfigError). Secrets never live
// in the file: the InfluxDB token comes from an environment variable or a
// file named in it, and never reaches logs.
//
// agent imports metrics and psychro only; the concrete stores in ingest are
// plugged in by cmd/dewline through interfaces declared here.
package agent
