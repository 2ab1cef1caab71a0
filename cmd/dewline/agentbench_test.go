package main

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/ingest/influx"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"

	"github.com/dewline/dewline/agent/webhook"
)

// The agent benchmarks run agent.Runner over trend points in the InfluxDB
// server of DEWLINE_INFLUX_URL, with the same store wiring as "dewline run"
// (results to InfluxDB, checkpoints and alert states in a local state file).
// Source, store and the per-hour callback are timed, so each run is split
// into:
//
//	query    InfluxDB reads: request, server, streaming and decoding the
//	         annotated CSV (ReadSeries, less the time its callback took)
//	align    putting samples on the grid and cutting hours (ingest.StoreHours)
//	compute  metrics.Compute and the alert rules (the runner's hour callback)
//	write    commits: the InfluxDB write, then the state file's transaction
//	other    the rest: checkpoints, alert states, logging
//
// and report the agent's own share, (total - query - write) / total. The
// goal is below 20 %. Peak heap in use (sampled every 5 ms) is reported too,
// for backfills of 10 and 30 days, to show it does not grow with the length.
//
// The trend data, one-minute readings of six points per air handler, an
// invented portfolio of DX units with electric reheat, is written once into
// measurement bench_trend; a later run against the same server reuses it.

const (
	benchMeas     = "bench_trend"
	benchBackfill = 10  // air handlers with 30 days of data
	benchPortfol  = 100 // air handlers with the last 3 hours
)

var (
	benchDataStart = time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	benchDataEnd   = benchDataStart.Add(30 * 24 * time.Hour)
	benchAsOf      = benchDataEnd.Add(30 * time.Minute) // slot: the last hour of the data
)

func benchAHU(i int) string { return fmt.Sprintf("BENCH-%03d", i) }

// benchRoles: role, field, unit.
var benchRoles = [][3]string{
	{"entering_temp", "mat", "F"}, {"entering_rh", "marh", "%"}, {"leaving_temp", "lat", "F"},
	{"supply_temp", "sat", "F"}, {"supply_flow", "cfm", "CFM"}, {"reheat_kw", "rhkw", "kW"},
}

func benchConfigYAML(url, bucket string, n int) string {
	var b strings.Builder
	fmt.Fprintf(&b, `version: 1
site: {id: bench, timezone: America/Chicago, altitude: 30m, units: ip}
store:
  kind: influxdb
  influxdb: {url: %q, bucket: %q, timeout: 60s}
prices: {currency: USD, electricity_per_kwh: 0.12}
schedule: {backfill: 720h, lookback: 1h}
air_handlers:
`, url, bucket)
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, `  - id: %s
    cooling: {kind: dx, rated_eer: 11}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: draw_through, heat_rise: 0.5K}
    target: {max_supply_dewpoint: 52F}
    points:
`, benchAHU(i))
		for _, r := range benchRoles {
			fmt.Fprintf(&b, "      %s: {measurement: %s, field: %s, tags: {ahu: %s}, unit: %q}\n", r[0], benchMeas, r[1], benchAHU(i), r[2])
		}
	}
	return b.String()
}

// benchPoint is one minute of air handler k.
func benchPoint(k int, ts time.Time) influx.Point {
	m := float64(ts.Sub(benchDataStart) / time.Minute)
	d := m / 1440
	day := ts.Hour() >= 13 || ts.Hour() < 1 // 08-20 CDT
	mat := 76 + 3*math.Sin(d*2*math.Pi) + 0.3*math.Sin(m/37) + 0.05*float64(k)
	rh := 55 + 2*math.Sin(m/53) + 0.1*float64(k%7)
	lat, cfm := 54.0, 6000.0+40*float64(k)
	if day {
		lat, cfm = 51, 9000+40*float64(k)
	}
	lat += 0.2 * math.Sin(m/11)
	sat := 61 + 0.3*math.Sin(m/7)
	return influx.Point{Measurement: benchMeas, Tags: map[string]string{"ahu": benchAHU(k)}, Time: ts,
		Fields: map[string]float64{"mat": mat, "marh": rh, "lat": lat, "sat": sat, "cfm": cfm,
			"rhkw": 1.08 * cfm * (sat - lat - 0.9) / 3412}}
}

