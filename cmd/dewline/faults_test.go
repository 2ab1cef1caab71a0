package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/webhook"

	"github.com/dewline/dewline/deploy/testkit"
)

// The fault tests run the dewline binary as a separate process against real
// services (a private InfluxDB server, the embedded SQLite file, a webhook
// receiver) and break them: a store that stops, answers slowly or with
// errors, a process killed with SIGKILL, a broken air handler, a
// daylight-saving change. What they check is the agent's promise: a
// checkpoint moves only after its hours are written, every hour is written
// exactly once, and the results equal those of a run without the fault.

// runBound is the liveness bound of one --once run: it fails the test rather
// than hang it, and is far above what a run takes.
const runBound = 2 * time.Minute

var onceLine = regexp.MustCompile(`(?m)^(\S+): (\d+) hours, checkpoint (\S+), (\d+) alerts opened`)

// ahuOutcome is one air handler's line of "run --once".
type ahuOutcome struct {
	hours      int
	checkpoint string
	opened     int
}

// onceReport reads the per air handler lines of "run --once".
func onceReport(t *testing.T, stdout string) map[string]ahuOutcome {
	t.Helper()
	out := map[string]ahuOutcome{}
	for _, m := range onceLine.FindAllStringSubmatch(stdout, -1) {
		n, err := strconv.Atoi(m[2])
		require.NoError(t, err)
		o, err := strconv.Atoi(m[4])
		require.NoError(t, err)
		out[m[1]] = ahuOutcome{n, m[3], o}
	}
	return out
}

// TestFault_DaylightSavingFallBack runs the agent at site times around the
// US fall-back change of 2026-11-01 in America/Chicago, when 01:00-02:00
// happens twice (first CDT, UTC-5, then CST, UTC-6). The slot is the last
// complete UTC hour, so the four runs end at four different UTC hours, one
// apart, and the hourly table has every UTC hour once: the repeated local
// hour is two UTC hours, each with a full hour of readings.
func TestFault_DaylightSavingFallBack(t *testing.T) {
	dir := t.TempDir()
	cfg := site{schedule: "{backfill: 12h, lookback: 3h}", ahus: []string{"AHU-1"}}.write(t, dir, "site.yaml")
	// 2026-10-31 17:00Z (12:00 CDT) to 2026-11-01 12:00Z (06:00 CST).
	importTrends(t, dir, cfg, []string{"AHU-1"}, time.Date(2026, 10, 31, 17, 0, 0, 0, time.UTC), 19*time.Hour)

	// A bare 01:30 site time happens twice that night: it is refused, not
	// guessed; with its offset, the first 01:30 (CDT, 06:30Z) has 05:00Z
	// as the last complete hour.
	r := runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--dry-run", "--as-of", "2026-11-01T01:30")
	require.Equal(t, 2, r.code)
	assert.Contains(t, r.stderr, "happens twice")
	r = runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--dry-run", "--as-of", "2026-11-01T01:30:00-05:00")
	require.Equal(t, 0, r.code, r.stderr)
	assert.Contains(t, r.stdout, "AHU-1: checkpoint would move to 2026-11-01T05:00:00Z")

	runs := []struct {
		name, asOf, checkpoint string
		hours                  int
	}{
		// 00:30 CDT = 05:30Z: 12 h of backfill, 17:00Z..04:00Z.
		{"before the change", "2026-11-01T00:30", "2026-11-01T04:00:00Z", 12},
		// Each later run: the new hour and the 3 h lookback before it, so
		// 3 hours, which also shows that each run is one UTC hour later.
		{"first 01:30 (CDT)", "2026-11-01T01:30:00-05:00", "2026-11-01T05:00:00Z", 3},
		{"second 01:30 (CST)", "2026-11-01T01:30:00-06:00", "2026-11-01T06:00:00Z", 3},
		{"after the change", "2026-11-01T02:30", "2026-11-01T07:00:00Z", 3},
	}
	for _, tt := range runs {
		r := runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", tt.asOf)
		require.Equal(t, 0, r.code, "%s: %s", tt.name, r.stderr)
		got := onceReport(t, r.stdout)["AHU-1"]
		assert.Equal(t, tt.checkpoint, got.checkpoint, tt.name)
		assert.Equal(t, tt.hours, got.hours, tt.name)
		assert.Equal(t, tt.checkpoint, checkpoints(t, filepath.Join(dir, "dewline.db"))["AHU-1"].Format(time.RFC3339), tt.name)
	}

	hours := storedHours(t, filepath.Join(dir, "dewline.db"))
	first := time.Date(2026, 10, 31, 17, 0, 0, 0, time.UTC)
	last := time.Date(2026, 11, 1, 7, 0, 0, 0, time.UTC)
	require.Len(t, hours, int(last.Sub(first)/time.Hour)+1, "every UTC hour 17:00Z..07:00Z once")
	for i, h := range hours {
		want := first.Add(time.Duration(i) * time.Hour)
		require.Equal(t, want.UnixMilli(), h.HourMs, "hour %d is %s", i, time.UnixMilli(h.HourMs).UTC())
		// Every hour, the two 01:00 local hours included, holds its 60
		// one-minute readings.
		assert.Contains(t, h.Fields, `"coverage":1,`, "hour %s", want.Format(time.RFC3339))
	}
}

