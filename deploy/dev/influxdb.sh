#!/usr/bin/env bash
# Local InfluxDB 1.8 server for tests and development, built from Go source so
# that nothing but the Go toolchain and the module proxy is needed.
#
#   influxdb.sh build        build influxd into the cache (skipped when present)
#   influxdb.sh start DIR    start a throwaway server with its data under DIR;
#                            prints DEWLINE_INFLUX_URL=... and DEWLINE_INFLUX_DB=...
#   influxdb.sh stop DIR     stop the server started in DIR
#
# Progress goes to stderr; stdout carries only the KEY=VALUE lines of `start`.
set -euo pipefail

INFLUXDB_VERSION=v1.8.3
INFLUXDB_PKG=github.com/influxdata/influxdb/cmd/influxd
[[ -n ${HOME:-} ]] || export HOME=~
CACHE=${DEWLINE_CACHE:-${XDG_CACHE_HOME:-$HOME/.cache}/dewline}
INFLUXD=$CACHE/bin/influxd
TEST_DB=${DEWLINE_INFLUX_TEST_DB:-dewline_test}
START_TIMEOUT=${DEWLINE_INFLUX_START_TIMEOUT:-60}

log() { printf 'influxdb: %s\n' "$*" >&2; }
die() { log "error: $*"; exit 1; }

usage() {
	sed -n '2,10p' "$0" | sed 's/^# \{0,1\}//' >&2
	exit 2
}

cmd_build() {
	if [[ -x $INFLUXD ]]; then
		log "using cached $INFLUXD"
		return 0
	fi
	mkdir -p "$CACHE/bin"
	# Two test runs starting at once must not both build, nor see half a binary.
	exec 9>"$CACHE/influxd.build.lock"
	if command -v flock >/dev/null; then
		flock 9
	fi
	if [[ -x $INFLUXD ]]; then
		log "using $INFLUXD (built while waiting)"
		return 0
	fi
	log "building influxd $INFLUXDB_VERSION from source (a few minutes the first time)"
	local tmpbin
	tmpbin=$(mktemp -d "$CACHE/bin.XXXXXX")
	# The server is its own module; run outside ours so our go.mod is not consulted.
	if ! (cd "$tmpbin" && GOBIN=$tmpbin GOFLAGS=-mod=mod go install "$INFLUXDB_PKG@$INFLUXDB_VERSION"); then
		rm -rf "$tmpbin"
		die "go install $INFLUXDB_PKG@$INFLUXDB_VERSION failed"
	fi
	mv -f "$tmpbin/influxd" "$INFLUXD"
	rm -rf "$tmpbin"
	log "built $INFLUXD"
}

# free_port prints a loopback TCP port that nothing listens on right now.
free_port() {
	if command -v python3 >/dev/null; then
		python3 -c 'import socket
s = socket.socket()
s.bind(("127.0.0.1", 0))
print(s.getsockname()[1])
s.close()' && return 0
	fi
	# No python: probe random high ports until one refuses connections.
	local port i
	for ((i = 0; i < 200; i++)); do
		port=$((20000 + RANDOM % 40000))
		if ! (exec 3<>"/dev/tcp/127.0.0.1/$port") 2>/dev/null; then
			echo "$port"
			return 0
		fi
	done
	return 1
}

