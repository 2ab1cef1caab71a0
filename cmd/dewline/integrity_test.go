package main

import (
	"bytes"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/metrics"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// longExport writes a long export (time, point, value, unit) of the five
// points of analyzeConfig for two hours, with the supply temperature's
// unit cell given per minute by satUnit and its value by satValue.
func longExport(t *testing.T, path string, satUnit func(m int) string, satValue func(m int) float64) {
	t.Helper()
	var b strings.Builder
	b.WriteString("Time,Point,Value,Unit\n")
	start := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	for m := 0; m < 120; m++ {
		ts := start.Add(time.Duration(m) * time.Minute).Format("2006-01-02 15:04:05")
		fmt.Fprintf(&b, "%s,MAT,76,F\n%s,MARH,60,%%\n%s,LAT,52,F\n%s,SAT,%g,%s\n%s,CFM,8000,CFM\n",
			ts, ts, ts, ts, satValue(m), satUnit(m), ts)
	}
	require.NoError(t, os.WriteFile(path, []byte(b.String()), 0o600))
}

// storedSAT reads the supply temperature samples (°C, as stored) back.
func storedSAT(t *testing.T, dbPath string) []float64 {
	t.Helper()
	st, err := embedded.Open(context.Background(), dbPath, embedded.Options{ReadOnly: true})
	require.NoError(t, err)
	defer st.Close()
	var out []float64
	require.NoError(t, st.ReadSeries(context.Background(), metrics.PointRef{Column: "SAT"},
		time.Unix(0, 0), time.Date(2100, 1, 1, 0, 0, 0, 0, time.UTC), func(s ingest.Sample) error {
			out = append(out, s.Value)
			return nil
		}))
	return out
}

// TestImport_RowUnits: each row's unit is honoured by import and check.
// The supply temperature cycles through 70 °F, 21 °C and 294.15 K, all
// about 21.1 °C (°F = °C x 9/5 + 32, K = °C + 273.15: SI Brochure, 9th
// ed., 2019); every tenth row states "kPa", which is not a temperature,
// and is rejected and counted.
func TestImport_RowUnits(t *testing.T) {
	dir := t.TempDir()
	cfg, _ := writeScenario(t, dir)
	data := filepath.Join(dir, "long.csv")
	units := []string{"F", "C", "K"}
	values := []float64{70, 21.1111, 294.2611}
	longExport(t, data, func(m int) string {
		if m%10 == 9 {
			return "kPa"
		}
		return units[m%3]
	}, func(m int) float64 { return values[m%3] })

	code, out, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "rejected, unit not of the point's kind: 12")
	assert.Contains(t, out, `long.csv line 50: "SAT" states the unit "kPa", which is not a unit of temperature`)
	sat := storedSAT(t, filepath.Join(dir, "test.db"))
	require.Len(t, sat, 108, "120 minutes less the 12 rows in kPa")
	for i, v := range sat {
		assert.InDelta(t, 21.111, v, 0.001, "sample %d", i)
	}

	code, out, errOut = runCLI(t, "check", "--config", cfg, "--input", data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "rejected, unit not of the point's kind: 12")
	assert.Regexp(t, `AHU-7\s+supply_temp\s+SAT\s+F\s+108\s+.*\s0.0%`, out, "every value in range once converted")

	// A blank first unit cell does not let later °C rows be read as °F:
	// the first unit the file states must match the configuration.
	blank := filepath.Join(dir, "blank.csv")
	longExport(t, blank, func(m int) string {
		if m == 0 {
			return ""
		}
		return "C"
	}, func(m int) float64 { return 21.1111 })
	for _, cmd := range [][]string{{"import", "--config", cfg, blank}, {"check", "--config", cfg, "--input", blank},
		{"analyze", "--config", cfg, "--input", blank, "--no-store"}} {
		code, _, errOut = runCLI(t, append([]string{"--log-level", "warn"}, cmd...)...)
		assert.Equal(t, 1, code, cmd[0])
		assert.Contains(t, errOut, `blank.csv line 10: column "SAT" is in °C according to the file but F according to the configuration`, cmd[0])
	}
}

