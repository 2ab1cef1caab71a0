package main

import (
	"bufio"
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"net"
	"net/http"
	"net/http/httputil"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/rs/zerolog"
	"github.com/stretchr/testify/require"
)

// Shared code of the tests that run the dewline binary as a separate process
// against real services: a build of the binary, the site scenario, a private
// InfluxDB server that can be stopped and started again, a fault-injecting
// proxy, and readers for the state file and the agent's HTTP endpoint.

// ---------------------------------------------------------------------------
// The binary

// TestMain removes the binary the tests built.
func TestMain(m *testing.M) {
	code := m.Run()
	if binPath != "" {
		_ = os.Remove(binPath)
	}
	if benchDir != "" {
		_ = os.RemoveAll(benchDir) // the benchmarks' exports (bench_test.go)
	}
	os.Exit(code)
}

var (
	binOnce sync.Once
	binPath string
	binErr  error
)

// dewlineBinary builds ./cmd/dewline once per test process. The binary goes
// to the dewline cache (beside influxd) under a name of its own, so a
// concurrent test run of another checkout never executes this one's copy
// (or this one theirs); TestMain removes it when the tests end.
//
// It is built without -race even when the tests run with it: under the race
// detector the pure-Go SQLite driver imports a month of readings 30 times
// slower (31 s instead of 1 s), which would put the fault suite far over its
// time budget. The agent's concurrency (Serve, the webhook sender, the HTTP
// server) is race-tested in process by the agent package's own tests.
func dewlineBinary(t testing.TB) string {
	t.Helper()
	binOnce.Do(func() {
		dir := filepath.Join(cacheDir(), "bin")
		if binErr = os.MkdirAll(dir, 0o755); binErr != nil {
			return
		}
		goBin, err := exec.LookPath("go")
		if err != nil {
			goBin = "/usr/local/go/bin/go"
		}
		tmp, err := os.CreateTemp(dir, "dewline-faulttest-*")
		if err != nil {
			binErr = err
			return
		}
		tmp.Close()
		cmd := exec.Command(goBin, "build", "-o", tmp.Name(), ".")
		if out, err := cmd.CombinedOutput(); err != nil {
			os.Remove(tmp.Name())
			binErr = fmt.Errorf("go build ./cmd/dewline: %v\n%s", err, out)
			return
		}
		binPath = tmp.Name()
	})
	require.NoError(t, binErr)
	return binPath
}

// cacheDir is where deploy/dev/influxdb.sh caches its builds.
func cacheDir() string {
	if d := os.Getenv("DEWLINE_CACHE"); d != "" {
		return d
	}
	if d := os.Getenv("XDG_CACHE_HOME"); d != "" {
		return filepath.Join(d, "dewline")
	}
	home, _ := os.UserHomeDir()
	return filepath.Join(home, ".cache", "dewline")
}

// result is one finished run of the binary.
type result struct {
	code           int
	stdout, stderr string
	took           time.Duration
}

// runDewline runs the binary to completion with a liveness bound (not a
// performance assertion: a hung run fails the test instead of hanging it).
func runDewline(t *testing.T, bound time.Duration, args ...string) result {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), bound)
	defer cancel()
	cmd := exec.CommandContext(ctx, dewlineBinary(t), args...)
	cmd.Env = childEnv()
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	start := time.Now()
	err := cmd.Run()
	r := result{stdout: o.String(), stderr: e.String(), took: time.Since(start)}
	var ee *exec.ExitError
	switch {
	case err == nil:
	case ctx.Err() != nil:
		t.Fatalf("dewline %s did not finish within %s\nstderr:\n%s", strings.Join(args, " "), bound, r.stderr)
	case errors.As(err, &ee):
		r.code = ee.ExitCode()
	default:
		t.Fatalf("dewline %s: %v", strings.Join(args, " "), err)
	}
	return r
}

// childEnv is the environment of child processes: this one's, without the
// variables influxd would read over its configuration file.
func childEnv() []string {
	var env []string
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "INFLUXDB_") {
			env = append(env, kv)
		}
	}
	return env
}

// agentProc is a dewline process that runs until stopped: the long-running
// agent, or a --once run that is to be killed part way.
type agentProc struct {
	cmd  *exec.Cmd
	done chan struct{}
	err  error // of Wait, valid after done

	mu     sync.Mutex
	lines  []string // stderr, one log line each
	notify chan struct{}
	stdout bytes.Buffer
}

