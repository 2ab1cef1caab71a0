// Package deploy holds no code: it is the home of the files that install and
// run dewline, and of the tests that keep them from going stale.
//
//	dev/         local InfluxDB build-and-start script, the test and benchmark scripts
//	examples/    annotated configurations (IP, SI, InfluxDB)
//	systemd/     a hardened service unit, its secrets file example, its user
//	kubernetes/  a StatefulSet of sharded agents with its ConfigMap, Secret and Service
//	docker/      a multi-stage image: static binary on a distroless base
//	demo/        the invented demo building ("dewline demo"): its physics, logs and configuration
//	testkit/     what the tests share: the rule for a missing service, psychrolib through node
//	grafana/     Grafana dashboards generated from a Go definition, and their provisioning
//
// The tests parse every file here against the code it configures: each
// example configuration and the one inside the ConfigMap load with
// config.Load or config.Parse, with their secrets' environment
// variables set; each command line (the unit's ExecStart, the StatefulSet's
// args) is checked against the flags a freshly built dewline binary lists;
// probes, ports, shard arguments, secret references, hardening settings and
// the image's user and entry point are checked against each other. They
// need the Go toolchain only: no cluster, no systemd, no container engine.
// imports_test.go enforces the import rules of DEVELOPERS.md on the whole
// module with go list.
//
// Only demo is imported by the program (by "dewline demo"); testkit is
// imported by tests only. The package must never
// hold secrets: the Secret manifest and the systemd environment file carry
// empty placeholders only.
package deploy