// TestFault_KillDuringBackfill kills "run --once" with SIGKILL part way
// through a month of backfill on the embedded store, runs the same command
// again, and compares the file with a reference store that ran without the
// kill: the same hourly rows (every hour once, field for field) and the same
// alert events, none repeated.
func TestFault_KillDuringBackfill(t *testing.T) {
	ahus := []string{"AHU-1", "AHU-2", "AHU-3"}
	s := site{schedule: "{backfill: 720h}", ahus: ahus}
	from := time.Date(2026, 6, 1, 5, 0, 0, 0, time.UTC) // 2026-06-01 00:00 CDT
	const asOf = "2026-07-01T00:30"                     // 05:30Z: the slot is 04:00Z, 720 hours after from
	slot := from.Add(719 * time.Hour)

	killed, ref := t.TempDir(), t.TempDir()
	data := filepath.Join(killed, "trends.csv")
	writeTrends(t, data, ahus, from, 30*24*time.Hour)
	for _, dir := range []string{killed, ref} {
		cfg := s.write(t, dir, "site.yaml")
		r := runDewline(t, runBound, "--log-level", "warn", "import", "--config", cfg, data)
		require.Equal(t, 0, r.code, r.stderr)
	}
	args := []string{"run", "--config", filepath.Join(killed, "site.yaml"), "--once", "--as-of", asOf}

	p := startDewline(t, args...)
	progress := p.waitLog(t, runBound, `"backfill progress"`, msgIs("backfill progress"))
	p.kill(t)
	t.Logf("killed after %s %s through %s", progress.str("ahu"), progress.str("message"), progress.str("through"))
	cps := checkpoints(t, filepath.Join(killed, "dewline.db"))
	partial := false
	for _, id := range ahus {
		cp, ok := cps[id]
		if !ok || cp.Before(slot) {
			partial = true
		}
		if ok {
			t.Logf("after the kill: %s checkpoint %s", id, cp.Format(time.RFC3339))
		}
	}
	require.True(t, partial, "the kill came after the run had finished; it must interrupt the backfill")
	// No checkpoint is ahead of its hours: every hour up to it is stored.
	perAHU := map[string]int{}
	for _, h := range storedHours(t, filepath.Join(killed, "dewline.db")) {
		perAHU[h.AHU]++
	}
	for id, cp := range cps {
		assert.GreaterOrEqual(t, perAHU[id], int(cp.Sub(from)/time.Hour)+1, "%s: hours up to its checkpoint", id)
	}

	r := runDewline(t, runBound, append([]string{"--log-level", "warn"}, args...)...)
	require.Equal(t, 0, r.code, r.stderr)
	r = runDewline(t, runBound, "--log-level", "warn", "run", "--config", filepath.Join(ref, "site.yaml"), "--once", "--as-of", asOf)
	require.Equal(t, 0, r.code, r.stderr)

	got, want := storedHours(t, filepath.Join(killed, "dewline.db")), storedHours(t, filepath.Join(ref, "dewline.db"))
	require.Len(t, want, 3*720)
	require.Len(t, got, len(want))
	for i := range want {
		require.Equal(t, want[i], got[i], "row %d", i)
	}
	for i, h := range got {
		assert.Equal(t, from.Add(time.Duration(i%720)*time.Hour).UnixMilli(), h.HourMs, "row %d: every hour once, in order", i)
	}

	evGot, evWant := storedEvents(t, filepath.Join(killed, "dewline.db")), storedEvents(t, filepath.Join(ref, "dewline.db"))
	require.NotEmpty(t, evWant, "the scenario opens and closes alerts")
	type key struct{ id, transition string }
	seen := map[key]int{}
	for _, e := range evGot {
		seen[key{e.AlertID, e.Transition}]++
	}
	for k, n := range seen {
		assert.Equal(t, 1, n, "event %s/%s stored %d times", k.id, k.transition, n)
	}
	require.Len(t, evGot, len(evWant))
	byTime := func(ev []storedEvent) {
		sort.SliceStable(ev, func(i, j int) bool { return ev[i].AtMs < ev[j].AtMs })
	}
	byTime(evGot)
	byTime(evWant)
	for i := range evWant {
		// Sequence numbers may differ; the events may not.
		assert.Equal(t, []any{evWant[i].AlertID, evWant[i].Transition, evWant[i].AtMs, evWant[i].Payload},
			[]any{evGot[i].AlertID, evGot[i].Transition, evGot[i].AtMs, evGot[i].Payload}, "event %d", i)
	}
	t.Logf("%d hourly rows and %d alert events, equal to the run without the kill", len(got), len(evGot))
}

// webhookReceiver records alert deliveries. It holds the delivery numbered
// hold (1-based) without answering until the sender goes away, and closes
// held when it arrives.
type webhookReceiver struct {
	mu   sync.Mutex
	got  []delivery
	hold int
	held chan struct{}
}

type delivery struct{ key, body string }

func (rc *webhookReceiver) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	body, _ := io.ReadAll(r.Body)
	rc.mu.Lock()
	rc.got = append(rc.got, delivery{r.Header.Get(webhook.EventHeader), string(body)})
	n := len(rc.got)
	rc.mu.Unlock()
	if n == rc.hold {
		close(rc.held)
		<-r.Context().Done() // the sender is killed while it waits for the answer
		return
	}
	w.WriteHeader(http.StatusNoContent)
}

func (rc *webhookReceiver) deliveries() []delivery {
	rc.mu.Lock()
	defer rc.mu.Unlock()
	return append([]delivery(nil), rc.got...)
}