func startDewline(t *testing.T, args ...string) *agentProc {
	t.Helper()
	cmd := exec.Command(dewlineBinary(t), args...)
	cmd.Env = childEnv()
	stderr, err := cmd.StderrPipe()
	require.NoError(t, err)
	p := &agentProc{cmd: cmd, done: make(chan struct{}), notify: make(chan struct{}, 1)}
	cmd.Stdout = &lockedWriter{mu: &p.mu, w: &p.stdout}
	require.NoError(t, cmd.Start())
	read := make(chan struct{})
	go func() {
		defer close(read)
		sc := bufio.NewScanner(stderr)
		sc.Buffer(make([]byte, 1<<20), 1<<20)
		for sc.Scan() {
			p.mu.Lock()
			p.lines = append(p.lines, sc.Text())
			p.mu.Unlock()
			select {
			case p.notify <- struct{}{}:
			default:
			}
		}
	}()
	go func() {
		<-read // Wait closes the pipe: read it to the end first
		p.err = cmd.Wait()
		close(p.done)
	}()
	t.Cleanup(func() {
		select {
		case <-p.done:
		default:
			_ = p.cmd.Process.Kill()
			<-p.done
		}
	})
	return p
}

type lockedWriter struct {
	mu *sync.Mutex
	w  io.Writer
}

func (l *lockedWriter) Write(b []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.w.Write(b)
}

// logLine is one JSON log line of the agent.
type logLine map[string]any

func (l logLine) str(k string) string { s, _ := l[k].(string); return s }

func (p *agentProc) logs() []logLine {
	p.mu.Lock()
	defer p.mu.Unlock()
	out := make([]logLine, 0, len(p.lines))
	for _, s := range p.lines {
		var l logLine
		if json.Unmarshal([]byte(s), &l) == nil {
			out = append(out, l)
		}
	}
	return out
}

func (p *agentProc) stderrText() string {
	p.mu.Lock()
	defer p.mu.Unlock()
	return strings.Join(p.lines, "\n")
}

// waitLog waits up to bound for a log line that match accepts and returns it.
func (p *agentProc) waitLog(t *testing.T, bound time.Duration, what string, match func(logLine) bool) logLine {
	t.Helper()
	deadline := time.NewTimer(bound)
	defer deadline.Stop()
	for {
		for _, l := range p.logs() {
			if match(l) {
				return l
			}
		}
		select {
		case <-p.notify:
		case <-p.done:
			for _, l := range p.logs() {
				if match(l) {
					return l
				}
			}
			t.Fatalf("dewline exited (%v) before logging %s\nstderr:\n%s", p.err, what, p.stderrText())
		case <-deadline.C:
			t.Fatalf("no log line %s within %s\nstderr:\n%s", what, bound, p.stderrText())
		}
	}
}

func msgIs(msg string) func(logLine) bool {
	return func(l logLine) bool { return l.str("message") == msg }
}

// stop sends SIGTERM and waits up to bound for a clean exit.
func (p *agentProc) stop(t *testing.T, bound time.Duration) {
	t.Helper()
	_ = p.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-p.done:
	case <-time.After(bound):
		t.Fatalf("dewline did not stop within %s of SIGTERM\nstderr:\n%s", bound, p.stderrText())
	}
}

// kill sends SIGKILL and waits for the process to be gone.
func (p *agentProc) kill(t *testing.T) {
	t.Helper()
	require.NoError(t, p.cmd.Process.Signal(syscall.SIGKILL))
	<-p.done
}

// httpAddr is the address the agent logged it listens on.
func (p *agentProc) httpAddr(t *testing.T) string {
	t.Helper()
	return p.waitLog(t, 60*time.Second, `"http endpoint listening"`, msgIs("http endpoint listening")).str("addr")
}

// ---------------------------------------------------------------------------
// The scenario

// The fault tests' site: an invented three-storey clinic annex in a humid
// climate, served by DX air handlers with electric reheat. By day (08-20
// site time) the air entering the coil is humid and the coil runs at 52 °F;
// at night the air is dry, the coil eases to 55 °F and the reheat still
// brings the supply up to 62 °F: reheat that the humidity target did not
// need, which opens a reheat_not_needed alert every night and closes it
// every morning. Each air handler k is offset a little so that their hours
// differ.
const faultSiteHeader = `version: 1
site: {id: bayou-annex, name: Bayou Annex, timezone: America/Chicago, altitude: 15ft, units: ip}
prices: {currency: USD, electricity_per_kwh: 0.12}
`