// TestCheck_RejectedShare: an export with more than 5 % of its rows
// rejected (importer.MaxRejectedShare, common practice, no source) needs
// a look, exit 3 with the reason, although every point's own figures look
// right; a few rejected rows do not. Here the rejected rows are written
// in a second time format (month/day/year with AM/PM) among ISO ones.
func TestCheck_RejectedShare(t *testing.T) {
	dir := t.TempDir()
	cfg, _ := writeScenario(t, dir)
	mixed := func(name string, other func(m int) bool) string {
		path := filepath.Join(dir, name)
		longExport(t, path, func(int) string { return "F" }, func(int) float64 { return 70 })
		b, err := os.ReadFile(path)
		require.NoError(t, err)
		lines := strings.Split(string(b), "\n")
		for i := 1; i < len(lines); i++ { // five rows a minute, after the header
			if m := (i - 1) / 5; lines[i] != "" && m > 0 && other(m) {
				ts, err := time.Parse("2006-01-02 15:04:05", lines[i][:19])
				require.NoError(t, err)
				lines[i] = ts.Format("01/02/2006 3:04:05 PM") + lines[i][19:]
			}
		}
		require.NoError(t, os.WriteFile(path, []byte(strings.Join(lines, "\n")), 0o600))
		return path
	}
	tests := []struct {
		name  string
		other func(m int) bool
		code  int
		want  string
	}{
		{"every other minute", func(m int) bool { return m%2 == 1 }, 3,
			`dewline check: 1 export(s) with more than 5 % of their rows rejected (common practice, no source): ` + filepath.Join(dir, "every.csv") + ` (300 rejected in 600 data rows, 50 %)`},
		{"one minute in forty", func(m int) bool { return m%40 == 39 }, 0, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path := mixed(strings.Fields(tt.name)[0]+".csv", tt.other)
			code, out, errOut := runCLI(t, "--log-level", "warn", "check", "--config", cfg, "--input", path)
			assert.Contains(t, out, "unparseable time", "the rejected rows are listed")
			require.Equal(t, tt.code, code, out+errOut)
			if tt.want != "" {
				assert.Contains(t, errOut, tt.want)
				assert.Contains(t, out, "needs a look: 50 % of the rows rejected, above the 5 % dewline check accepts")
			}
		})
	}
}

// TestImport_WideUnitLine: a wide export's unit for a column is stated
// once, in the header or in the unit row under it; a unit that differs
// from the configuration's names that line, not the first data row.
func TestImport_WideUnitLine(t *testing.T) {
	dir := t.TempDir()
	cfg, _ := writeScenario(t, dir)
	wide := func(name, header, unitRow string) string {
		var b strings.Builder
		b.WriteString(header + "\n")
		if unitRow != "" {
			b.WriteString(unitRow + "\n")
		}
		start := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
		for m := 0; m < 120; m++ {
			fmt.Fprintf(&b, "%s,76,60,52,21.1,8000\n", start.Add(time.Duration(m)*time.Minute).Format("2006-01-02 15:04:05"))
		}
		path := filepath.Join(dir, name)
		require.NoError(t, os.WriteFile(path, []byte(b.String()), 0o600))
		return path
	}
	for _, tt := range []struct{ name, path, want string }{
		{"unit row", wide("row.csv", "Time,MAT,MARH,LAT,SAT,CFM", ",°F,%,°F,°C,CFM"), `row.csv line 2: column "SAT" is in °C according to the file but F`},
		{"header", wide("head.csv", "Time,MAT,MARH,LAT,SAT (°C),CFM", ""), `head.csv line 1: column "SAT" is in °C according to the file but F`},
	} {
		t.Run(tt.name, func(t *testing.T) {
			for _, cmd := range [][]string{{"import", "--config", cfg, tt.path}, {"check", "--config", cfg, "--input", tt.path},
				{"analyze", "--config", cfg, "--input", tt.path, "--no-store"}} {
				code, _, errOut := runCLI(t, append([]string{"--log-level", "warn"}, cmd...)...)
				assert.Equal(t, 1, code, cmd[0])
				assert.Contains(t, errOut, tt.want, cmd[0])
			}
		})
	}
}