var (
	benchDataOnce sync.Once
	benchDataErr  error
)

// benchEnv returns the server and database, writing the trend data once.
func benchEnv(b *testing.B) (url, db string) {
	url, db = os.Getenv("DEWLINE_INFLUX_URL"), os.Getenv("DEWLINE_INFLUX_DB")
	if url == "" {
		b.Skip("set DEWLINE_INFLUX_URL (and DEWLINE_INFLUX_DB) to a running InfluxDB 1.8; deploy/dev/influxdb.sh start DIR prints them")
	}
	if db == "" {
		db = "dewline_test"
	}
	benchDataOnce.Do(func() { benchDataErr = writeBenchData(url, db) })
	if benchDataErr != nil {
		b.Fatal(benchDataErr)
	}
	return url, db
}

func writeBenchData(url, db string) error {
	ctx := context.Background()
	c, err := influx.New(influx.Options{URL: url, Bucket: db + "/autogen", Timeout: time.Minute})
	if err != nil {
		return err
	}
	defer c.Close()
	// Already there from an earlier run? The last air handler's last
	// minute and the first one's first minute tell.
	have := func(k int, ts time.Time) bool {
		n := 0
		err := c.ReadSeries(ctx, metrics.PointRef{Measurement: benchMeas, Field: "mat", Tags: map[string]string{"ahu": benchAHU(k)}, Unit: "F"},
			psychro.KindTemperature, ts, ts.Add(time.Minute), func(ingest.Sample) error { n++; return nil })
		return err == nil && n == 1
	}
	if have(0, benchDataStart) && have(benchBackfill-1, benchDataStart) && have(benchPortfol-1, benchDataEnd.Add(-time.Minute)) {
		return nil
	}
	start := time.Now()
	pts := make([]influx.Point, 0, 10000)
	flush := func() error {
		err := c.WritePoints(ctx, pts)
		pts = pts[:0]
		return err
	}
	for k := 0; k < benchPortfol; k++ {
		from := benchDataEnd.Add(-3 * time.Hour)
		if k < benchBackfill {
			from = benchDataStart
		}
		for ts := from; ts.Before(benchDataEnd); ts = ts.Add(time.Minute) {
			pts = append(pts, benchPoint(k, ts))
			if len(pts) == cap(pts) {
				if err := flush(); err != nil {
					return err
				}
			}
		}
	}
	if err := flush(); err != nil {
		return err
	}
	fmt.Fprintf(os.Stderr, "agent benchmarks: trend data written to %s in %s\n", db, time.Since(start).Round(time.Second))
	return nil
}

// timedReader times an ingest.SeriesReader, apart from its callback.
type timedReader struct {
	r             ingest.SeriesReader
	query, push   time.Duration
	samples, reqs int
}

func (t *timedReader) ReadSeries(ctx context.Context, ref metrics.PointRef, kind psychro.Kind, from, to time.Time, fn func(ingest.Sample) error) error {
	start := time.Now()
	var push time.Duration
	err := t.r.ReadSeries(ctx, ref, kind, from, to, func(s ingest.Sample) error {
		c := time.Now()
		err := fn(s)
		push += time.Since(c)
		t.samples++
		return err
	})
	t.query += time.Since(start) - push
	t.push += push
	t.reqs++
	return err
}

// timedSource times an agent.HourSource and, apart, the runner's callback.
type timedSource struct {
	src            agent.HourSource
	total, compute time.Duration
}

func (s *timedSource) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	start := time.Now()
	var compute time.Duration
	err := s.src.Hours(ctx, ahus, from, to, func(h *metrics.Hour) error {
		c := time.Now()
		err := fn(h)
		compute += time.Since(c)
		return err
	})
	s.total += time.Since(start)
	s.compute += compute
	return err
}

// timedStore times the commits of an store.ResultStore.
type timedStore struct {
	store.ResultStore
	write   time.Duration
	read    time.Duration // checkpoints and alert states read from the store
	commits int
}

