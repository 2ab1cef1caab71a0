#!/usr/bin/env bash
# The one test command. On a fresh machine it installs and starts everything the
# tests need, then runs them all; a second run reuses the cached builds.
#
#   deploy/dev/test.sh                         everything (build, vet, tests, fuzz)
#   deploy/dev/test.sh -run Influx ./ingest/... go test flags and/or packages
#
# Arguments are handed to `go test` after -race -count=1. When they name no
# package, ./... is tested. The extra checks (fuzzing) run only on a full run.
#
# Environment:
#   DEWLINE_CACHE      where builds and npm packages are cached
#                      (default ${XDG_CACHE_HOME:-$HOME/.cache}/dewline)
#   DEWLINE_FUZZ_TIME  time per fuzz target (default 10s)
#   DEWLINE_KEEP_TMP=1 keep the server's temporary folder for inspection
set -euo pipefail

ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd -P)
cd "$ROOT"

# CI may hand over a bare environment: go and npm need HOME, and go may not be
# on PATH yet where it was just unpacked.
[[ -n ${HOME:-} ]] || export HOME=~
command -v go >/dev/null || PATH=/usr/local/go/bin:$PATH

export DEWLINE_CACHE=${DEWLINE_CACHE:-${XDG_CACHE_HOME:-$HOME/.cache}/dewline}
CACHE=$DEWLINE_CACHE
PSYCHROLIB_VERSION=1.1.1
FUZZ_TIME=${DEWLINE_FUZZ_TIME:-10s}

# ---------------------------------------------------------------------------
# Extra checks. Both hooks run on a full run only (no arguments given).
#
# FUZZ_TARGETS: short fuzz runs, one "PACKAGE FuzzName" entry per target, e.g.
#   "./psychro FuzzDewPoint"
# Each runs as: go test -run='^$' -fuzz='^FuzzName$' -fuzztime=$FUZZ_TIME PACKAGE
FUZZ_TARGETS=(
	"./psychro FuzzState"
	"./agent/config FuzzParseConfig"
	"./ingest/csvfile FuzzReader"
	"./ingest/csvfile FuzzReaderLines"
	"./ingest/influx FuzzFluxString"
)