// TestFault_KillWithWebhook kills the long-running agent with SIGKILL while
// it backfills a month and while a webhook delivery is in flight (the
// receiver has the request and has not answered), then starts it again.
// Every alert event reaches the receiver; the one in flight at the kill is
// posted again after the restart, with the same X-Dewline-Event key and
// body, and it is the only repeat: the events answered before the kill are
// not posted again.
func TestFault_KillWithWebhook(t *testing.T) {
	rc := &webhookReceiver{hold: 3, held: make(chan struct{})}
	srv := httptest.NewServer(rc)
	t.Cleanup(srv.Close)

	dir := t.TempDir()
	ahus := []string{"AHU-1", "AHU-2"}
	cfg := site{
		schedule: "{backfill: 720h}",
		extra:    fmt.Sprintf("http: {listen: \"127.0.0.1:0\"}\nwebhook: {url: %q, max_age: 2000h}\n", srv.URL),
		ahus:     ahus,
	}.write(t, dir, "site.yaml")
	// A month of readings up to now: the long-running agent computes up
	// to the last complete hour of the wall clock.
	importUntilNow(t, dir, cfg, ahus, 720*time.Hour)

	p := startDewline(t, "run", "--config", cfg)
	select {
	case <-rc.held:
	case <-time.After(runBound):
		t.Fatalf("no third webhook delivery within %s\n%s", runBound, p.stderrText())
	}
	p.kill(t)
	store := filepath.Join(dir, "dewline.db")
	for id, cp := range checkpoints(t, store) {
		t.Logf("after the kill: %s checkpoint %s", id, cp.Format(time.RFC3339))
	}
	before := len(rc.deliveries())

	p = startDewline(t, "run", "--config", cfg)
	base := "http://" + p.httpAddr(t)
	waitHTTP(t, base, "/metrics", runBound, "every air handler caught up", func(status int, body string) bool {
		for _, id := range ahus {
			if lag, ok := metricValue(body, "dewline_lag_hours", `ahu="`+id+`"`); !ok || lag != 0 {
				return false
			}
		}
		return status == http.StatusOK
	})
	deadline := time.Now().Add(runBound)
	for {
		pending := 0
		for _, e := range storedEvents(t, store) {
			if !e.DeliveredMs.Valid {
				pending++
			}
		}
		if pending == 0 {
			break
		}
		require.True(t, time.Now().Before(deadline), "%d events still undelivered after %s", pending, runBound)
		time.Sleep(200 * time.Millisecond)
	}
	p.stop(t, 30*time.Second)

	events := storedEvents(t, store)
	require.NotEmpty(t, events)
	stored := map[string]string{}
	for _, e := range events {
		k := e.AlertID + "/" + e.Transition
		_, dup := stored[k]
		assert.False(t, dup, "event %s stored twice", k)
		stored[k] = e.Payload
	}
	got := rc.deliveries()
	byKey := map[string][]string{}
	for _, d := range got {
		byKey[d.key] = append(byKey[d.key], d.body)
	}
	var repeated []string
	for k, bodies := range byKey {
		payload, ok := stored[k]
		assert.True(t, ok, "delivered %s, which is no stored event", k)
		for _, b := range bodies {
			assert.JSONEq(t, payload, b, "%s: every delivery carries the stored payload", k)
		}
		if len(bodies) > 1 {
			repeated = append(repeated, fmt.Sprintf("%s x%d", k, len(bodies)))
		}
	}
	for k := range stored {
		assert.Contains(t, byKey, k, "event %s never delivered", k)
	}
	held := got[rc.hold-1].key
	assert.Equal(t, []string{held + " x2"}, repeated, "only the delivery in flight at the kill is repeated")
	t.Logf("%d events stored, %d deliveries (%d before the kill); repeats: %v", len(events), len(got), before, repeated)
}

// sameInfluxResults asserts that two databases hold the same dewline_hourly
// points (every field, as the server prints it) and the same dewline_alert
// points for the air handlers.
func sameInfluxResults(t *testing.T, base, gotDB, wantDB string, ahus []string) {
	t.Helper()
	for _, id := range ahus {
		got, want := influxHourly(t, base, gotDB, id), influxHourly(t, base, wantDB, id)
		require.NotEmpty(t, want, id)
		require.Equal(t, len(want), len(got), "%s: hourly points", id)
		for i := range want {
			require.Equal(t, want[i], got[i], "%s hour %v", id, want[i]["time"])
		}
	}
	q := `SELECT * FROM dewline_alert GROUP BY "ahu", "kind", "status" ORDER BY time`
	got, want := influxQL(t, base, gotDB, q), influxQL(t, base, wantDB, q)
	require.NotEmpty(t, want, "the scenario opens alerts")
	require.Equal(t, want, got, "dewline_alert")
}