// faultRoles are the scenario's columns: role, column suffix, unit, field.
var faultRoles = []struct{ role, col, unit, field string }{
	{"entering_temp", "MAT", "F", "mat"},
	{"entering_rh", "MARH", "%", "marh"},
	{"leaving_temp", "LAT", "F", "lat"},
	{"supply_temp", "SAT", "F", "sat"},
	{"supply_flow", "CFM", "CFM", "cfm"},
}

// The tests' air handlers have one plant: a DX coil of EER 11 with
// electric reheat, airflow at standard density. dxPlant is its YAML within
// an air_handlers entry, before the fan.
const dxPlant = `    cooling: {kind: dx, rated_eer: 11}
    reheat: {kind: electric}
    airflow: {basis: standard}
`

// drawThroughFan is the fan line of the benchmarks' air handlers.
const drawThroughFan = "    fan: {position: draw_through, heat_rise: 0.5K}\n"

// supplyTarget is a 52 °F supply dew point target, up to the points: line.
const supplyTarget = `    target: {max_supply_dewpoint: 52F}
    points:
`

// scenarioPlant is the scenarios' air handler up to its points: no fan
// heat, a 52 °F supply dew point target.
const scenarioPlant = dxPlant + "    fan: {position: none}\n" + supplyTarget

// scenarioPoints are the points of the two-day scenario's export
// (writeScenario), one column each.
const scenarioPoints = `      entering_temp: {column: MAT, unit: F}
      entering_rh:   {column: MARH, unit: "%"}
      leaving_temp:  {column: LAT, unit: F}
      supply_temp:   {column: SAT, unit: F}
      supply_flow:   {column: CFM, unit: CFM}
`

// colPrefix is the export's column prefix of an air handler: "AHU-2" -> "AHU2".
func colPrefix(id string) string { return strings.ReplaceAll(id, "-", "") }

// site describes a configuration of the scenario.
type site struct {
	store    string // the store: block; "" is the embedded file dewline.db
	meas     string // InfluxDB measurement of the trend points ("" for none)
	schedule string // the schedule: block's flow mapping, e.g. "{backfill: 30h}"
	extra    string // more top-level YAML (http, webhook)
	ahus     []string
	// points overrides single points: "AHU-9/entering_temp" -> flow mapping.
	points map[string]string
}

func (s site) yaml() string {
	var b strings.Builder
	b.WriteString(faultSiteHeader)
	if s.store == "" {
		b.WriteString("store: {kind: embedded, path: dewline.db}\n")
	} else {
		b.WriteString(s.store)
	}
	if s.schedule != "" {
		fmt.Fprintf(&b, "schedule: %s\n", s.schedule)
	}
	b.WriteString(s.extra)
	b.WriteString("air_handlers:\n")
	for _, id := range s.ahus {
		fmt.Fprintf(&b, "  - id: %s\n%s", id, scenarioPlant)
		for _, r := range faultRoles {
			if p, ok := s.points[id+"/"+r.role]; ok {
				fmt.Fprintf(&b, "      %s: %s\n", r.role, p)
				continue
			}
			loc := ""
			if s.meas != "" {
				loc = fmt.Sprintf(", measurement: %s, field: %s, tags: {ahu: %s}", s.meas, r.field, id)
			}
			fmt.Fprintf(&b, "      %s: {column: %s_%s, unit: %q%s}\n", r.role, colPrefix(id), r.col, r.unit, loc)
		}
	}
	return b.String()
}

// write writes the configuration as dir/name and returns its path.
func (s site) write(t *testing.T, dir, name string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	require.NoError(t, os.WriteFile(p, []byte(s.yaml()), 0o600))
	return p
}

// influxStore is the store: block for a 1.8 server.
func influxStore(url, db, timeout string) string {
	return fmt.Sprintf("store:\n  kind: influxdb\n  influxdb: {url: %q, bucket: %q, timeout: %s}\n", url, db+"/autogen", timeout)
}