// TestAnalyze_OutputNeverDestroys: --out naming an input is refused and
// the input stays whole; a run that fails leaves the previous output as
// it was; a run that succeeds replaces it.
func TestAnalyze_OutputNeverDestroys(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	orig, err := os.ReadFile(data)
	require.NoError(t, err)

	code, _, errOut := runCLI(t, "--log-level", "error", "analyze", "--config", cfg, "--input", data, "--out", data, "--no-store")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "is also an input of this run")
	// The same file by another path.
	alias := filepath.Join(dir, "alias.csv")
	require.NoError(t, os.Symlink(data, alias))
	code, _, errOut = runCLI(t, "--log-level", "error", "analyze", "--config", cfg, "--input", data, "--out", alias, "--no-store")
	refusedUntouched(t, code, errOut, "is the same file as the input", data, orig)

	out := filepath.Join(dir, "hourly.csv")
	require.NoError(t, os.WriteFile(out, []byte("previous results\n"), 0o600))
	// An export whose unit conflicts with the configuration fails the run
	// after the output was opened.
	conflict := filepath.Join(dir, "conflict.csv")
	longExport(t, conflict, func(int) string { return "C" }, func(int) float64 { return 21 })
	code, _, errOut = runCLI(t, "--log-level", "error", "analyze", "--config", cfg, "--input", conflict, "--out", out, "--no-store")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "according to the configuration")
	got, err := os.ReadFile(out)
	require.NoError(t, err)
	assert.Equal(t, "previous results\n", string(got), "a failed run keeps the previous output")

	code, _, errOut = runCLI(t, "--log-level", "error", "analyze", "--config", cfg, "--input", data, "--out", out, "--no-store")
	require.Equal(t, 0, code, errOut)
	_, rows := readHourly(t, out)
	assert.Len(t, rows, 48)
	entries, err := os.ReadDir(dir)
	require.NoError(t, err)
	for _, e := range entries {
		assert.NotContains(t, e.Name(), ".tmp", "no temporary file left behind")
	}
}

// TestAnalyze_AlertEventsOnce: analysing a period again, or twice at
// once on one store file, records each alert transition once; events
// already delivered are not queued again.
func TestAnalyze_AlertEventsOnce(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	db := filepath.Join(dir, "test.db")
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	analyze := func() (int, string) {
		code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-13", "--to", "2026-07-15")
		return code, errOut
	}
	code, errOut := analyze()
	require.Equal(t, 0, code, errOut)
	first := storedEvents(t, db)
	require.NotEmpty(t, first, "the humid days raise alerts")
	eachEventOnce(t, first)

	code, errOut = analyze()
	require.Equal(t, 0, code, errOut)
	assert.Len(t, storedEvents(t, db), len(first), "a second analysis of the same period records nothing new")

	// Two analyses at once on one file.
	twiceAtOnce(t, analyze)
	assert.Len(t, storedEvents(t, db), len(first), "concurrent analyses record nothing new")

	// Delivered events stay delivered through another analysis.
	rw, err := sql.Open("sqlite", "file:"+db+"?_busy_timeout=5000")
	require.NoError(t, err)
	_, err = rw.Exec("UPDATE alert_events SET delivered_ms = 1")
	require.NoError(t, err)
	require.NoError(t, rw.Close())
	code, errOut = analyze()
	require.Equal(t, 0, code, errOut)
	for _, e := range storedEvents(t, db) {
		assert.True(t, e.DeliveredMs.Valid, "event %d (%s %s) queued again", e.Seq, e.AlertID, e.Transition)
	}
}

// twiceAtOnce runs cmd in two goroutines at once and requires both runs to
// succeed; cmd returns the exit code and the standard error.
func twiceAtOnce(t *testing.T, cmd func() (code int, stderr string)) {
	t.Helper()
	var wg sync.WaitGroup
	codes, outs := make([]int, 2), make([]string, 2)
	for i := range codes {
		wg.Add(1)
		go func() {
			defer wg.Done()
			codes[i], outs[i] = cmd()
		}()
	}
	wg.Wait()
	for i := range codes {
		require.Equal(t, 0, codes[i], outs[i])
	}
}