// TestFault_InfluxStopped stops the InfluxDB server that holds the trend
// points and takes the results, between runs and in the middle of one, and
// starts it again on the same port with the same data; the runs are at
// site times hours apart (--as-of). A run that cannot reach the store fails
// (exit 1) without moving a checkpoint; a run cut off half way keeps the
// checkpoint at the last hour the server confirmed; the next run with the
// server back catches up. In the end every hour is in dewline_hourly once,
// and dewline_hourly and dewline_alert equal those of the same runs into a
// second database with no fault.
func TestFault_InfluxStopped(t *testing.T) {
	srv := startOwnInflux(t)
	ahus := []string{"AHU-1", "AHU-2", "AHU-3"}
	meas := "annex_trend"
	from := time.Date(2026, 7, 14, 5, 0, 0, 0, time.UTC) // 00:00 CDT
	faulty, ref := t.TempDir(), t.TempDir()
	data := filepath.Join(faulty, "trends.csv")
	writeTrends(t, data, ahus, from, 72*time.Hour)
	const refDB = "dewline_ref"
	influxQL(t, srv.url, "", "CREATE DATABASE "+refDB)
	cfgs := map[string]string{}
	for dir, db := range map[string]string{faulty: "dewline_test", ref: refDB} {
		cfgs[dir] = site{store: influxStore(srv.url, db, "5s"), meas: meas, schedule: "{backfill: 72h}", ahus: ahus}.write(t, dir, "site.yaml")
		r := runDewline(t, runBound, "--log-level", "warn", "import", "--config", cfgs[dir], data)
		require.Equal(t, 0, r.code, r.stderr)
		assert.Contains(t, r.stdout, "64800 written to the store", "72 h x 60 min x 5 points x 3 air handlers")
	}
	run := func(dir, asOf string) result {
		return runDewline(t, runBound, "run", "--config", cfgs[dir], "--once", "--as-of", asOf)
	}
	cps := func() map[string]time.Time { return influxCheckpoints(t, srv.url, "dewline_test") }
	const (
		t0 = "2026-07-14T15:30" // 20:30Z: slot 19:00Z
		t1 = "2026-07-15T01:30" // 06:30Z: slot 05:00Z, ten hours later
		t2 = "2026-07-16T23:30" // 04:30Z on the 17th: slot 03:00Z, 46 hours later, two commits per air handler
	)
	slot0, slot1, slot2 := from.Add(14*time.Hour), from.Add(24*time.Hour), from.Add(70*time.Hour)

	t.Run("stopped between runs", func(t *testing.T) {
		r := run(faulty, t0)
		require.Equal(t, 0, r.code, r.stderr)
		for _, id := range ahus {
			assert.Equal(t, slot0, cps()[id], id)
		}

		srv.stop(t)
		r = run(faulty, t1)
		assert.Equal(t, 1, r.code, "a run without its store fails\n%s", r.stderr)
		assert.Contains(t, r.stderr, "every air handler failed")
		assert.Contains(t, r.stderr, "cannot reach the server after 4 attempts")
		t.Logf("the run without a store failed after %s", r.took.Round(time.Millisecond))

		srv.restart(t)
		for _, id := range ahus {
			assert.Equal(t, slot0, cps()[id], "%s: the checkpoint stays", id)
		}
		counts := hoursPerAHU(t, srv.url, "dewline_test", slot0.Add(time.Hour), slot2.Add(time.Hour))
		for _, id := range ahus {
			for h, n := range counts[id] {
				assert.Zero(t, n, "%s: nothing written after the checkpoint, at %s", id, time.UnixMilli(h).UTC())
			}
		}
		r = run(faulty, t1)
		require.Equal(t, 0, r.code, r.stderr)
		for _, id := range ahus {
			assert.Equal(t, slot1, cps()[id], "%s caught up", id)
		}
	})

	t.Run("killed during a run", func(t *testing.T) {
		p := startDewline(t, "run", "--config", cfgs[faulty], "--once", "--as-of", t2)
		p.waitLog(t, runBound, `"backfill progress"`, msgIs("backfill progress"))
		srv.kill(t)
		<-p.done
		assert.Error(t, p.err, "the run cut off from its store fails")

		// What the server confirmed survived its crash: every hour up to
		// each checkpoint is in InfluxDB.
		srv.restart(t)
		cps := cps()
		behind := false
		for _, id := range ahus {
			t.Logf("after the crash: %s checkpoint %s", id, cps[id].Format(time.RFC3339))
			behind = behind || cps[id].Before(slot2)
		}
		require.True(t, behind, "the server was killed after the run had finished")
		counts := hoursPerAHU(t, srv.url, "dewline_test", from, slot2.Add(time.Hour))
		for _, id := range ahus {
			for h := from; !h.After(cps[id]); h = h.Add(time.Hour) {
				assert.Equal(t, 1, counts[id][h.UnixMilli()], "%s at %s, before its checkpoint", id, h.Format(time.RFC3339))
			}
		}
		r := run(faulty, t2)
		require.Equal(t, 0, r.code, r.stderr)
		for _, id := range ahus {
			assert.Equal(t, slot2, influxCheckpoints(t, srv.url, "dewline_test")[id], "%s caught up", id)
		}
	})

	for _, asOf := range []string{t0, t1, t2} {
		r := run(ref, asOf)
		require.Equal(t, 0, r.code, r.stderr)
	}
	// The first run's 72 h backfill starts 57 h before the data: those
	// hours are written too, with no coverage.
	first := slot0.Add(-71 * time.Hour)
	counts := hoursPerAHU(t, srv.url, "dewline_test", first.Add(-24*time.Hour), slot2.Add(24*time.Hour))
	for _, id := range ahus {
		n := 0
		for h, c := range counts[id] {
			at := time.UnixMilli(h).UTC()
			if at.Before(first) || at.After(slot2) {
				assert.Zero(t, c, "%s: an hour outside the runs at %s", id, at.Format(time.RFC3339))
				continue
			}
			assert.Equal(t, 1, c, "%s at %s: once", id, at.Format(time.RFC3339))
			n++
		}
		assert.Equal(t, int(slot2.Sub(first)/time.Hour)+1, n, "%s: every hour", id)
	}
	sameInfluxResults(t, srv.url, "dewline_test", refDB, ahus)

	// And the hours with data equal an analysis of the export itself (no
	// store, no agent: ingest.RecordHours over the CSV), which prints 8
	// significant digits: a relative tolerance of 1e-7.
	direct := filepath.Join(ref, "direct.csv")
	r := runDewline(t, runBound, "--log-level", "warn", "analyze", "--config", cfgs[ref], "--input", data, "--out", direct, "--no-store")
	require.Equal(t, 0, r.code, r.stderr)
	header, rows := readHourly(t, direct)
	col := map[string]int{}
	for i, h := range header {
		col[h] = i
	}
	compared := 0
	for _, id := range ahus {
		agentHours := map[string]map[string]any{}
		for _, h := range influxHourly(t, srv.url, "dewline_test", id) {
			ms, _ := h["time"].(json.Number).Int64()
			agentHours[time.UnixMilli(ms).UTC().Format(time.RFC3339)] = h
		}
		for _, row := range rows {
			at, _ := time.Parse(time.RFC3339, row[col["hour_start"]])
			if row[col["ahu"]] != id || at.After(slot2) {
				continue
			}
			h, ok := agentHours[row[col["hour_start"]]]
			require.True(t, ok, "%s %s: the agent wrote no hour", id, row[col["hour_start"]])
			for _, f := range []string{"coverage", "dry_air_kg", "water_removed_kg", "coil_total_kwh", "reheat_kwh", "reheat_avoidable_kwh", "cooling_input_kwh", "cost"} {
				want, err := strconv.ParseFloat(row[col[f]], 64)
				require.NoError(t, err, "%s %s %s", id, f, row[col["hour_start"]])
				got, err := h[f].(json.Number).Float64()
				require.NoError(t, err)
				assert.InDelta(t, want, got, math.Max(math.Abs(want)*1e-7, 1e-9), "%s %s at %s", id, f, row[col["hour_start"]])
			}
			compared++
		}
	}
	assert.Equal(t, 3*71, compared, "hours 05:00Z on the 14th to 03:00Z on the 17th, every air handler")
}