# setup_extras: set-up that runs just before `go test`: Debian's chromium for
# the browser tests and `report --pdf` (driven over its DevTools pipe, no
# chromium-driver), and poppler-utils, whose pdfinfo the PDF test uses when
# present; installed with apt-get when missing and root or sudo is at hand.
setup_extras() {
	local chromium=/usr/bin/chromium
	local -a need=()
	[[ -x $chromium ]] || need+=(chromium)
	command -v pdfinfo >/dev/null || need+=(poppler-utils)
	if ((${#need[@]} > 0)); then
		local -a as_root=()
		if ((EUID != 0)) && command -v sudo >/dev/null && sudo -n true 2>/dev/null; then
			as_root=(sudo -n)
		fi
		if ((EUID == 0 || ${#as_root[@]} > 0)); then
			info "installing Debian's ${need[*]} with apt-get (log: $CACHE/apt-extras.log)"
			mkdir -p "$CACHE"
			# Wait for another apt/dpkg to finish rather than fail on its lock.
			local -a apt=("${as_root[@]}" env DEBIAN_FRONTEND=noninteractive apt-get -qq -o DPkg::Lock::Timeout=300)
			if ! { "${apt[@]}" update && "${apt[@]}" install -y "${need[@]}"; } >"$CACHE/apt-extras.log" 2>&1; then
				tail -n 20 "$CACHE/apt-extras.log" | sed 's/^/    apt-get: /' >&2
			fi
		fi
	fi
	if [[ -x $chromium ]]; then
		export DEWLINE_CHROMIUM=$chromium
		info "DEWLINE_CHROMIUM=$DEWLINE_CHROMIUM ($("$chromium" --version 2>/dev/null || echo "version unknown"))"
	elif [[ ${CI:-} == true ]]; then
		fail "Chromium is missing at $chromium and could not be installed; the browser tests need it under CI. Run as root (or with passwordless sudo): apt-get update && apt-get install chromium"
	else
		info "note: no Chromium at $chromium (installing it needs root or passwordless sudo); the browser tests will skip."
		info "      Install it with: sudo apt-get install chromium, or set DEWLINE_CHROMIUM to a Chromium binary."
	fi
}
# ---------------------------------------------------------------------------

START=$SECONDS
step() { printf '\n==> [%3ds] %s\n' "$((SECONDS - START))" "$*" >&2; }
info() { printf '    %s\n' "$*" >&2; }
fail() { printf '\n==> FAILED: %s\n' "$*" >&2; exit 1; }

TMP_DIR=
cleanup() {
	local rc=$?
	trap - EXIT INT TERM
	if [[ -n $TMP_DIR && -d $TMP_DIR ]]; then
		"$ROOT/deploy/dev/influxdb.sh" stop "$TMP_DIR" || rc=1
		if [[ ${DEWLINE_KEEP_TMP:-} == 1 ]]; then
			info "kept $TMP_DIR"
		else
			rm -rf "$TMP_DIR"
		fi
	fi
	if [[ -n ${DEWLINE_ARTIFACTS:-} ]] && compgen -G "$DEWLINE_ARTIFACTS/*/*" >/dev/null; then
		info "test artifacts (browser screenshots): $DEWLINE_ARTIFACTS"
		find "$DEWLINE_ARTIFACTS" -type f | sort | sed 's/^/      /' >&2
	fi
	if ((rc == 0)); then
		step "all checks passed"
	else
		printf '\n==> [%3ds] test run failed (exit %d)\n' "$((SECONDS - START))" "$rc" >&2
	fi
	exit "$rc"
}
trap cleanup EXIT
# Screenshots and other artifacts of the tests, kept after the run.
if [[ -z ${DEWLINE_ARTIFACTS:-} ]]; then
	DEWLINE_ARTIFACTS=$(mktemp -d "${TMPDIR:-/tmp}/dewline-artifacts.XXXXXX")
fi
export DEWLINE_ARTIFACTS
trap 'exit 130' INT
trap 'exit 143' TERM

# Decide whether the arguments name packages; flag values such as the
# pattern after -run do not look like package paths.
names_packages() {
	local a
	for a in "$@"; do
		case $a in
		-*) ;;
		. | ./* | ../* | all | std | github.com/* | *...*) return 0 ;;
		esac
	done
	return 1
}

full_run=true
(($# == 0)) || full_run=false

command -v go >/dev/null || fail "go not found on PATH (nor in /usr/local/go/bin)"
step "toolchain: $(go version)"

step "go build ./..."
go build ./... || fail "go build"

step "go vet ./..."
go vet ./... || fail "go vet"

# staticcheck, pinned: unused code, suspicious constructs, simplifications.
STATICCHECK=honnef.co/go/tools/cmd/staticcheck@v0.8.2
step "staticcheck ./... ($STATICCHECK)"
go run "$STATICCHECK" ./... || fail "staticcheck"

step "InfluxDB server (build is cached in $CACHE/bin)"
"$ROOT/deploy/dev/influxdb.sh" build || fail "building influxd"
TMP_DIR=$(mktemp -d "${TMPDIR:-/tmp}/dewline-test.XXXXXX")
influx_env=$("$ROOT/deploy/dev/influxdb.sh" start "$TMP_DIR") || fail "starting influxd"
while IFS= read -r line; do
	case $line in
	DEWLINE_INFLUX_URL=* | DEWLINE_INFLUX_DB=*) export "${line?}" ;;
	esac
done <<<"$influx_env"
[[ -n ${DEWLINE_INFLUX_URL:-} && -n ${DEWLINE_INFLUX_DB:-} ]] || fail "influxdb.sh start printed no connection settings"
info "DEWLINE_INFLUX_URL=$DEWLINE_INFLUX_URL DEWLINE_INFLUX_DB=$DEWLINE_INFLUX_DB"

step "psychrolib@$PSYCHROLIB_VERSION (reference implementation for cross-checks)"
psychro_dir=$CACHE/npm/node_modules/psychrolib
if ! grep -qs "\"version\": *\"$PSYCHROLIB_VERSION\"" "$psychro_dir/package.json"; then
	command -v npm >/dev/null || fail "npm not found on PATH"
	mkdir -p "$CACHE/npm"
	npm install --prefix "$CACHE/npm" --no-audit --no-fund --loglevel=error \
		"psychrolib@$PSYCHROLIB_VERSION" >&2 || fail "npm install psychrolib@$PSYCHROLIB_VERSION"
else
	info "using cached $psychro_dir"
fi
# The package keeps its JavaScript under src/js in some releases: point at the
# folder that actually holds psychrolib.js.
psychro_js=$(find "$psychro_dir" -name psychrolib.js -not -path '*/node_modules/*/node_modules/*' -print -quit)
[[ -n $psychro_js ]] || fail "psychrolib.js not found under $psychro_dir"
DEWLINE_PSYCHROLIB=$(dirname "$psychro_js")
export DEWLINE_PSYCHROLIB
info "DEWLINE_PSYCHROLIB=$DEWLINE_PSYCHROLIB"

if $full_run; then
	step "extra set-up"
	setup_extras || fail "extra set-up"
fi

# go test's own 10-minute limit per package is too short for cmd/dewline
# with -race on a loaded 2-core machine; a -timeout given here wins.
test_args=(-race -count=1 -timeout 30m "$@")
names_packages "$@" || test_args+=(./...)
step "go test ${test_args[*]}"
go test "${test_args[@]}" || fail "go test"

if $full_run && ((${#FUZZ_TARGETS[@]} > 0)); then
	for target in "${FUZZ_TARGETS[@]}"; do
		read -r pkg name <<<"$target"
		step "fuzz $name in $pkg for $FUZZ_TIME"
		# Go's fuzzing coordinator can give up on a worker starved by a
		# loaded machine ("context deadline exceeded") without any failing
		# input; that, and only that, is retried once.
		log=$(mktemp)
		if ! go test -run='^$' -fuzz="^${name}\$" -fuzztime="$FUZZ_TIME" "$pkg" 2>&1 | tee "$log"; then
			if grep -q 'context deadline exceeded' "$log" && ! grep -q 'Failing input written' "$log"; then
				info "fuzz $name: the fuzzing engine timed out a worker without a failing input; running it again"
				go test -run='^$' -fuzz="^${name}\$" -fuzztime="$FUZZ_TIME" "$pkg" || { rm -f "$log"; fail "fuzz $name"; }
			else
				rm -f "$log"
				fail "fuzz $name"
			fi
		fi
		rm -f "$log"
	done
fi