func (s *timedStore) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	start := time.Now()
	defer func() { s.read += time.Since(start) }()
	return s.ResultStore.Checkpoint(ctx, ahu)
}

func (s *timedStore) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	start := time.Now()
	defer func() { s.read += time.Since(start) }()
	return s.ResultStore.AlertStates(ctx, ahu)
}

func (s *timedStore) Commit(ctx context.Context, ahu string, recs []metrics.Record, up store.AlertUpdate, through time.Time) error {
	start := time.Now()
	err := s.ResultStore.Commit(ctx, ahu, recs, up, through)
	s.write += time.Since(start)
	s.commits++
	return err
}

// heapPeak samples HeapInuse until stop is called and returns the peak.
func heapPeak() (stop func() uint64) {
	done := make(chan struct{})
	var peak uint64
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		var ms runtime.MemStats
		t := time.NewTicker(5 * time.Millisecond)
		defer t.Stop()
		for {
			runtime.ReadMemStats(&ms)
			peak = max(peak, ms.HeapInuse)
			select {
			case <-done:
				return
			case <-t.C:
			}
		}
	}()
	return func() uint64 { close(done); wg.Wait(); return peak }
}

// benchRun is one set-up of the runner; run builds a fresh state file
// (and presets checkpoints when given) for every iteration.
type benchRun struct {
	cfg     *config.Config
	ahus    []string
	preset  time.Time // checkpoint of every air handler before the run; zero for none
	wantHrs int
}

func (br benchRun) run(b *testing.B) {
	ctx := context.Background()
	st, err := openStore(ctx, br.cfg, false, zerolog.Nop())
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	units := map[string]ingest.UnitPoints{}
	for _, id := range br.ahus {
		a, _ := br.cfg.AirHandler(id)
		units[id] = ingest.UnitPoints{Points: a.PointMap(), Stale: br.cfg.StaleLimits(a)}
	}
	dir := b.TempDir()
	var total, query, stateRead, push, srcTotal, compute, write time.Duration
	var samples, reqs, commits, hours int
	var peak uint64
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		statePath := filepath.Join(dir, fmt.Sprintf("state-%d.db", i))
		// Checkpoints live in InfluxDB: a site id of its own gives every
		// iteration a fresh start.
		site := fmt.Sprintf("bench-%d-%d", time.Now().UnixNano(), i)
		if !br.preset.IsZero() {
			var pts []influx.Point
			for _, id := range br.ahus {
				pts = append(pts, influx.Point{Measurement: influx.MeasurementCheckpoint, Tags: map[string]string{"site": site, "ahu": id},
					Strings: map[string]string{"hour": br.preset.UTC().Format(time.RFC3339)}, Time: influx.StateTime})
			}
			if err := st.Store.(*influx.Backend).Client().WritePoints(ctx, pts); err != nil {
				b.Fatal(err)
			}
		}
		tr := &timedReader{r: st}
		src := &timedSource{src: &ingest.StoreHours{Reader: tr, Units: units, Step: br.cfg.Grid.Step, IsMissing: st.IsMissing}}
		payload := func(t metrics.Transition) (json.RawMessage, error) {
			return webhook.AlertPayload(t, br.cfg.Prices.Currency)
		}
		queue := func(ctx context.Context) (store.EventQueue, error) {
			return embedded.OpenQueue(ctx, statePath, payload)
		}
		state, err := influx.NewBackend(st.Store.(*influx.Backend).Client(), influx.BackendOptions{Site: site, Queue: queue}).Agent(ctx)
		if err != nil {
			b.Fatal(err)
		}
		store := &timedStore{ResultStore: state}
		runner := &agent.Runner{Cfg: br.cfg, Source: src, Store: store, Log: zerolog.Nop(), AHUs: br.ahus,
			Clock: func() time.Time { return benchAsOf }}
		runtime.GC()
		stopHeap := heapPeak()
		b.StartTimer()
		start := time.Now()
		rep, err := runner.RunOnce(ctx)
		took := time.Since(start)
		b.StopTimer()
		peak = max(peak, stopHeap())
		if err != nil {
			b.Fatal(err)
		}
		if f := rep.Failed(); len(f) > 0 {
			b.Fatalf("%s: %v", f[0].AHU, f[0].Err)
		}
		if rep.Hours != br.wantHrs {
			b.Fatalf("%d hours computed, want %d", rep.Hours, br.wantHrs)
		}
		state.Close()
		total += took
		query += tr.query
		stateRead += store.read
		push += tr.push
		srcTotal += src.total
		compute += src.compute
		write += store.write
		samples += tr.samples
		reqs += tr.reqs
		commits += store.commits
		hours += rep.Hours
		b.StartTimer()
	}
	n := float64(b.N)
	sec := func(d time.Duration) float64 { return d.Seconds() / n }
	align := srcTotal - query - compute
	other := total - srcTotal - write - stateRead
	b.ReportMetric(sec(query), "query_s/op")
	b.ReportMetric(sec(stateRead), "state_read_s/op")
	b.ReportMetric(sec(align), "align_s/op")
	b.ReportMetric(sec(compute), "compute_s/op")
	b.ReportMetric(sec(write), "write_s/op")
	b.ReportMetric(sec(other), "other_s/op")
	// The agent's own share: everything but the store's round trips (trend
	// queries, checkpoint and alert-state reads, writes).
	agentShare := 100 * (total - query - stateRead - write).Seconds() / total.Seconds()
	b.ReportMetric(agentShare, "agent_%")
	b.ReportMetric(float64(hours)/total.Seconds(), "hours/s")
	b.ReportMetric(float64(samples)/n, "samples/op")
	b.ReportMetric(float64(peak)/(1<<20), "peak_heap_MiB")
	b.Logf("N=%d: %d hours, %d samples in %d queries, %d commits; per run %.2fs: query %.2fs, align %.2fs (%.2fs in sample callbacks), compute %.2fs, write %.2fs, other %.3fs; agent %.1f %%; peak heap %.1f MiB",
		b.N, hours/b.N, samples/b.N, reqs/b.N, commits/b.N, sec(total), sec(query), sec(align), sec(push), sec(compute), sec(write), sec(other),
		agentShare, float64(peak)/(1<<20))
}

