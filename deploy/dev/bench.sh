#!/usr/bin/env bash
# Runs dewline's benchmarks. The psychro benchmarks named ...VsPsychrolib also
# time npm psychrolib on the same state grid in the same run and report the
# ratio (x_psychrolib). Then the dashboard's overview of 200 air handlers x
# 30 days on the embedded store (filling the store takes about a minute) and
# the demo's import and analysis, each beside its reference. Extra arguments
# go to `go test` (e.g. -benchtime=3s).
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
