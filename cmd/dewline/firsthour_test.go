package main

import (
	"encoding/json"
	"net"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestSecrets_FailEarly: a secret the configuration names but the
// environment lacks is reported by "check" and "run --once" (which needs
// none of the agent's secrets), not first by the long-running agent after
// its endpoint started. Every missing one is named at once, with its key.
func TestSecrets_FailEarly(t *testing.T) {
	dir := t.TempDir()
	cfg := site{ahus: []string{"AHU-1"},
		extra: "http: {listen: \"127.0.0.1:0\", token_env: DEWLINE_TEST_HTTP_TOKEN_UNSET}\n" +
			"webhook: {url: \"http://127.0.0.1:9/hook\", secret_env: DEWLINE_TEST_WEBHOOK_SECRET_UNSET}\n"}.write(t, dir, "site.yaml")
	t.Setenv("DEWLINE_TEST_HTTP_TOKEN_UNSET", "")
	t.Setenv("DEWLINE_TEST_WEBHOOK_SECRET_UNSET", "")

	for _, args := range [][]string{
		{"check", "--config", cfg},
		{"run", "--config", cfg, "--once", "--as-of", "2026-07-15T12:00:00Z"},
	} {
		t.Run(args[0], func(t *testing.T) {
			code, stdout, errOut := runCLI(t, append([]string{"--log-level", "error"}, args...)...)
			assert.Equal(t, 1, code, errOut)
			assert.Contains(t, errOut, "webhook.secret_env: environment variable DEWLINE_TEST_WEBHOOK_SECRET_UNSET is not set")
			assert.Contains(t, errOut, "http.token_env: environment variable DEWLINE_TEST_HTTP_TOKEN_UNSET is not set")
			assert.NotContains(t, stdout, "valid;", "not called valid while a secret is missing")
		})
	}

	// With both set, check passes and prints neither value.
	t.Setenv("DEWLINE_TEST_HTTP_TOKEN_UNSET", "a-token-of-at-least-some-length-0123456789")
	t.Setenv("DEWLINE_TEST_WEBHOOK_SECRET_UNSET", "webhook-secret-value")
	code, stdout, errOut := runCLI(t, "--log-level", "error", "check", "--config", cfg)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, stdout, "valid;")
	assert.NotContains(t, stdout+errOut, "webhook-secret-value")

	// A token file that is not there fails check too.
	dir2 := t.TempDir()
	cfg2 := site{ahus: []string{"AHU-1"}, store: "store:\n  kind: influxdb\n  influxdb: {url: \"http://127.0.0.1:9\", bucket: \"db/autogen\", token_file: " +
		filepath.Join(dir2, "no-such-token") + "}\n"}.write(t, dir2, "site.yaml")
	code, _, errOut = runCLI(t, "--log-level", "error", "check", "--config", cfg2)
	assert.Equal(t, 1, code, errOut)
	assert.Contains(t, errOut, "store.influxdb.token_file")
}

// TestRun_CatchUpDoesNotQueueOldAlerts: a first start that catches up five
// days of the fault scenario (an alert opens every night and closes every
// morning) records every alert, but queues for the webhook only the
// transitions within webhook.max_age of the run, and says so in one log
// line instead of a warning per dropped event later.
func TestRun_CatchUpDoesNotQueueOldAlerts(t *testing.T) {
	dir := t.TempDir()
	ahus := []string{"AHU-1"}
	cfg := site{
		schedule: "{backfill: 120h}",
		extra:    "webhook: {url: \"http://127.0.0.1:9/hook\", max_age: 24h}\n",
		ahus:     ahus,
	}.write(t, dir, "site.yaml")
	asOf := time.Date(2026, 7, 20, 12, 30, 0, 0, time.UTC)
	from := asOf.Truncate(time.Hour).Add(-120 * time.Hour)
	data := filepath.Join(dir, "trends.csv")
	writeTrends(t, data, ahus, from, asOf.Sub(from))
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)

	code, _, errOut = runCLI(t, "run", "--config", cfg, "--once", "--as-of", asOf.Format(time.RFC3339))
	require.Equal(t, 0, code, errOut)

	db := openSQLite(t, filepath.Join(dir, "dewline.db"))
	var alerts int
	require.NoError(t, db.QueryRow("SELECT count(*) FROM alerts").Scan(&alerts))
	events := storedEvents(t, filepath.Join(dir, "dewline.db"))
	require.GreaterOrEqual(t, alerts, 4, "five nights open an alert each")
	require.NotEmpty(t, events, "the last day's transitions are queued")
	cutoff := asOf.Add(-24 * time.Hour)
	for _, e := range events {
		assert.False(t, time.UnixMilli(e.AtMs).Before(cutoff), "%s/%s at %s is older than max_age, yet queued",
			e.AlertID, e.Transition, time.UnixMilli(e.AtMs).UTC().Format(time.RFC3339))
	}
	assert.Less(t, len(events), 2*alerts, "older transitions are not queued")
	assert.Equal(t, 1, strings.Count(errOut, "recorded but not posted to the webhook"), "one summary line")
}