// writeTrends writes a wide export of one-minute readings of the air
// handlers ahus over [from, from+d), times in RFC 3339 UTC.
func writeTrends(t *testing.T, path string, ahus []string, from time.Time, d time.Duration) {
	t.Helper()
	loc, err := time.LoadLocation("America/Chicago")
	require.NoError(t, err)
	f, err := os.Create(path)
	require.NoError(t, err)
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString("Time")
	for _, id := range ahus {
		for _, r := range faultRoles {
			fmt.Fprintf(w, ",%s_%s", colPrefix(id), r.col)
		}
	}
	w.WriteString("\n")
	from = from.UTC()
	for m := 0; m < int(d/time.Minute); m++ {
		ts := from.Add(time.Duration(m) * time.Minute)
		lh := ts.In(loc).Hour()
		day := lh >= 8 && lh < 20
		w.WriteString(ts.Format(time.RFC3339))
		for k := range ahus {
			x := float64(m)
			mat := 76 + math.Sin(x/90) + 0.4*float64(k)
			rh, lat := 60.0, 52.0+0.2*float64(k)
			if !day {
				rh, lat = 38, 55
			}
			rh += 0.5 * math.Sin(x/37)
			lat += 0.1 * math.Sin(x/23)
			sat := 62 + 0.1*math.Sin(x/29)
			fmt.Fprintf(w, ",%.2f,%.1f,%.2f,%.2f,%d", mat, rh, lat, sat, 8000+500*k)
		}
		w.WriteString("\n")
	}
	require.NoError(t, w.Flush())
	require.NoError(t, f.Close())
}

// importTrends writes the readings of ahus over [from, from+d) as
// dir/trends.csv (writeTrends) and imports them with the dewline binary and
// the configuration cfg; it returns the export's path.
func importTrends(t *testing.T, dir, cfg string, ahus []string, from time.Time, d time.Duration) string {
	t.Helper()
	data := filepath.Join(dir, "trends.csv")
	writeTrends(t, data, ahus, from, d)
	r := runDewline(t, runBound, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, r.code, r.stderr)
	return data
}

// importUntilNow is importTrends of the readings from span before the
// current hour up to now, the current minute, which it returns: the data
// an agent started now computes up to its last complete hour.
func importUntilNow(t *testing.T, dir, cfg string, ahus []string, span time.Duration) (now time.Time) {
	t.Helper()
	now = time.Now().UTC().Truncate(time.Minute)
	from := now.Truncate(time.Hour).Add(-span)
	importTrends(t, dir, cfg, ahus, from, now.Sub(from))
	return now
}

// ---------------------------------------------------------------------------
// InfluxDB

var scriptOnce sync.Once

// influxScript is deploy/dev/influxdb.sh. Tests that stop and start a server
// run their own from the cached influxd; deploy/dev/test.sh builds it. When
// it is missing, the test skips outside CI and, under CI=true, builds it
// (a few minutes) and fails if that fails.
func influxScript(t *testing.T) string {
	t.Helper()
	root, err := filepath.Abs(filepath.Join("..", ".."))
	require.NoError(t, err)
	script := filepath.Join(root, "deploy", "dev", "influxdb.sh")
	influxd := filepath.Join(cacheDir(), "bin", "influxd")
	if _, err := os.Stat(influxd); err == nil {
		return script
	}
	if os.Getenv("CI") != "true" {
		t.Skipf("%s is missing; build it with deploy/dev/influxdb.sh build (deploy/dev/test.sh does)", influxd)
	}
	var out []byte
	scriptOnce.Do(func() { out, err = exec.Command(script, "build").CombinedOutput() })
	_, serr := os.Stat(influxd)
	require.NoError(t, serr, "deploy/dev/influxdb.sh build: %v\n%s", err, out)
	return script
}

// ownInflux is a private InfluxDB 1.8 server that a test may stop and start
// again on the same port with the same data.
type ownInflux struct {
	script, dir, url string
}

// startOwnInflux starts a server with deploy/dev/influxdb.sh start DIR; it
// is stopped when the test ends.
func startOwnInflux(t *testing.T) *ownInflux {
	t.Helper()
	s := &ownInflux{script: influxScript(t), dir: t.TempDir()}
	cmd := exec.Command(s.script, "start", s.dir)
	cmd.Env = childEnv()
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	require.NoError(t, err, "influxdb.sh start: %s", stderr.String())
	for _, line := range strings.Split(string(out), "\n") {
		if v, ok := strings.CutPrefix(line, "DEWLINE_INFLUX_URL="); ok {
			s.url = v
		}
	}
	require.NotEmpty(t, s.url, "influxdb.sh start printed no URL: %s", out)
	t.Cleanup(func() { _ = exec.Command(s.script, "stop", s.dir).Run() })
	return s
}