// eachEventOnce asserts that the webhook queue holds each alert transition
// (its delivery key) once.
func eachEventOnce(t *testing.T, events []storedEvent) {
	t.Helper()
	keys := map[string]int{}
	for _, e := range events {
		keys[e.AlertID+"/"+e.Transition]++
	}
	for k, n := range keys {
		assert.Equal(t, 1, n, "webhook key %s queued %d times", k, n)
	}
}

// TestInflux_AlertEventsOnce: with InfluxDB as the store, two agents
// computing the same hours at once (as after a reshard) and a third run
// over them record each alert transition once in the webhook queue, and
// each alert transition point once in the real server.
func TestInflux_AlertEventsOnce(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "events_once")
	dir := t.TempDir()
	_, data := writeScenario(t, dir)
	meas := "ahu7"
	cfg := influxConfig(t, dir, inMeasurement(analyzeConfig, meas), url, db, "\nschedule: {backfill: 96h}")
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)

	runOnce := func() (int, string) {
		code, _, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", "2026-07-16T06:00:00Z")
		return code, errOut
	}
	twiceAtOnce(t, runOnce)
	state := filepath.Join(dir, "dewline-state.db")
	events := storedEvents(t, state)
	require.NotEmpty(t, events, "the humid days raise alerts")
	eachEventOnce(t, events)
	// An analysis of the same period into the same server adds no point.
	count := func() int {
		n := 0
		for _, s := range influxQL(t, url, db, `SELECT count("open") FROM dewline_alert GROUP BY *`) {
			for _, r := range s.rows() {
				c, _ := r["count"].(json.Number).Int64()
				n += int(c)
			}
		}
		return n
	}
	before := count()
	if !assert.Equal(t, len(events), before, "one point per transition") {
		for _, e := range events {
			t.Logf("event %s %s %d", e.AlertID, e.Transition, e.AtMs)
		}
		for _, s := range influxQL(t, url, db, `SELECT * FROM dewline_alert`) {
			for _, r := range s.rows() {
				t.Logf("point %v %v %v %v", r["id"], r["status"], r["time"], r["severity"])
			}
		}
	}
	code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-12T06:00:00Z", "--to", "2026-07-16T06:00:00Z")
	require.Equal(t, 0, code, errOut)
	if !assert.Equal(t, before, count()) {
		for _, s := range influxQL(t, url, db, `SELECT * FROM dewline_alert`) {
			for _, r := range s.rows() {
				t.Logf("point %v %v %v %v", r["id"], r["status"], r["time"], r["severity"])
			}
		}
	}
}

// TestAnalyze_ResultsAndAlertsTogether: when the store refuses the alerts
// of an analysis (a trigger stands in for any failure between the two
// writes), no hourly row of it is stored either.
func TestAnalyze_ResultsAndAlertsTogether(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	db := filepath.Join(dir, "test.db")
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	rw, err := sql.Open("sqlite", "file:"+db+"?_busy_timeout=5000")
	require.NoError(t, err)
	_, err = rw.Exec(`CREATE TRIGGER refuse_alerts BEFORE INSERT ON alerts BEGIN SELECT RAISE(ABORT, 'alerts refused'); END`)
	require.NoError(t, err)
	require.NoError(t, rw.Close())

	code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-13", "--to", "2026-07-15")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "alerts refused")
	assert.Empty(t, storedHours(t, db), "no hours stored without their alerts")
}

