#!/usr/bin/env bash
# Runs dewline's benchmarks. The psychro benchmarks named ...VsPsychrolib also
# time npm psychrolib on the same state grid in the same run and report the
# ratio (x_psychrolib). Then the dashboard's overview of 200 air handlers x
# 30 days on the embedded store (filling the store takes about a minute) and
# the demo's import and analysis, each beside its reference. Last the
# agent on a local InfluxDB 1.8 (started here, like test.sh, and stopped
# at the end): the hourly run of 1,000 air handlers and its split over 3
# replicas, and the backfill of 10 air handlers over 10 and 30 days, each
# beside the store's bulk read of the same samples (x_bulk), three times
# (DEWLINE_BENCH_COUNT); writing their trend data takes about half a
# minute, a whole round about ten. Extra arguments go to `go test` (e.g.
# -benchtime=3s).
set -euo pipefail
ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd -P)
cd "$ROOT"
command -v go >/dev/null || PATH=/usr/local/go/bin:$PATH
CACHE=${DEWLINE_CACHE:-${XDG_CACHE_HOME:-$HOME/.cache}/dewline}
if [[ ! -f $CACHE/npm/node_modules/psychrolib/psychrolib.js ]]; then
	mkdir -p "$CACHE/npm"
	npm install --prefix "$CACHE/npm" --no-audit --no-fund --loglevel=error psychrolib@1.1.1 >&2
fi
export DEWLINE_PSYCHROLIB=$CACHE/npm/node_modules/psychrolib
go test -run '^$' -bench . -benchmem "$@" ./psychro/...
go test -run '^$' -bench 'Overview_Month|BenchmarkDemo' -benchtime 3x "$@" ./cmd/dewline/

# The agent against a throwaway InfluxDB server.
"$ROOT/deploy/dev/influxdb.sh" build
TMP_DIR=$(mktemp -d "${TMPDIR:-/tmp}/dewline-bench.XXXXXX")
trap '"$ROOT/deploy/dev/influxdb.sh" stop "$TMP_DIR" || true; rm -rf "$TMP_DIR"' EXIT
while IFS= read -r line; do
	case $line in
	DEWLINE_INFLUX_URL=* | DEWLINE_INFLUX_DB=*) export "${line?}" ;;
	esac
done < <("$ROOT/deploy/dev/influxdb.sh" start "$TMP_DIR")
[[ -n ${DEWLINE_INFLUX_URL:-} ]] || { echo "bench.sh: influxdb.sh start printed no connection settings" >&2; exit 1; }
go test -run '^$' -bench 'AgentHourly|AgentBackfill' -benchtime 1x -count "${DEWLINE_BENCH_COUNT:-3}" -benchmem -timeout 2h "$@" ./cmd/dewline/
