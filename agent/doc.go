// Package agent is dewline's run loop: the Analyzer computes hours from an
// HourSource; the Runner takes every owned air handler from its checkpoint
// to the last complete hour (slots, backfill, lookback) and commits records,
// alert states, events and the checkpoint to a store.ResultStore;
// Runner.Serve runs it on the configured cron schedule (on an injectable
// SchedulerClock), skipping a tick while a run is in flight; Shard splits a
// portfolio between replicas; a ResultPipe writes an analysis's records to
// a file and a store while the next hours are computed. CheckPoints
// reports configured points the store does not hold; WriteSummaries writes
// an analysis as a ranked table.
//
//	cron tick --> Runner.RunOnce(slot = last complete UTC hour)
//	  per air handler: Checkpoint --> HourSource --> metrics.Compute
//	                   --> metrics.Evaluate --> Commit (atomic, checkpoint last)
//
// The pieces around it have their own packages: agent/config (the
// configuration), agent/server (the HTTP endpoint), agent/telemetry
// (Prometheus metrics and readiness) and agent/webhook (alert delivery).
//
// agent imports metrics, psychro, agent/config and the store interfaces in
// ingest/store, never a store implementation: cmd/dewline plugs the
// concrete stores in.
package agent