// TestImport_NothingWrittenFails: an import that stores nothing exits 1
// and says why and what to change; the other files are still imported.
func TestImport_NothingWrittenFails(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	other := filepath.Join(dir, "lights.csv")
	require.NoError(t, os.WriteFile(other, []byte("Time,Lobby lights,Garage fan\n2026-07-14 00:00:00,1,0\n2026-07-14 00:01:00,1,1\n"), 0o600))
	code, out, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, other, data)
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "lights.csv: nothing was written to the store (2 rows read, 4 values, 0 rejected): none of the file's series is mapped to a point in "+cfg)
	assert.Contains(t, out, "export.csv: 2880 rows read, 14400 values accepted, 14400 written to the store", "the other file is imported")

	noRows := filepath.Join(dir, "header-only.csv")
	require.NoError(t, os.WriteFile(noRows, []byte("Time,MAT,MARH,LAT,SAT,CFM\n"), 0o600))
	code, _, errOut = runCLI(t, "--log-level", "warn", "import", "--config", cfg, noRows)
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "header-only.csv: nothing was written to the store (0 rows read, 0 values, 0 rejected): the file has a header but no data rows")
}

// TestImport_BadFilesDoNotStopTheOthers: files that fail for a reason of
// their own (empty, binary, missing, a gzip cut short part-way, no data
// rows) are each reported with the reason and the fix, the good files
// before and after them are imported, what the cut file stored before its
// end stays stored, and the command exits 1 naming the files that failed.
func TestImport_BadFilesDoNotStopTheOthers(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	again := filepath.Join(dir, "again.csv")
	raw, err := os.ReadFile(data)
	require.NoError(t, err)
	require.NoError(t, os.WriteFile(again, raw, 0o600))

	empty := filepath.Join(dir, "empty.csv")
	require.NoError(t, os.WriteFile(empty, nil, 0o600))
	binary := filepath.Join(dir, "binary.csv")
	require.NoError(t, os.WriteFile(binary, []byte("PK\x03\x04\x00\x00\x08\x00 not an export\x00\x01\x02"), 0o600))
	missing := filepath.Join(dir, "missing.csv")
	noRows := filepath.Join(dir, "header-only.csv")
	require.NoError(t, os.WriteFile(noRows, []byte("Time,MAT,MARH,LAT,SAT,CFM\n"), 0o600))

	// Twenty days of June (before the scenario's July days), more than a
	// batch of the importer, gzipped and cut at nine tenths.
	from := time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	june := minuteExport("Time,MAT,MARH,LAT,SAT,CFM", from, from.Add(20*24*time.Hour), func(ts time.Time) string {
		return fmt.Sprintf(",%.2f,60.0,52.00,62.00,8000", 76+float64(ts.Minute())/100)
	})
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	_, err = zw.Write([]byte(june))
	require.NoError(t, err)
	require.NoError(t, zw.Close())
	cut := filepath.Join(dir, "cut.csv.gz")
	require.NoError(t, os.WriteFile(cut, gz.Bytes()[:gz.Len()*9/10], 0o600))

	code, out, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, empty, binary, data, missing, cut, noRows, again)
	assert.Equal(t, 1, code)
	assert.Contains(t, out, "export.csv: 2880 rows read, 14400 values accepted, 14400 written to the store")
	assert.Contains(t, out, "again.csv: 2880 rows read, 14400 values accepted, 14400 written to the store", "a good file after the bad ones")
	assert.Contains(t, errOut, fmt.Sprintf("5 of 7 files not imported, or only in part: %s, %s, %s, %s, %s", empty, binary, missing, cut, noRows))
	assert.Contains(t, errOut, empty+": file is empty")
	assert.Contains(t, errOut, "export the trend log again")
	assert.Contains(t, errOut, binary+": not a delimited text file")
	assert.Contains(t, errOut, "no such file or directory; check the path")
	assert.Contains(t, errOut, noRows+": nothing was written to the store (0 rows read, 0 values, 0 rejected): the file has a header but no data rows")
	assert.Contains(t, errOut, cut+" line ")

	// The cut file: its error names the last line stored, and the store
	// holds exactly the five values of every data line up to it.
	m := regexp.MustCompile(regexp.QuoteMeta("every value of "+cut+" up to line ") + `(\d+) is stored`).FindStringSubmatch(errOut)
	require.NotNil(t, m, "the cut file's error says up to which line it is stored:\n%s", errOut)
	line, err := strconv.Atoi(m[1])
	require.NoError(t, err)
	require.Greater(t, line, 1000, "part of the cut file is stored")
	type count struct{ n int }
	got := sqliteRows(t, filepath.Join(dir, "test.db"), fmt.Sprintf("SELECT COALESCE(SUM(n), 0) FROM sample_blocks WHERE day_ms < %d", time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC).UnixMilli()),
		func(c *count) []any { return []any{&c.n} })
	assert.Equal(t, 5*(line-1), got[0].n, "the values of lines 2..%d of the cut file", line)
}

