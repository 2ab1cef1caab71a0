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

# --- Analysis and embedded store speed (cmd/dewline), each beside its
# reference in the same run: the analysis of an air handler-year of
# one-minute data from its CSV export against parsing the export (x_parse,
# goal 1.5; cpu_x_parse compares processor times; also the whole command
# writing its hourly CSV), the bytes and allocations
# per hour of a month and of the year (flat memory: the year's must not
# exceed the month's), the embedded store's import of the year against the
# parse (x_parse, goal 2) and the analysis from the store against reading
# the samples back (x_read, goal 1.5). DEWLINE_PERF_COUNT runs (default 5;
# the store's import of the year takes a minute or more each).
PERF_OUT=$(mktemp "${TMPDIR:-/tmp}/dewline-perf.XXXXXX")
go test -run '^$' -bench 'AnalyzeYear|AnalyzeMemory|EmbeddedYear' -benchtime 1x -count "${DEWLINE_PERF_COUNT:-5}" \
	-benchmem -timeout 2h "$@" ./cmd/dewline/ | tee "$PERF_OUT"
awk '
	function med(k,   n, i, j, t, a) {
		n = split(vals[k], a, " ")
		for (i = 2; i <= n; i++) for (j = i; j > 1 && a[j-1] + 0 > a[j] + 0; j--) { t = a[j]; a[j] = a[j-1]; a[j-1] = t }
		return n ? a[int((n + 1) / 2)] : "-"
	}
	/^Benchmark/ {
		name = $1; sub(/-[0-9]+$/, "", name)
		vals[name " ns/op"] = vals[name " ns/op"] " " $3
		for (i = 4; i < NF; i++) if ($(i+1) ~ /^(x_|cpu_x_|B\/hour|allocs\/hour|MB_)/) vals[name " " $(i+1)] = vals[name " " $(i+1)] " " $i
	}
	END {
		print "\nmedians (ratio | its reference)"
		printf "analyze year from CSV:  x_parse %s, cpu_x_parse %s | parse %s ns/op\n", med("BenchmarkAnalyzeYear/analyze x_parse"), med("BenchmarkAnalyzeYear/analyze cpu_x_parse"), med("BenchmarkAnalyzeYear/parse ns/op")
		printf "analyze command (CSV):  x_parse %s, cpu_x_parse %s\n", med("BenchmarkAnalyzeYear/command x_parse"), med("BenchmarkAnalyzeYear/command cpu_x_parse")
		printf "memory per hour:        month %s B, %s allocs | year %s B, %s allocs\n", med("BenchmarkAnalyzeMemory/month B/hour"), med("BenchmarkAnalyzeMemory/month allocs/hour"), med("BenchmarkAnalyzeMemory/year B/hour"), med("BenchmarkAnalyzeMemory/year allocs/hour")
		printf "command memory:         month %s B, %s allocs | year %s B, %s allocs\n", med("BenchmarkAnalyzeMemory/command_month B/hour"), med("BenchmarkAnalyzeMemory/command_month allocs/hour"), med("BenchmarkAnalyzeMemory/command_year B/hour"), med("BenchmarkAnalyzeMemory/command_year allocs/hour")
		printf "embedded import:        x_parse %s, cpu_x_parse %s, file %s MB | parse %s ns/op\n", med("BenchmarkEmbeddedYear/import x_parse"), med("BenchmarkEmbeddedYear/import cpu_x_parse"), med("BenchmarkEmbeddedYear/import MB_file"), med("BenchmarkEmbeddedYear/parse ns/op")
		printf "analyze from embedded:  x_read %s, cpu_x_read %s | read back %s ns/op\n", med("BenchmarkEmbeddedYear/analyze x_read"), med("BenchmarkEmbeddedYear/analyze cpu_x_read"), med("BenchmarkEmbeddedYear/read ns/op")
	}' "$PERF_OUT"
rm -f "$PERF_OUT"
# --- end of the analysis and embedded store block.
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