// TestFault_InfluxSlowOrFailing puts a proxy between the agent and the test
// InfluxDB server and makes the store slow (answers 3 s late against a 1 s
// store.influxdb.timeout), slow only to confirm writes, answering 500,
// resetting connections and refusing them. Each time the run retries the
// request (3 retries: 4 attempts, counted at the proxy), fails with the
// cause in its error, and leaves the checkpoint where it was; once the store
// behaves, the next run catches up and every hour is written once.
func TestFault_InfluxSlowOrFailing(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_fault")
	proxy := startFaultProxy(t, url)
	dir := t.TempDir()
	ahus := []string{"AHU-1"}
	s := site{store: influxStore(proxy.URL, db, "1s"), meas: "annex_trend", schedule: "{backfill: 48h}", ahus: ahus}
	cfg := s.write(t, dir, "site.yaml")
	s.store = influxStore(url, db, "1s")
	direct := s.write(t, dir, "direct.yaml") // the same state file, no proxy
	from := time.Date(2026, 7, 14, 5, 0, 0, 0, time.UTC)
	importTrends(t, dir, direct, ahus, from, 48*time.Hour)

	const (
		t0 = "2026-07-14T15:30" // slot 19:00Z
		t1 = "2026-07-15T01:30" // slot 05:00Z on the 15th
		t2 = "2026-07-15T11:30" // slot 15:00Z on the 15th
	)
	slot0, slot1, slot2 := from.Add(14*time.Hour), from.Add(24*time.Hour), from.Add(34*time.Hour)
	first := slot0.Add(-47 * time.Hour)
	// A failing run has 4 attempts of 1 s or less with backoff waits of at
	// most 0.5 + 1 + 2 s between them; a minute bounds it generously.
	const failBound = time.Minute
	runVia := func(cfg, asOf string) result {
		return runDewline(t, failBound, "run", "--config", cfg, "--once", "--as-of", asOf)
	}
	everyHourOnce := func(t *testing.T, last time.Time) {
		t.Helper()
		counts := hoursPerAHU(t, url, db, first, last.Add(time.Hour))
		for h := first; !h.After(last); h = h.Add(time.Hour) {
			assert.Equal(t, 1, counts["AHU-1"][h.UnixMilli()], "hour %s", h.Format(time.RFC3339))
		}
	}

	r := runVia(cfg, t0)
	require.Equal(t, 0, r.code, r.stderr)
	require.Equal(t, slot0, influxCheckpoints(t, url, db)["AHU-1"])
	require.Positive(t, proxy.count("/api/v2/query"), "the agent reads through the proxy")
	require.Positive(t, proxy.count("/api/v2/write"), "and writes through it")

	faults := []struct {
		name, mode, only string
		delay            time.Duration
		want             string // in the error
		path             string // where the 4 attempts go
		written          bool   // the server stored the hours (only its answer was lost)
	}{
		{"slow answers", "delay", "", 3 * time.Second, "timed out after 4 attempts (timeout 1s each)", "/api/v2/query", false},
		{"slow write confirmations", "delay", "/api/v2/write", 3 * time.Second, "timed out after 4 attempts (timeout 1s each)", "/api/v2/write", true},
		{"answering 500", "500", "", 0, "server error after 4 attempts: HTTP 500", "/api/v2/query", false},
		{"resetting connections", "reset", "", 0, "cannot reach the server after 4 attempts", "/api/v2/query", false},
	}
	for _, f := range faults {
		t.Run(f.name, func(t *testing.T) {
			before := influxCheckpoints(t, url, db)["AHU-1"]
			proxy.set(f.mode, f.only, f.delay)
			r := runVia(cfg, t1)
			t.Logf("failed in %s with %d attempts at %s", r.took.Round(time.Millisecond), proxy.count(f.path), f.path)
			assert.Equal(t, 1, r.code, r.stderr)
			assert.Contains(t, r.stderr, f.want)
			assert.Equal(t, 4, proxy.count(f.path), "1 attempt and 3 retries")
			n := hoursPerAHU(t, url, db, slot1, slot1.Add(time.Hour))["AHU-1"][slot1.UnixMilli()]
			if f.written {
				// The late confirmations: the server stored the batch, the
				// checkpoint (written last in it) included, so it moved with
				// the hours it covers, never past one; the next run writes
				// the lookback again, which replaces it.
				assert.Equal(t, 1, n, "the hour the server stored without confirming it in time")
				assert.Equal(t, slot1, influxCheckpoints(t, url, db)["AHU-1"], "the checkpoint moved with its hours")
			} else {
				assert.Equal(t, before, influxCheckpoints(t, url, db)["AHU-1"], "the checkpoint stays")
			}
		})
	}

	proxy.set("pass", "", 0)
	r = runVia(cfg, t1)
	require.Equal(t, 0, r.code, r.stderr)
	assert.Equal(t, slot1, influxCheckpoints(t, url, db)["AHU-1"], "caught up once the store behaves")
	everyHourOnce(t, slot1)

	// Refusing connections: nothing listens at the proxy's port any more.
	require.NoError(t, proxy.srv.Close())
	r = runVia(cfg, t2)
	assert.Equal(t, 1, r.code, r.stderr)
	assert.Contains(t, r.stderr, "cannot reach the server after 4 attempts")
	assert.Contains(t, r.stderr, "connection refused")
	assert.Equal(t, slot1, influxCheckpoints(t, url, db)["AHU-1"], "the checkpoint stays")
	r = runVia(direct, t2)
	require.Equal(t, 0, r.code, r.stderr)
	assert.Equal(t, slot2, influxCheckpoints(t, url, db)["AHU-1"])
	everyHourOnce(t, slot2)
}