// TestImport_StoreFailureStops: when the store refuses a write, the
// import stops at once rather than try the next file into the same store.
func TestImport_StoreFailureStops(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	noRows := filepath.Join(dir, "header-only.csv")
	require.NoError(t, os.WriteFile(noRows, []byte("Time,MAT,MARH,LAT,SAT,CFM\n"), 0o600))
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	rw, err := sql.Open("sqlite", "file:"+filepath.Join(dir, "test.db")+"?_busy_timeout=5000")
	require.NoError(t, err)
	_, err = rw.Exec(`CREATE TRIGGER refuse_samples BEFORE INSERT ON sample_blocks BEGIN SELECT RAISE(ABORT, 'samples refused'); END`)
	require.NoError(t, err)
	require.NoError(t, rw.Close())
	again := filepath.Join(dir, "again.csv")
	raw, err := os.ReadFile(data)
	require.NoError(t, err)
	require.NoError(t, os.WriteFile(again, raw, 0o600))

	code, out, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, noRows, data, again)
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "samples refused")
	assert.Contains(t, errOut, "nothing of "+data+" was stored")
	assert.Contains(t, errOut, "1 of 3 files not imported, or only in part: "+noRows, "the file that failed before the store did")
	assert.NotContains(t, out, "again.csv", "no file is tried after the store failed")
}

// TestServe_ReadOnlyFolderAndReadiness: serve opens a store in a folder
// it cannot write (as another user when the test runs as root, else with
// the folder made read-only), and /readyz follows the store: 503 while
// its file is gone, 200 again when it is back.
func TestServe_ReadOnlyFolderAndReadiness(t *testing.T) {
	dir, err := os.MkdirTemp("", "dewline-ro-*")
	require.NoError(t, err)
	t.Cleanup(func() { _ = os.Chmod(dir, 0o755); _ = os.RemoveAll(dir) })
	cfg, data := writeScenario(t, dir)
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	mustCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15")
	db := filepath.Join(dir, "test.db")
	for _, suffix := range []string{"-wal", "-shm"} {
		_, err := os.Stat(db + suffix)
		require.True(t, os.IsNotExist(err), "the writer closed the store cleanly")
	}
	// A copy of the binary every user may run.
	bin := filepath.Join(dir, "dewline")
	b, err := os.ReadFile(dewlineBinary(t))
	require.NoError(t, err)
	require.NoError(t, os.WriteFile(bin, b, 0o755))
	for _, f := range []string{cfg, db, data} {
		require.NoError(t, os.Chmod(f, 0o644))
	}
	args := []string{bin, "--log-level", "info", "serve", "--config", cfg, "--listen", "127.0.0.1:0"}
	if os.Geteuid() == 0 {
		setpriv, err := exec.LookPath("setpriv")
		require.NoError(t, err, "setpriv (util-linux) runs serve as another user")
		args = append([]string{setpriv, "--reuid=65534", "--regid=65534", "--clear-groups"}, args...)
		require.NoError(t, os.Chmod(dir, 0o755)) // not writable by that user
	} else {
		require.NoError(t, os.Chmod(dir, 0o555))
	}
	cmd := exec.Command(args[0], args[1:]...)
	var stderr bytes.Buffer
	var mu sync.Mutex
	cmd.Stderr = &lockedWriter{mu: &mu, w: &stderr}
	require.NoError(t, cmd.Start())
	exited := make(chan struct{})
	go func() { _ = cmd.Wait(); close(exited) }()
	t.Cleanup(func() { _ = cmd.Process.Kill(); <-exited })
	var base string
	deadline := time.Now().Add(60 * time.Second)
	for base == "" {
		mu.Lock()
		text := stderr.String()
		mu.Unlock()
		for _, line := range strings.Split(text, "\n") {
			var l logLine
			if json.Unmarshal([]byte(line), &l) == nil && l.str("message") == "dashboard listening" {
				base = strings.TrimSuffix(l.str("url"), "/")
			}
		}
		select {
		case <-exited:
			t.Fatalf("serve exited:\n%s", text)
		default:
		}
		require.True(t, time.Now().Before(deadline), "serve did not start:\n%s", text)
		time.Sleep(100 * time.Millisecond)
	}
	status, body := httpGet(t, base, "/readyz")
	assert.Equal(t, 200, status, body)
	status, _ = httpGet(t, base, "/")
	assert.Equal(t, 200, status)
	_, err = os.Stat(db + "-shm")
	assert.True(t, os.IsNotExist(err), "serve wrote nothing beside the store")

	// The store goes away and comes back (a disk unmounted and mounted).
	require.NoError(t, os.Chmod(dir, 0o755))
	require.NoError(t, os.Rename(db, db+".away"))
	waitHTTP(t, base, "/readyz", 30*time.Second, "/readyz 503 without the store", func(s int, _ string) bool { return s == 503 })
	require.NoError(t, os.Rename(db+".away", db))
	waitHTTP(t, base, "/readyz", 30*time.Second, "/readyz 200 with the store back", func(s int, _ string) bool { return s == 200 })
}