// TestDemo_BusyPort: a demo whose dashboard address is taken says so
// before it generates anything, naming --listen and --no-serve.
func TestDemo_BusyPort(t *testing.T) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	require.NoError(t, err)
	t.Cleanup(func() { ln.Close() })
	dir := filepath.Join(t.TempDir(), "demo")
	code, _, errOut := runCLI(t, "demo", "--dir", dir, "--days", "14", "--listen", ln.Addr().String())
	assert.Equal(t, 2, code, errOut)
	assert.Contains(t, errOut, "--listen "+ln.Addr().String()+" is in use")
	assert.Contains(t, errOut, "--no-serve")
	_, err = os.Stat(dir)
	assert.True(t, os.IsNotExist(err), "nothing generated")
}

// TestConfigMessages: configuration and export messages name the setting
// a user writes (exports.day_first, the key of a bad number), and a
// misspelt key is reported once, not again as the key it meant missing.
func TestConfigMessages(t *testing.T) {
	dir := t.TempDir()
	good := site{ahus: []string{"AHU-1"}}.yaml()

	bad := strings.Replace(good, "electricity_per_kwh: 0.12", "electricity_per_kwh: 0.124USD", 1)
	bad = strings.Replace(bad, "    points:\n", "    pointz:\n", 1)
	p := filepath.Join(dir, "bad.yaml")
	require.NoError(t, os.WriteFile(p, []byte(bad), 0o600))
	code, _, errOut := runCLI(t, "check", "--config", p)
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, `prices.electricity_per_kwh: "0.124USD" is not a valid number; give the number alone`)
	assert.Contains(t, errOut, `unknown key "pointz"; did you mean "points"?`)
	assert.NotContains(t, errOut, "is not mapped", "no derived problem of the misspelt key")
	assert.Contains(t, errOut, "2 problems")

	// An export whose dates never show a day above 12.
	cfg := filepath.Join(dir, "site.yaml")
	require.NoError(t, os.WriteFile(cfg, []byte(good), 0o600))
	data := filepath.Join(dir, "export.csv")
	require.NoError(t, os.WriteFile(data, []byte("time,AHU1_MAT\n07/01/2026 10:00,75\n07/02/2026 10:00,76\n"), 0o600))
	code, _, errOut = runCLI(t, "check", "--config", cfg, "--input", data)
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "set exports.day_first (yes for 14/07/2026, no for 07/14/2026)")
	assert.NotContains(t, errOut, "Options.")
}

// TestScriptOutput: help asked for goes to standard output with status 0,
// a mistake to standard error with 2; --version prints the module version
// and commit; console logs carry no colour codes off a terminal; JSON logs
// carry one component key; durations carry their unit.
func TestScriptOutput(t *testing.T) {
	for _, h := range []string{"--help", "-h", "help"} {
		code, stdout, stderr := runCLI(t, h)
		assert.Equal(t, 0, code, h)
		assert.Contains(t, stdout, "usage: dewline", h)
		assert.Empty(t, stderr, h)
	}
	code, stdout, stderr := runCLI(t, "--bogus")
	assert.Equal(t, 2, code)
	assert.Empty(t, stdout)
	assert.Contains(t, stderr, "-bogus")

	code, stdout, _ = runCLI(t, "--version")
	assert.Equal(t, 0, code)
	assert.Regexp(t, `^dewline \S+ \(commit \S+.*, go[0-9.]+\S*\)\n$`, stdout)

	// Console logs into a buffer (not a terminal): no escape codes.
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	code, _, stderr = runCLI(t, "--log-format", "console", "import", "--config", cfg, data)
	require.Equal(t, 0, code, stderr)
	assert.Contains(t, stderr, "imported")
	assert.NotContains(t, stderr, "\x1b[", "no colour codes off a terminal")

	// JSON logs: durations with their unit in the key.
	code, _, stderr = runCLI(t, "import", "--config", cfg, data)
	require.Equal(t, 0, code, stderr)
	assert.Contains(t, stderr, `"took_ms":`)
	assert.NotContains(t, stderr, `"took":`)
}

// TestRun_OneComponentKey: every JSON log line of the agent names its
// component once (the HTTP server and the webhook sender are parts of the
// agent, not components inside "agent").
func TestRun_OneComponentKey(t *testing.T) {
	dir := t.TempDir()
	cfg := site{ahus: []string{"AHU-1"}, schedule: "{backfill: 2h}",
		extra: "http: {listen: \"127.0.0.1:0\"}\nwebhook: {url: \"http://127.0.0.1:9/hook\"}\n"}.write(t, dir, "site.yaml")
	now := time.Now().UTC().Truncate(time.Minute)
	importTrends(t, dir, cfg, []string{"AHU-1"}, now.Truncate(time.Hour).Add(-3*time.Hour), 3*time.Hour)
	p := startDewline(t, "--log-level", "debug", "run", "--config", cfg)
	p.waitLog(t, runBound, "the http endpoint", msgIs("http endpoint listening"))
	p.stop(t, 30*time.Second)
	seen := map[string]bool{}
	for _, line := range strings.Split(p.stderrText(), "\n") {
		if line == "" {
			continue
		}
		n := strings.Count(line, `"component":`)
		assert.LessOrEqual(t, n, 1, "one component key: %s", line)
		if n == 1 {
			var l logLine
			require.NoError(t, json.Unmarshal([]byte(line), &l))
			seen[l.str("component")] = true
		}
	}
	assert.True(t, seen["http"], "the server's lines say http")
	assert.True(t, seen["agent"], "the run loop's lines say agent")
}