func agentBenchConfig(b *testing.B, url, db string, n int) *config.Config {
	cfg, err := config.Parse(strings.NewReader(benchConfigYAML(url, db+"/autogen", n)), "bench.yaml")
	if err != nil {
		b.Fatal(err)
	}
	return cfg
}

// BenchmarkAgentRunOnce is one scheduled run of a portfolio: 100 air
// handlers, one new hour each (the checkpoint is an hour behind and the
// lookback is one hour).
func BenchmarkAgentRunOnce(b *testing.B) {
	url, db := benchEnv(b)
	cfg := agentBenchConfig(b, url, db, benchPortfol)
	ahus := make([]string, benchPortfol)
	for i := range ahus {
		ahus[i] = benchAHU(i)
	}
	slot := agent.Slot(benchAsOf)
	benchRun{cfg: cfg, ahus: ahus, preset: slot.Add(-time.Hour), wantHrs: benchPortfol}.run(b)
}

// BenchmarkAgentBackfill is a fresh agent catching up 10 air handlers over
// 10 and 30 days: the time should grow with the days and the peak heap not.
func BenchmarkAgentBackfill(b *testing.B) {
	url, db := benchEnv(b)
	ahus := make([]string, benchBackfill)
	for i := range ahus {
		ahus[i] = benchAHU(i)
	}
	for _, days := range []int{10, 30} {
		b.Run(fmt.Sprintf("days=%d", days), func(b *testing.B) {
			cfg := agentBenchConfig(b, url, db, benchBackfill)
			cfg.Schedule.Backfill = time.Duration(days) * 24 * time.Hour
			benchRun{cfg: cfg, ahus: ahus, wantHrs: benchBackfill * days * 24}.run(b)
		})
	}
}