// endless is a trend export that never ends: one-minute rows forever.
type endless struct {
	m   int
	buf []byte
}

func (e *endless) Read(p []byte) (int, error) {
	if len(e.buf) == 0 {
		if e.m == 0 {
			e.buf = []byte("Time,MAT,MARH,LAT,SAT,CFM\n")
		}
		ts := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC).Add(time.Duration(e.m) * time.Minute)
		e.buf = fmt.Appendf(e.buf, "%s,76.00,60.0,52.00,62.00,8000\n", ts.Format("2006-01-02 15:04:05"))
		e.m++
	}
	n := copy(p, e.buf)
	e.buf = e.buf[n:]
	return n, nil
}

// TestImport_OnePass: import reads its input once, hashing what it
// parses: a pipe on /dev/stdin imports whole, the import log's SHA-256 is
// the file's (computed here with crypto/sha256), and an endless pipe stops
// at --max-mib with an error that names the limit.
func TestImport_OnePass(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	raw, err := os.ReadFile(data)
	require.NoError(t, err)
	want := fmt.Sprintf("%x", sha256.Sum256(raw))

	run := func(stdin io.Reader, args ...string) (int, string, string) {
		cmd := exec.Command(dewlineBinary(t), args...)
		cmd.Env = childEnv()
		cmd.Stdin = stdin
		var o, e bytes.Buffer
		cmd.Stdout, cmd.Stderr = &o, &e
		err := cmd.Run()
		code := 0
		var ee *exec.ExitError
		if errors.As(err, &ee) {
			code = ee.ExitCode()
		} else {
			require.NoError(t, err)
		}
		return code, o.String(), e.String()
	}
	code, out, errOut := run(bytes.NewReader(raw), "--log-level", "warn", "import", "--config", cfg, "/dev/stdin")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "/dev/stdin: 2880 rows read, 14400 values accepted, 14400 written to the store")
	code, _, errOut = runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)

	type imported struct{ file, sum string }
	var sums []string
	for _, r := range sqliteRows(t, filepath.Join(dir, "test.db"), "SELECT file, sha256 FROM imports ORDER BY id",
		func(r *imported) []any { return []any{&r.file, &r.sum} }) {
		sums = append(sums, r.sum)
	}
	assert.Equal(t, []string{want, want}, sums, "the pipe and the file hash alike")

	code, _, errOut = run(&endless{}, "--log-level", "warn", "import", "--config", cfg, "--max-mib", "1", "/dev/stdin")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "more than --max-mib 1 MiB read (an endless pipe?); split the export or raise --max-mib")
}