// stop stops the server with influxdb.sh stop (SIGTERM, then SIGKILL after 15 s).
func (s *ownInflux) stop(t *testing.T) {
	t.Helper()
	out, err := exec.Command(s.script, "stop", s.dir).CombinedOutput()
	require.NoError(t, err, "%s", out)
	_, err = http.Get(s.url + "/ping")
	require.Error(t, err, "the server still answers after stop")
}

// kill ends the server at once with SIGKILL, as a crash would.
func (s *ownInflux) kill(t *testing.T) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(s.dir, "influxd.pid"))
	require.NoError(t, err)
	pid, err := strconv.Atoi(strings.TrimSpace(string(b)))
	require.NoError(t, err)
	proc, err := os.FindProcess(pid)
	require.NoError(t, err)
	require.NoError(t, proc.Signal(syscall.SIGKILL))
	for i := 0; i < 100 && proc.Signal(syscall.Signal(0)) == nil; i++ {
		time.Sleep(50 * time.Millisecond)
	}
	os.Remove(filepath.Join(s.dir, "influxd.pid"))
}

// restart starts the server again from the configuration influxdb.sh wrote
// at the first start: the same ports and the same data folder. (The
// script's own start would pick new ports and a new, empty data folder.)
// The pid goes to the script's pid file so that its stop works as before.
func (s *ownInflux) restart(t *testing.T) {
	t.Helper()
	logf, err := os.OpenFile(filepath.Join(s.dir, "influxd.log"), os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o600)
	require.NoError(t, err)
	defer logf.Close()
	cmd := exec.Command(filepath.Join(cacheDir(), "bin", "influxd"), "-config", filepath.Join(s.dir, "influxdb.conf"))
	cmd.Env = childEnv()
	cmd.Stdout, cmd.Stderr = logf, logf
	require.NoError(t, cmd.Start())
	go func() { _ = cmd.Wait() }() // reap it whoever stops it
	require.NoError(t, os.WriteFile(filepath.Join(s.dir, "influxd.pid"), []byte(strconv.Itoa(cmd.Process.Pid)+"\n"), 0o600))
	deadline := time.Now().Add(60 * time.Second)
	for {
		resp, err := http.Get(s.url + "/ping")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusNoContent {
				return
			}
		}
		if time.Now().After(deadline) {
			log, _ := os.ReadFile(filepath.Join(s.dir, "influxd.log"))
			t.Fatalf("influxd did not answer /ping within 60 s of restarting: %v\n%s", err, log)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// influxQL runs an InfluxQL statement over the 1.x HTTP API and returns the
// series of its first result. Numbers are kept as json.Number, times as
// Unix milliseconds.
func influxQL(t *testing.T, base, db, q string) []influxSeries {
	t.Helper()
	v := url.Values{"q": {q}, "epoch": {"ms"}}
	if db != "" {
		v.Set("db", db)
	}
	c := &http.Client{Timeout: time.Minute}
	resp, err := c.PostForm(base+"/query", v)
	require.NoError(t, err)
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	require.NoError(t, err)
	require.Equal(t, http.StatusOK, resp.StatusCode, "%s: %s", q, body)
	var out struct {
		Results []struct {
			Series []influxSeries `json:"series"`
			Error  string         `json:"error"`
		} `json:"results"`
	}
	dec := json.NewDecoder(bytes.NewReader(body))
	dec.UseNumber()
	require.NoError(t, dec.Decode(&out))
	require.Len(t, out.Results, 1, "%s", body)
	require.Empty(t, out.Results[0].Error, q)
	return out.Results[0].Series
}

type influxSeries struct {
	Name    string            `json:"name"`
	Tags    map[string]string `json:"tags"`
	Columns []string          `json:"columns"`
	Values  [][]any           `json:"values"`
}

// rows returns the series' rows as column -> value maps.
func (s influxSeries) rows() []map[string]any {
	out := make([]map[string]any, 0, len(s.Values))
	for _, v := range s.Values {
		m := map[string]any{}
		for i, c := range s.Columns {
			m[c] = v[i]
		}
		out = append(out, m)
	}
	return out
}

// freshDB creates a database of its own for the test on the server at
// base and drops it when the test ends.
func freshDB(t *testing.T, base, prefix string) string {
	t.Helper()
	db := fmt.Sprintf("%s_%d", prefix, time.Now().UnixNano())
	influxQL(t, base, "", "CREATE DATABASE "+db)
	t.Cleanup(func() {
		_, _ = http.PostForm(base+"/query", url.Values{"q": {"DROP DATABASE " + db}})
	})
	return db
}

// hoursPerAHU counts dewline_hourly points per air handler and hour:
// ahu -> hour (Unix ms) -> points.
func hoursPerAHU(t *testing.T, base, db string, from, to time.Time) map[string]map[int64]int {
	t.Helper()
	q := fmt.Sprintf(`SELECT count("coverage") FROM dewline_hourly WHERE time >= %d AND time < %d GROUP BY time(1h), "ahu" fill(0)`,
		from.UnixNano(), to.UnixNano())
	out := map[string]map[int64]int{}
	for _, s := range influxQL(t, base, db, q) {
		m := map[int64]int{}
		for _, r := range s.rows() {
			ms, _ := r["time"].(json.Number).Int64()
			n, _ := r["count"].(json.Number).Int64()
			m[ms] = int(n)
		}
		out[s.Tags["ahu"]] = m
	}
	return out
}

// influxHourly returns every dewline_hourly point of ahu in time order, as
// column -> value with numbers as the server printed them.
func influxHourly(t *testing.T, base, db, ahu string) []map[string]any {
	t.Helper()
	s := influxQL(t, base, db, fmt.Sprintf(`SELECT * FROM dewline_hourly WHERE "ahu" = '%s' ORDER BY time`, ahu))
	if len(s) == 0 {
		return nil
	}
	return s[0].rows()
}

// ---------------------------------------------------------------------------
// The fault proxy

// faultProxy is an HTTP reverse proxy on loopback in front of a real
// InfluxDB server that can delay answers, answer 500, or cut connections,
// and counts the requests that reach it by path.
type faultProxy struct {
	URL    string
	srv    *http.Server
	ln     net.Listener
	rp     *httputil.ReverseProxy
	mu     sync.Mutex
	mode   string // "pass", "delay", "500", "reset"
	only   string // path prefix the fault applies to; "" for all
	delay  time.Duration
	counts map[string]int
}

func startFaultProxy(t *testing.T, upstream string) *faultProxy {
	t.Helper()
	u, err := url.Parse(upstream)
	require.NoError(t, err)
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	require.NoError(t, err)
	p := &faultProxy{URL: "http://" + ln.Addr().String(), ln: ln, mode: "pass", counts: map[string]int{}}
	p.rp = httputil.NewSingleHostReverseProxy(u)
	p.rp.ModifyResponse = p.hold
	p.rp.ErrorHandler = func(w http.ResponseWriter, r *http.Request, err error) { w.WriteHeader(http.StatusBadGateway) }
	p.srv = &http.Server{Handler: p, ReadHeaderTimeout: 10 * time.Second}
	go func() { _ = p.srv.Serve(ln) }()
	t.Cleanup(func() { _ = p.srv.Close() })
	return p
}

// set changes the fault: mode for requests whose path starts with only.
func (p *faultProxy) set(mode, only string, delay time.Duration) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.mode, p.only, p.delay = mode, only, delay
	p.counts = map[string]int{}
}

// count returns the requests seen since the last set whose path starts with prefix.
func (p *faultProxy) count(prefix string) int {
	p.mu.Lock()
	defer p.mu.Unlock()
	n := 0
	for path, c := range p.counts {
		if strings.HasPrefix(path, prefix) {
			n += c
		}
	}
	return n
}

func (p *faultProxy) fault(path string) (string, time.Duration) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.counts[path]++
	if p.mode == "pass" || !strings.HasPrefix(path, p.only) {
		return "pass", 0
	}
	return p.mode, p.delay
}