// TestFault_InfluxStallDuringGroupRead stalls the trend read of three air
// handlers read together (InfluxQL's /query, 3 s late with a 1 s timeout)
// while the agent's state reads and writes pass. The read that times out
// is the run's last: 4 attempts in all, not 4 more for each air handler
// read alone; the run says so once, each air handler's error is of the
// read it was in, no checkpoint moves, and the next run catches up.
func TestFault_InfluxStallDuringGroupRead(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_stall")
	proxy := startFaultProxy(t, url)
	dir := t.TempDir()
	ahus := []string{"AHU-1", "AHU-2", "AHU-3"}
	s := site{store: influxStore(proxy.URL, db, "1s"), meas: "annex_trend", schedule: "{backfill: 48h}", ahus: ahus}
	cfg := s.write(t, dir, "site.yaml")
	s.store = influxStore(url, db, "1s")
	direct := s.write(t, dir, "direct.yaml")
	from := time.Date(2026, 7, 14, 5, 0, 0, 0, time.UTC)
	importTrends(t, dir, direct, ahus, from, 48*time.Hour)
	const t0, t1 = "2026-07-14T15:30", "2026-07-15T01:30" // slots 19:00Z and 05:00Z on the 15th
	slot0, slot1 := from.Add(14*time.Hour), from.Add(24*time.Hour)

	r := runDewline(t, runBound, "run", "--config", cfg, "--once", "--as-of", t0)
	require.Equal(t, 0, r.code, r.stderr)
	require.Positive(t, proxy.count("/query"), "the trend read is InfluxQL through the proxy")

	proxy.set("delay", "/query", 3*time.Second)
	r = runDewline(t, runBound, "run", "--config", cfg, "--once", "--as-of", t1)
	assert.Equal(t, 1, r.code, r.stderr)
	assert.Equal(t, 4, proxy.count("/query"), "one read of the three, 1 attempt and 3 retries, and no more")
	assert.Equal(t, 1, strings.Count(r.stderr, "the store timed out: this run reads no more"), r.stderr)
	assert.NotContains(t, r.stderr, "read again one by one")
	failed := regexp.MustCompile(`(?m)^(\S+): \d+ hours.*\n  failed: (.*)$`).FindAllStringSubmatch(r.stdout, -1)
	require.Len(t, failed, 3, r.stdout)
	for _, f := range failed {
		assert.Contains(t, f[2], "of "+f[1]+", in one read with 2 other air handlers: read 3 air handlers: ")
		assert.Contains(t, f[2], "timed out after 4 attempts (timeout 1s each)")
	}
	for id, cp := range influxCheckpoints(t, url, db) {
		assert.Equal(t, slot0, cp, "%s: the checkpoint stays", id)
	}

	proxy.set("pass", "", 0)
	r = runDewline(t, runBound, "run", "--config", cfg, "--once", "--as-of", t1)
	require.Equal(t, 0, r.code, r.stderr)
	counts := hoursPerAHU(t, url, db, slot0.Add(-47*time.Hour), slot1.Add(time.Hour))
	for _, id := range ahus {
		assert.Equal(t, slot1, influxCheckpoints(t, url, db)[id], "%s caught up", id)
		for h := slot0.Add(-47 * time.Hour); !h.After(slot1); h = h.Add(time.Hour) {
			assert.Equal(t, 1, counts[id][h.UnixMilli()], "%s hour %s", id, h.Format(time.RFC3339))
		}
	}
}