// TestImport_UnknownPointsSummarised: points the configuration does not
// map are reported as one line with a count and the first few names, not
// a line each.
func TestImport_UnknownPointsSummarised(t *testing.T) {
	dir := t.TempDir()
	cfg, _ := writeScenario(t, dir)
	var b strings.Builder
	b.WriteString("Time,MAT,MARH,LAT,SAT,CFM")
	for i := range 200 {
		fmt.Fprintf(&b, ",Zone %03d temp", i)
	}
	b.WriteString("\n")
	for m := range 3 {
		fmt.Fprintf(&b, "2026-07-14 00:%02d:00,76,60,52,62,8000", m)
		for range 200 {
			b.WriteString(",71.5")
		}
		b.WriteString("\n")
	}
	data := filepath.Join(dir, "zones.csv")
	require.NoError(t, os.WriteFile(data, []byte(b.String()), 0o600))
	code, out, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, `skipped: 200 series not in the configuration (600 values), e.g. "Zone 000 temp" (3), "Zone 001 temp" (3), "Zone 002 temp" (3), "Zone 003 temp" (3), "Zone 004 temp" (3) and 195 more`)
	assert.LessOrEqual(t, strings.Count(out, "\n"), 5, "a summary, not a line per point:\n%s", out)

	code, out, errOut = runCLI(t, "check", "--config", cfg, "--input", data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, `200 series not in the configuration (600 values), e.g. "Zone 000 temp" (3)`)
	assert.NotContains(t, out, "Zone 199 temp")
}

// TestCheck_OpenListenNeedsToken: check refuses an http.listen beyond
// loopback without http.token_env, naming the key and the fix.
func TestCheck_OpenListenNeedsToken(t *testing.T) {
	code, _, errOut := runCLI(t, "check", "--config", "../../testdata/config/open-listen.bad.yaml")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, `open-listen.bad.yaml:4: http.listen: "0.0.0.0:9470" listens beyond loopback without a token`)
	assert.Contains(t, errOut, "set http.token_env")
}

// TestDemo_RefusesAnExistingSite: demo --dir D refuses a folder holding a
// site it did not write, and leaves it untouched; --force overrides. (The
// run stops at the flag check, before any generation, so the test is
// quick; the end-to-end demo test covers the writing.)
func TestDemo_RefusesAnExistingSite(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	store := filepath.Join(dir, "demo.db")
	require.NoError(t, os.WriteFile(store, []byte("a site's own store"), 0o600))
	code, _, errOut := runCLI(t, "demo", "--dir", dir, "--no-serve", "--days", "2")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "already holds files the demo did not write (demo.db, export.csv, site.yaml)")
	assert.Contains(t, errOut, "add --force")
	for _, f := range []string{cfg, data, store} {
		_, err := os.Stat(f)
		assert.NoError(t, err)
	}
	got, err := os.ReadFile(store)
	require.NoError(t, err)
	assert.Equal(t, "a site's own store", string(got))
	_, err = os.Stat(filepath.Join(dir, ".dewline-demo"))
	assert.True(t, os.IsNotExist(err), "nothing written")

	// With --force the check passes (the bad --days then stops the run
	// before it writes anything).
	code, _, errOut = runCLI(t, "demo", "--dir", dir, "--force", "--no-serve", "--days", "2")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "--days 2")
	// A folder the demo marked as its own passes without --force.
	require.NoError(t, os.WriteFile(filepath.Join(dir, ".dewline-demo"), nil, 0o600))
	code, _, errOut = runCLI(t, "demo", "--dir", dir, "--no-serve", "--days", "2")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "--days 2")
}

// refusedUntouched asserts a refusal, exit 2 with msg in the error output,
// that left the file at path with its bytes as they were (orig).
func refusedUntouched(t *testing.T, code int, errOut, msg, path string, orig []byte) {
	t.Helper()
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, msg)
	got, err := os.ReadFile(path)
	require.NoError(t, err)
	assert.Equal(t, orig, got, "%s is untouched", path)
}