// TestAir_DisplayForm: "dewline air --json" prints figures rounded to six
// significant digits (80 °F is 26.6667 °C by the definition of the
// Fahrenheit scale, not 26.666666666666664), and an RH given as a
// fraction is warned about with the percentage it probably meant.
func TestAir_DisplayForm(t *testing.T) {
	code, stdout, stderr := runCLI(t, "air", "--db", "80F", "--rh", "50", "--json")
	require.Equal(t, 0, code, stderr)
	assert.Contains(t, stdout, `"dry_bulb_c": 26.6667,`)
	assert.Contains(t, stdout, `"rh_pct": 50,`)
	assert.NotRegexp(t, `[0-9]\.[0-9]{9,}`, stdout, "no float noise")

	code, _, stderr = runCLI(t, "air", "--db", "80F", "--rh", "0.5")
	require.Equal(t, 0, code, stderr)
	assert.Contains(t, stderr, "--rh 0.5 was read as 0.5 %; for 50 % give --rh 50")
	code, _, stderr = runCLI(t, "air", "--db", "80F", "--rh", "50")
	require.Equal(t, 0, code, stderr)
	assert.NotContains(t, stderr, "was read as")
}

// TestDemo_SaysWhereItsFilesAre: the demo names its configuration (the
// newcomer's best starting point) and its exports, with paths that exist.
func TestDemo_SaysWhereItsFilesAre(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "demo")
	code, stdout, stderr := runCLI(t, "--log-level", "warn", "demo", "--dir", dir, "--days", "14", "--no-serve")
	require.Equal(t, 0, code, stderr)
	abs, err := filepath.Abs(dir)
	require.NoError(t, err)
	cfg := filepath.Join(abs, "dewline-demo.yaml")
	assert.Contains(t, stdout, "configuration: "+cfg+"\n")
	assert.Contains(t, stdout, "copy it to start your own site")
	assert.FileExists(t, cfg)
	i := strings.Index(stdout, "exports: "+abs+": ")
	require.GreaterOrEqual(t, i, 0, stdout)
	line := stdout[i+len("exports: "+abs+": "):]
	line = line[:strings.IndexByte(line, '\n')]
	for _, name := range strings.Split(line, ", ") {
		assert.FileExists(t, filepath.Join(abs, name))
	}
}

// TestRun_ImplausibleSupplyRaisesAnAlert: the analysis path catches, on
// its own, a supply reading colder than the coil leaving air. Here the two
// points are swapped in the configuration (the coil's column mapped as the
// supply and the other way round), so the supply reads about 52 °F below
// a coil at about 62 °F: every hour is flagged supply_below_coil and
// sensor_implausible opens, where before the hours had full coverage and
// no alert.
func TestRun_ImplausibleSupplyRaisesAnAlert(t *testing.T) {
	dir := t.TempDir()
	cfg := site{ahus: []string{"AHU-1"}, schedule: "{backfill: 24h}",
		points: map[string]string{"AHU-1/leaving_temp": `{column: AHU1_SAT, unit: "F"}`, "AHU-1/supply_temp": `{column: AHU1_LAT, unit: "F"}`}}.write(t, dir, "site.yaml")
	asOf := time.Date(2026, 7, 20, 12, 30, 0, 0, time.UTC)
	from := asOf.Truncate(time.Hour).Add(-24 * time.Hour)
	data := filepath.Join(dir, "trends.csv")
	writeTrends(t, data, []string{"AHU-1"}, from, asOf.Sub(from))
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	code, stdout, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", asOf.Format(time.RFC3339))
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, stdout, "AHU-1: 24 hours")

	hours := storedHours(t, filepath.Join(dir, "dewline.db"))
	require.Len(t, hours, 24)
	flagged := 0
	for _, h := range hours {
		if strings.Contains(h.Flags, "supply_below_coil") {
			flagged++
		}
	}
	assert.Equal(t, 24, flagged, "every hour reads the supply below the coil: %v", hours[0].Flags)
	db := openSQLite(t, filepath.Join(dir, "dewline.db"))
	var n int
	require.NoError(t, db.QueryRow("SELECT count(*) FROM alerts WHERE kind = 'sensor_implausible' AND state = 'open'").Scan(&n))
	assert.Equal(t, 1, n, "sensor_implausible is open")
}