// TestFault_ReadinessFollowsTheStore runs the long-running agent against a
// private InfluxDB server, stops the server and starts it again. /readyz
// answers 200 after the catch-up run at start, 503 once a scheduled run has
// failed for want of the store (with dewline_store_up 0 and
// dewline_run_failures_total counting), and 200 again after the first run
// with the store back; /healthz stays 200 throughout.
//
// The schedule is "@every 1m", the quickest schedule.cron allows (results
// are hourly): the two ticks this test needs take up to two minutes.
func TestFault_ReadinessFollowsTheStore(t *testing.T) {
	srv := startOwnInflux(t)
	dir := t.TempDir()
	ahus := []string{"AHU-1", "AHU-2"}
	cfg := site{
		store:    influxStore(srv.url, "dewline_test", "2s"),
		meas:     "annex_trend",
		schedule: `{cron: "@every 1m", backfill: 6h}`,
		extra:    "http: {listen: \"127.0.0.1:0\"}\n",
		ahus:     ahus,
	}.write(t, dir, "site.yaml")
	importUntilNow(t, dir, cfg, ahus, 6*time.Hour)

	p := startDewline(t, "run", "--config", cfg)
	base := "http://" + p.httpAddr(t)
	const bound = 2 * time.Minute // a tick every minute, a failing run within seconds
	ready := func(status int, _ string) bool { return status == http.StatusOK }
	// (The agent answers 200 from the start, before the store has been
	// checked; only after the catch-up run does 200 say something.)
	done := p.waitLog(t, bound, `"run done"`, msgIs("run done"))
	require.Equal(t, 0.0, done["failed"], "the catch-up run")
	status, _ := httpGet(t, base, "/readyz")
	assert.Equal(t, http.StatusOK, status, "ready after the catch-up run")
	_, m := httpGet(t, base, "/metrics")
	up, _ := metricValue(m, "dewline_store_up", "")
	assert.Equal(t, 1.0, up)
	failuresBefore, _ := metricValue(m, "dewline_run_failures_total", "")

	srv.stop(t)
	stoppedAt := time.Now()
	_, body := waitHTTP(t, base, "/readyz", bound, "unready with the store down", func(status int, _ string) bool {
		return status == http.StatusServiceUnavailable
	})
	t.Logf("unready %s after the store stopped: %s", time.Since(stoppedAt).Round(100*time.Millisecond), body)
	assert.Contains(t, body, "store down")
	assert.Contains(t, body, "cannot reach the server")
	// The store is marked down as soon as a read fails; the run as a whole
	// fails (and is counted) once every air handler has.
	_, m = waitHTTP(t, base, "/metrics", bound, "a failed run counted", func(_ int, body string) bool {
		n, _ := metricValue(body, "dewline_run_failures_total", "")
		return n >= failuresBefore+1
	})
	up, _ = metricValue(m, "dewline_store_up", "")
	assert.Equal(t, 0.0, up)
	status, body = httpGet(t, base, "/readyz")
	assert.Equal(t, http.StatusServiceUnavailable, status)
	assert.Contains(t, body, "last run failed")
	status, _ = httpGet(t, base, "/healthz")
	assert.Equal(t, http.StatusOK, status, "alive while the store is down")

	srv.restart(t)
	restartedAt := time.Now()
	waitHTTP(t, base, "/readyz", bound, "ready again with the store back", ready)
	t.Logf("ready %s after the store came back", time.Since(restartedAt).Round(100*time.Millisecond))
	_, m = httpGet(t, base, "/metrics")
	up, _ = metricValue(m, "dewline_store_up", "")
	assert.Equal(t, 1.0, up)
	p.stop(t, 30*time.Second)
	assert.NoError(t, p.err, "a clean stop on SIGTERM")

	slot := time.Now().UTC().Truncate(time.Hour).Add(-time.Hour)
	for _, id := range ahus {
		cp := influxCheckpoints(t, srv.url, "dewline_test")[id]
		// The hour may have turned since the last run.
		assert.True(t, cp.Equal(slot) || cp.Equal(slot.Add(-time.Hour)), "%s checkpoint %s", id, cp)
	}
}