func (p *faultProxy) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	switch mode, _ := p.fault(r.URL.Path); mode {
	case "500":
		w.Header().Set("Content-Type", "application/json")
		w.WriteHeader(http.StatusInternalServerError)
		io.WriteString(w, `{"code":"internal error","message":"injected by the test proxy"}`)
		return
	case "reset":
		conn, _, err := http.NewResponseController(w).Hijack()
		if err == nil {
			if tc, ok := conn.(*net.TCPConn); ok {
				_ = tc.SetLinger(0) // RST, not FIN
			}
			conn.Close()
		}
		return
	}
	p.rp.ServeHTTP(w, r)
}

// hold delays the upstream's answer (after the upstream has done the work,
// as a slow server would) when the fault is "delay".
func (p *faultProxy) hold(resp *http.Response) error {
	p.mu.Lock()
	mode, only, d := p.mode, p.only, p.delay
	p.mu.Unlock()
	if mode != "delay" || !strings.HasPrefix(resp.Request.URL.Path, only) {
		return nil
	}
	select {
	case <-time.After(d):
		return nil
	case <-resp.Request.Context().Done():
		return resp.Request.Context().Err()
	}
}

// ---------------------------------------------------------------------------
// The state file and the HTTP endpoint

// openSQLite opens an embedded store file read-only for inspection.
func openSQLite(t *testing.T, path string) *sql.DB {
	t.Helper()
	_, err := os.Stat(path)
	require.NoError(t, err)
	db, err := sql.Open("sqlite", "file:"+path+"?mode=ro&_busy_timeout=5000")
	require.NoError(t, err)
	t.Cleanup(func() { db.Close() })
	return db
}