# http_status METHOD URL [FORM]: prints the HTTP status code, 000 when unreachable.
http_status() {
	local method=$1 url=$2 form=${3-}
	if command -v curl >/dev/null; then
		local args=(-s -o /dev/null -w '%{http_code}' --max-time 5 -X "$method")
		[[ -n $form ]] && args+=(--data-urlencode "$form")
		curl "${args[@]}" "$url" || true
		return 0
	fi
	# Minimal HTTP/1.0 over bash's /dev/tcp for machines without curl.
	local hostport=${url#http://}
	hostport=${hostport%%/*}
	local path=/${url#http://*/}
	local body=
	if [[ -n $form ]]; then
		local k=${form%%=*} v=${form#*=} enc='' c j
		for ((j = 0; j < ${#v}; j++)); do
			c=${v:j:1}
			case $c in
			[a-zA-Z0-9._~-]) enc+=$c ;;
			*) enc+=$(printf '%%%02X' "'$c") ;;
			esac
		done
		body="$k=$enc"
	fi
	local status
	# shellcheck disable=SC2016 # expanded by the inner shell
	status=$(timeout 5 bash -c '
		exec 3<>"/dev/tcp/${1%:*}/${1##*:}" || exit 1
		printf "%s %s HTTP/1.0\r\nHost: %s\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: %d\r\n\r\n%s" \
			"$2" "$3" "$1" "${#4}" "$4" >&3
		read -r _ code _ <&3 && echo "$code"' _ "$hostport" "$method" "$path" "$body" 2>/dev/null) || status=000
	status=${status%$'\r'}
	echo "${status:-000}"
}

# write_config SRC DST DATADIR HTTP_PORT RPC_PORT rewrites the default config.
# Keys missing from the default are added to their section, so the result does
# not depend on which keys a given influxd version prints.
write_config() {
	local src=$1 dst=$2 datadir=$3 http_port=$4 rpc_port=$5
	awk -v datadir="$datadir" -v http_port="$http_port" -v rpc_port="$rpc_port" '
	BEGIN {
		# want[section SUBSEP key] = value; "" is the top level.
		want["", "reporting-disabled"] = "true"
		want["", "bind-address"] = "\"127.0.0.1:" rpc_port "\""
		want["meta", "dir"] = "\"" datadir "/meta\""
		want["data", "dir"] = "\"" datadir "/data\""
		want["data", "wal-dir"] = "\"" datadir "/wal\""
		want["data", "query-log-enabled"] = "false"
		want["http", "bind-address"] = "\"127.0.0.1:" http_port "\""
		want["http", "flux-enabled"] = "true"
		want["http", "log-enabled"] = "false"
		want["http", "auth-enabled"] = "false"
		want["logging", "level"] = "\"warn\""
		want["logging", "suppress-logo"] = "true"
		want["monitor", "store-enabled"] = "false"
		want["continuous_queries", "log-enabled"] = "false"
		sec = ""
	}
	function flush(s,   k, parts) {
		for (k in want) {
			split(k, parts, SUBSEP)
			if (parts[1] == s && !(k in done)) {
				print "  " parts[2] " = " want[k]
				done[k] = 1
			}
		}
	}
	/^[ \t]*\[[^\[]/ {
		flush(sec)
		sec = $0
		sub(/^[ \t]*\[/, "", sec)
		sub(/\].*$/, "", sec)
		seen[sec] = 1
		print
		next
	}
	/^[ \t]*\[\[/ {
		# Array tables (graphite, udp, ...) keep their defaults: all disabled.
		flush(sec)
		sec = "[[array]]"
		print
		next
	}
	/^[ \t]*[A-Za-z0-9_-]+[ \t]*=/ {
		key = $0
		sub(/^[ \t]*/, "", key)
		sub(/[ \t]*=.*$/, "", key)
		if ((sec, key) in want) {
			indent = $0
			sub(/[^ \t].*$/, "", indent)
			print indent key " = " want[sec, key]
			done[sec, key] = 1
			next
		}
	}
	{ print }
	END {
		flush(sec)
		for (k in want) {
			split(k, parts, SUBSEP)
			if (!(k in done) && parts[1] != "" && !(parts[1] in seen)) {
				print ""
				print "[" parts[1] "]"
				seen[parts[1]] = 1
				flush(parts[1])
			}
		}
	}' "$src" >"$dst"
}

log_tail() {
	local logfile=$1
	if [[ -s $logfile ]]; then
		log "last lines of $logfile:"
		tail -n 40 "$logfile" | sed 's/^/    /' >&2
	fi
}

pid_is_influxd() {
	local pid=$1
	[[ -n $pid ]] && kill -0 "$pid" 2>/dev/null || return 1
	# Guard against a recycled pid belonging to something else.
	if [[ -r /proc/$pid/cmdline ]]; then
		tr '\0' ' ' <"/proc/$pid/cmdline" | grep -q influxd
	fi
}

cmd_start() {
	local dir=${1:-}
	[[ -n $dir ]] || usage
	mkdir -p "$dir"
	dir=$(cd "$dir" && pwd -P)
	[[ $dir != *[\"\\]* ]] || die "directory name must not contain quotes or backslashes: $dir"
	[[ -x $INFLUXD ]] || die "$INFLUXD not found; run: $0 build"
	if [[ -f $dir/influxd.pid ]] && pid_is_influxd "$(cat "$dir/influxd.pid")"; then
		die "a server is already running from $dir (pid $(cat "$dir/influxd.pid"))"
	fi

	local datadir logfile="$dir/influxd.log" pidfile="$dir/influxd.pid"
	datadir=$(mktemp -d "$dir/data.XXXXXX")
	local defaults="$dir/influxdb.default.conf" conf="$dir/influxdb.conf"
	# influxd reads INFLUXDB_* variables over the file; keep the file authoritative.
	local -a clean_env=()
	local v
	while IFS= read -r v; do clean_env+=(-u "$v"); done < <(compgen -e | grep '^INFLUXDB_' || true)
	env "${clean_env[@]}" "$INFLUXD" config >"$defaults" 2>/dev/null || die "influxd config failed"

	local attempt http_port rpc_port pid url
	# A port picked as free can be taken before influxd binds it; retry then.
	for attempt in 1 2 3; do
		http_port=$(free_port) || die "no free port found"
		rpc_port=$(free_port) || die "no free port found"
		[[ $http_port != "$rpc_port" ]] || continue
		write_config "$defaults" "$conf" "$datadir" "$http_port" "$rpc_port"
		url="http://127.0.0.1:$http_port"

		: >"$logfile"
		log "starting influxd on $url (data in $datadir)"
		# All descriptors redirected, so a caller's $(...) does not wait on the server.
		env "${clean_env[@]}" "$INFLUXD" -config "$conf" </dev/null >>"$logfile" 2>&1 &
		pid=$!
		echo "$pid" >"$pidfile"

		local deadline=$((SECONDS + START_TIMEOUT)) status=000
		while ((SECONDS < deadline)); do
			if ! kill -0 "$pid" 2>/dev/null; then
				break
			fi
			status=$(http_status GET "$url/ping")
			[[ $status == 204 ]] && break
			sleep 0.2
		done

		if [[ $status == 204 ]]; then
			break
		fi
		if ! kill -0 "$pid" 2>/dev/null && grep -qi 'address already in use' "$logfile"; then
			log "port taken before influxd could bind it (attempt $attempt); retrying"
			rm -f "$pidfile"
			continue
		fi
		log_tail "$logfile"
		if ! kill -0 "$pid" 2>/dev/null; then
			rm -f "$pidfile"
			die "influxd exited before answering GET /ping"
		fi
		cmd_stop "$dir" || true
		die "influxd did not answer GET /ping with 204 within ${START_TIMEOUT}s (last status $status)"
	done
	[[ ${status:-000} == 204 ]] || { log_tail "$logfile"; die "influxd could not bind a free port"; }

	status=$(http_status POST "$url/query" "q=CREATE DATABASE \"$TEST_DB\"")
	if [[ $status != 200 ]]; then
		log_tail "$logfile"
		cmd_stop "$dir" || true
		die "CREATE DATABASE $TEST_DB answered HTTP $status"
	fi
	log "ready: $url, database $TEST_DB (pid $pid, log $logfile)"
	printf 'DEWLINE_INFLUX_URL=%s\n' "$url" | tee "$dir/influxd.env"
	printf 'DEWLINE_INFLUX_DB=%s\n' "$TEST_DB" | tee -a "$dir/influxd.env"
}

cmd_stop() {
	local dir=${1:-}
	[[ -n $dir ]] || usage
	local pidfile="$dir/influxd.pid" pid
	if [[ ! -f $pidfile ]]; then
		log "no server recorded in $dir"
		return 0
	fi
	pid=$(cat "$pidfile")
	if pid_is_influxd "$pid"; then
		log "stopping influxd (pid $pid)"
		kill -TERM "$pid" 2>/dev/null || true
		local i
		for ((i = 0; i < 150; i++)); do
			kill -0 "$pid" 2>/dev/null || break
			sleep 0.1
		done
		if kill -0 "$pid" 2>/dev/null; then
			log "influxd did not stop in 15s; killing it"
			kill -KILL "$pid" 2>/dev/null || true
			for ((i = 0; i < 50; i++)); do
				kill -0 "$pid" 2>/dev/null || break
				sleep 0.1
			done
		fi
	fi
	rm -f "$pidfile"
}

case ${1:-} in
build) cmd_build ;;
start) shift; cmd_start "$@" ;;
stop) shift; cmd_stop "$@" ;;
*) usage ;;
esac