// TestFault_OneBrokenAirHandler runs the long-running agent on a site where
// three of five air handlers are broken in different ways, and checks that
// the two good ones are computed and written while each broken one shows
// where an operator looks:
//
//   - AHU-7's configuration is invalid (a unit nobody knows): it is left out
//     at start, logged, listed by /readyz and in dewline_ahu_problem;
//   - AHU-8 maps a point that is not in the store (a misspelt
//     measurement): its hours are written with no coverage and the no_data
//     flag, and the data_gap alert opens;
//   - AHU-9 maps a point without the tag that tells it apart, so it matches
//     every air handler's series: its runs fail, which is logged and counted
//     in dewline_ahu_failures_total.
func TestFault_OneBrokenAirHandler(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_fault")
	dir := t.TempDir()
	ahus := []string{"AHU-1", "AHU-2", "AHU-7", "AHU-8", "AHU-9"}
	s := site{
		store:    influxStore(url, db, "5s"),
		meas:     "annex_trend",
		schedule: "{backfill: 6h}",
		extra:    "http: {listen: \"127.0.0.1:0\"}\n",
		ahus:     ahus,
	}
	imp := s.write(t, dir, "import.yaml") // every point where it belongs
	s.points = map[string]string{
		"AHU-7/entering_temp": `{column: AHU7_MAT, unit: "degrees-ish", measurement: annex_trend, field: mat, tags: {ahu: AHU-7}}`,
		"AHU-8/entering_temp": `{column: AHU8_MAT, unit: "F", measurement: annex_trnd, field: mat, tags: {ahu: AHU-8}}`,
		"AHU-9/entering_temp": `{column: AHU9_MAT, unit: "F", measurement: annex_trend, field: mat}`,
	}
	cfg := s.write(t, dir, "site.yaml")
	now := importUntilNow(t, dir, imp, ahus, 6*time.Hour)

	p := startDewline(t, "run", "--config", cfg)
	base := "http://" + p.httpAddr(t)
	p.waitLog(t, runBound, `"run done"`, msgIs("run done"))
	_, m := httpGet(t, base, "/metrics")
	status, ready := httpGet(t, base, "/readyz")
	p.stop(t, 30*time.Second)
	logs := p.logs()
	find := func(msg, ahu string) logLine {
		for _, l := range logs {
			if l.str("message") == msg && l.str("ahu") == ahu {
				return l
			}
		}
		return nil
	}

	t.Run("good ones written", func(t *testing.T) {
		for _, id := range []string{"AHU-1", "AHU-2"} {
			n, _ := metricValue(m, "dewline_hours_computed_total", `ahu="`+id+`"`)
			assert.Equal(t, 6.0, n, id)
			hours := influxHourly(t, url, db, id)
			require.Len(t, hours, 6, id)
			for _, h := range hours {
				ms, _ := h["time"].(json.Number).Int64()
				if time.UnixMilli(ms).Before(now.Truncate(time.Hour)) { // the hour may have turned since the data was written
					assert.Equal(t, json.Number("1"), h["coverage"], "%s at %v", id, h["time"])
				}
			}
		}
	})
	t.Run("invalid configuration", func(t *testing.T) {
		l := find("air handler left out: its configuration is broken", "AHU-7")
		require.NotNil(t, l, "logged at start")
		assert.Contains(t, l.str("problems"), "degrees-ish")
		v, _ := metricValue(m, "dewline_ahu_problem", `ahu="AHU-7"`)
		assert.Equal(t, 1.0, v)
		assert.Contains(t, ready, `"ahu":"AHU-7"`, "/readyz lists it")
		assert.Empty(t, influxHourly(t, url, db, "AHU-7"))
	})
	t.Run("point not in the store", func(t *testing.T) {
		hours := influxHourly(t, url, db, "AHU-8")
		require.Len(t, hours, 6)
		for _, h := range hours {
			assert.Equal(t, json.Number("0"), h["coverage"])
			assert.Contains(t, h["flags"], "no_data")
		}
		l := find("alert", "AHU-8")
		require.NotNil(t, l, "the data_gap alert is logged")
		assert.Equal(t, "data_gap", l.str("alert"))
		require.NotNil(t, find("point not found in InfluxDB", "AHU-8"), "the misspelt point is reported at start")
		assert.Contains(t, ready, `"ahu":"AHU-8"`, "/readyz lists it")
	})
	t.Run("point matching several series", func(t *testing.T) {
		l := find("air handler run failed", "AHU-9")
		require.NotNil(t, l)
		assert.Contains(t, l.str("error"), "matches more than one series")
		v, _ := metricValue(m, "dewline_ahu_failures_total", `ahu="AHU-9"`)
		assert.Equal(t, 1.0, v)
		assert.Empty(t, influxHourly(t, url, db, "AHU-9"))
		for _, id := range []string{"AHU-1", "AHU-2", "AHU-8"} {
			_, failed := metricValue(m, "dewline_ahu_failures_total", `ahu="`+id+`"`)
			assert.False(t, failed, "%s did not fail", id)
		}
	})
	// The store is fine: broken air handlers degrade readiness, they do
	// not make the agent unready, and the store stays up.
	up, _ := metricValue(m, "dewline_store_up", "")
	assert.Equal(t, 1.0, up, "one air handler's bad point is not a store outage")
	assert.Equal(t, 200, status, ready)
	assert.Contains(t, ready, `"status":"degraded"`)
}

// TestFault_Reshard: with InfluxDB as the store, checkpoints and alert
// states live in InfluxDB, so when one replica becomes two (--shard 0/2
// and 1/2, each with a state file of its own) every air handler continues
// from where the single replica left it: only the new hour and the
// lookback are computed, and no alert opens a second time.
func TestFault_Reshard(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_reshard")
	ahus := []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4", "AHU-5", "AHU-6"}
	one, two0, two1 := t.TempDir(), t.TempDir(), t.TempDir()
	s := site{store: influxStore(url, db, "10s"), meas: "reshard_trend", schedule: "{backfill: 24h, lookback: 3h}", ahus: ahus}
	cfgs := map[string]string{}
	for _, d := range []string{one, two0, two1} {
		cfgs[d] = s.write(t, d, "site.yaml")
	}
	from := time.Date(2026, 7, 14, 5, 0, 0, 0, time.UTC)
	importTrends(t, one, cfgs[one], ahus, from, 30*time.Hour)

	// One replica: 24 h of backfill for every air handler.
	r := runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfgs[one], "--once", "--as-of", "2026-07-15T00:30")
	require.Equal(t, 0, r.code, r.stderr)
	first := onceReport(t, r.stdout)
	require.Len(t, first, len(ahus))
	opened := 0
	for _, id := range ahus {
		assert.Equal(t, 24, first[id].hours, id)
		opened += first[id].opened
	}

	// Two replicas an hour later: each takes its share, continues from the
	// checkpoints in InfluxDB, and raises nothing twice.
	seen := map[string]int{}
	for i, d := range []string{two0, two1} {
		r = runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfgs[d], "--once", "--as-of", "2026-07-15T01:30",
			"--shard", fmt.Sprintf("%d/2", i))
		require.Equal(t, 0, r.code, r.stderr)
		for id, rep := range onceReport(t, r.stdout) {
			seen[id]++
			assert.Equal(t, 3, rep.hours, "%s continues: the new hour and the lookback", id)
			assert.Zero(t, rep.opened, "%s: no alert opens again", id)
		}
	}
	assert.Len(t, seen, len(ahus), "the two replicas cover every air handler")
	for id, n := range seen {
		assert.Equal(t, 1, n, "%s is taken by exactly one replica", id)
	}
	t.Logf("alerts opened by the single replica: %d", opened)
}