// checkpoints reads every air handler's checkpoint from a store file.
func checkpoints(t *testing.T, path string) map[string]time.Time {
	t.Helper()
	if _, err := os.Stat(path); errors.Is(err, os.ErrNotExist) {
		return map[string]time.Time{}
	}
	type checkpoint struct {
		ahu string
		ms  int64
	}
	out := map[string]time.Time{}
	for _, c := range sqliteRows(t, path, "SELECT ahu, last_hour_ms FROM checkpoints", func(c *checkpoint) []any { return []any{&c.ahu, &c.ms} }) {
		out[c.ahu] = time.UnixMilli(c.ms).UTC()
	}
	return out
}

// sqliteRows runs query on the store file at path; cols gives the fields
// of a row that its columns are scanned into, in order.
func sqliteRows[T any](t *testing.T, path, query string, cols func(*T) []any) []T {
	t.Helper()
	db := openSQLite(t, path)
	rows, err := db.Query(query)
	require.NoError(t, err)
	defer rows.Close()
	var out []T
	for rows.Next() {
		var r T
		require.NoError(t, rows.Scan(cols(&r)...))
		out = append(out, r)
	}
	require.NoError(t, rows.Err())
	return out
}

// hourRecord is one row of the hourly table.
type hourRecord struct {
	AHU    string
	HourMs int64
	Fields string // JSON as stored
	Flags  string
}

func storedHours(t *testing.T, path string) []hourRecord {
	t.Helper()
	return sqliteRows(t, path, "SELECT ahu, hour_ms, fields, flags FROM hourly ORDER BY ahu, hour_ms",
		func(r *hourRecord) []any { return []any{&r.AHU, &r.HourMs, &r.Fields, &r.Flags} })
}

// storedEvent is one row of the alert event queue.
type storedEvent struct {
	Seq         int64
	AlertID     string
	Transition  string
	AtMs        int64
	Payload     string
	DeliveredMs sql.NullInt64
}

func storedEvents(t *testing.T, path string) []storedEvent {
	t.Helper()
	return sqliteRows(t, path, "SELECT seq, alert_id, transition, at_ms, payload, delivered_ms FROM alert_events ORDER BY seq",
		func(e *storedEvent) []any {
			return []any{&e.Seq, &e.AlertID, &e.Transition, &e.AtMs, &e.Payload, &e.DeliveredMs}
		})
}

// httpGet returns the status and body of GET base+path.
func httpGet(t *testing.T, base, path string) (int, string) {
	t.Helper()
	c := &http.Client{Timeout: 10 * time.Second}
	resp, err := c.Get(base + path)
	require.NoError(t, err)
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	require.NoError(t, err)
	return resp.StatusCode, string(b)
}

// waitHTTP polls GET base+path until ok accepts the answer, up to bound.
func waitHTTP(t *testing.T, base, path string, bound time.Duration, what string, ok func(status int, body string) bool) (int, string) {
	t.Helper()
	deadline := time.Now().Add(bound)
	for {
		status, body := httpGet(t, base, path)
		if ok(status, body) {
			return status, body
		}
		if time.Now().After(deadline) {
			t.Fatalf("%s: not seen within %s; last answer of %s: %d %s", what, bound, path, status, body)
		}
		time.Sleep(200 * time.Millisecond)
	}
}

var metricLine = regexp.MustCompile(`^([a-zA-Z_:][a-zA-Z0-9_:]*)(\{[^}]*\})? (\S+)$`)

// metricValue finds one sample in a Prometheus text exposition: name with
// exactly the given labels (e.g. `ahu="AHU-1"`, or "" for none). ok is false
// when the series is absent.
func metricValue(body, name, labels string) (v float64, ok bool) {
	for _, line := range strings.Split(body, "\n") {
		m := metricLine.FindStringSubmatch(line)
		if m == nil || m[1] != name || strings.Trim(m[2], "{}") != labels {
			continue
		}
		f, err := strconv.ParseFloat(m[3], 64)
		return f, err == nil
	}
	return 0, false
}

// influxCheckpoints reads the agent's checkpoints from measurement
// dewline_checkpoint of db (they live in InfluxDB when it is the store).
func influxCheckpoints(t *testing.T, base, db string) map[string]time.Time {
	t.Helper()
	out := map[string]time.Time{}
	for _, s := range influxQL(t, base, db, `SELECT "hour" FROM "dewline_checkpoint" GROUP BY "ahu"`) {
		for _, r := range s.rows() {
			v, _ := r["hour"].(string)
			cp, err := time.Parse(time.RFC3339, v)
			require.NoError(t, err, "checkpoint %q", v)
			out[s.Tags["ahu"]] = cp.UTC()
		}
	}
	return out
}

// onInflux is cfgText, analyzeConfig or a configuration made from it,
// with its store on database db of the InfluxDB server at base; more
// (YAML) follows the store block.
func onInflux(cfgText, base, db, more string) string {
	return strings.Replace(cfgText, "store: {kind: embedded, path: test.db}",
		fmt.Sprintf("store:\n  kind: influxdb\n  influxdb: {url: %q, bucket: %q, timeout: 20s}", base, db+"/autogen")+more, 1)
}

// inMeasurement gives every point of cfgText (analyzeConfig or made from
// it) an InfluxDB location beside its column: measurement meas, the field
// named after the column in lower case.
func inMeasurement(cfgText, meas string) string {
	for _, p := range []string{"MAT", "MARH", "LAT", "SAT", "CFM"} {
		cfgText = strings.Replace(cfgText, "{column: "+p+",", fmt.Sprintf("{column: %s, measurement: %s, field: %s,", p, meas, strings.ToLower(p)), 1)
	}
	return cfgText
}

// influxConfig writes cfgText with its store on the InfluxDB test server
// (onInflux) into dir and returns the file's path.
func influxConfig(t *testing.T, dir, cfgText, base, db, more string) string {
	t.Helper()
	text := onInflux(cfgText, base, db, more)
	require.NotEqual(t, cfgText, text, "the configuration's store line")
	path := filepath.Join(dir, "influx.yaml")
	require.NoError(t, os.WriteFile(path, []byte(text), 0o600))
	return path
}

// scenarioInBothStores writes the two-day scenario's export and two
// configurations for it: one of the embedded store, one of a fresh database
// (named from prefix) on the real InfluxDB test server.
func scenarioInBothStores(t *testing.T, prefix string) (embCfg, fluxCfg, data string) {
	t.Helper()
	return inBothStores(t, prefix, writeScenario, analyzeConfig)
}

// inBothStores writes a scenario's export and its configuration cfgText
// (write) and a second configuration of it whose store is a fresh database
// (named from prefix) on the real InfluxDB test server.
func inBothStores(t *testing.T, prefix string, write func(t *testing.T, dir string) (cfg, data string), cfgText string) (embCfg, fluxCfg, data string) {
	t.Helper()
	base, _ := testkit.InfluxDB(t)
	db := freshDB(t, base, prefix)
	dir := t.TempDir()
	embCfg, data = write(t, dir)
	return embCfg, influxConfig(t, dir, cfgText, base, db, ""), data
}

// openTestStore loads the configuration at path and opens its store
// read-only for the rest of the test.
func openTestStore(t *testing.T, path string) (*config.Config, *stores) {
	t.Helper()
	cfg, err := loadConfig(path)
	require.NoError(t, err)
	st, err := openStore(t.Context(), cfg, true, zerolog.Nop())
	require.NoError(t, err)
	t.Cleanup(st.Close)
	return cfg, st
}
