package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"net/http"
	neturl "net/url"
	"os"
	"path/filepath"
	"runtime"
	"slices"
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
// (results, checkpoints and alert states in InfluxDB, the webhook queue in
// a local state file), each beside the store's bulk read of the same
// samples in the same run (x_bulk: the run's time over the faster of one
// InfluxQL and one Flux query that return every sample the run needs).
// Source, store and the per-hour callback are timed, so each run is split
// into:
//
//	query    trend reads: request, server, streaming and decoding
//	         (less the time their sample callbacks took)
//	state    checkpoint and alert-state reads
//	align    putting samples on the grid and cutting hours (ingest.StoreHours)
//	compute  metrics.Compute and the alert rules (the runner's hour callback)
//	write    commits: the InfluxDB write, then the state file's transaction
//	other    the rest: logging, bookkeeping
//
// and report the agent's own share, (total - query - state - write) /
// total. The goal is below 20 %. Peak heap in use (sampled every 5 ms) is
// reported too, for backfills of 10 and 30 days, to show it does not grow
// with the length.
//
// The trend data, one-minute readings of six points per air handler, an
// invented portfolio of DX units with electric reheat, is written once into
// measurement bench_trend (about half a minute); a later run against the
// same server reuses it.

const (
	benchMeas        = "bench_trend"
	benchBackfill    = 10   // air handlers with 30 days of data
	benchPortfol     = 1000 // air handlers with the last 4 hours
	benchShards      = 3    // replicas of the shard benchmark
	benchShardRounds = 3    // rounds of the shard benchmark per iteration
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
schedule: {backfill: 720h, lookback: 3h}
air_handlers:
`, url, bucket)
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, "  - id: %s\n%s%s", benchAHU(i), dxPlant+drawThroughFan, supplyTarget)
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
		from := benchDataEnd.Add(-4 * time.Hour)
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
	start, push0 := time.Now(), t.push
	return t.done(start, push0, t.r.ReadSeries(ctx, ref, kind, from, to, func(s ingest.Sample) error {
		return t.call(func() error { return fn(s) })
	}))
}

// ReadBatch times a batch read (the InfluxDB backend reads one).
func (t *timedReader) ReadBatch(ctx context.Context, points []ingest.PointRead, from, to time.Time, fn func(int, ingest.Sample) error) error {
	br, ok := t.r.(ingest.BatchReader)
	if !ok {
		return fmt.Errorf("%T reads no batches", t.r)
	}
	start, push0 := time.Now(), t.push
	return t.done(start, push0, br.ReadBatch(ctx, points, from, to, func(i int, s ingest.Sample) error {
		return t.call(func() error { return fn(i, s) })
	}))
}

// pushTimedEvery: one sample callback in this many is timed and counts
// for all of them. Timing each would add two clock reads (some 50 ns) to
// each of a run's million and more samples, and count them as the
// agent's own time; the callbacks all do the same small work.
const pushTimedEvery = 16

// call runs one sample callback, counts it and times one in pushTimedEvery.
func (t *timedReader) call(fn func() error) error {
	t.samples++
	if t.samples%pushTimedEvery != 0 {
		return fn()
	}
	c := time.Now()
	err := fn()
	t.push += pushTimedEvery * time.Since(c)
	return err
}

// done ends a read that began at start when push stood at push0: its time
// less the callback's counts as the query's.
func (t *timedReader) done(start time.Time, push0 time.Duration, err error) error {
	t.query += time.Since(start) - (t.push - push0)
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

func (s *timedStore) LoadStates(ctx context.Context, ahus []string) (map[string]store.AHUState, error) {
	start := time.Now()
	defer func() { s.read += time.Since(start) }()
	return s.ResultStore.(store.StateLoader).LoadStates(ctx, ahus)
}

func (s *timedStore) CommitBatch(ctx context.Context, items []store.CommitItem) error {
	start := time.Now()
	err := s.ResultStore.(store.BatchCommitter).CommitBatch(ctx, items)
	s.write += time.Since(start)
	s.commits++
	return err
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

// benchIter is what runs of the runner took, split as above (sums).
type benchIter struct {
	took, query, state, push, src, compute, write time.Duration
	samples, reqs, commits, hours, runs           int
	peak                                          uint64
}

func (a *benchIter) add(x benchIter) {
	a.took += x.took
	a.query += x.query
	a.state += x.state
	a.push += x.push
	a.src += x.src
	a.compute += x.compute
	a.write += x.write
	a.samples += x.samples
	a.reqs += x.reqs
	a.commits += x.commits
	a.hours += x.hours
	a.runs += x.runs
	a.peak = max(a.peak, x.peak)
}

// share is the agent's own share of the time in percent: everything but
// the store's round trips (trend queries, checkpoint and alert-state
// reads, writes).
func (a benchIter) share() float64 {
	return 100 * (a.took - a.query - a.state - a.write).Seconds() / a.took.Seconds()
}

// report adds the split of a's runs, per run, to b's metrics and log.
func (a benchIter) report(b *testing.B) {
	n := float64(a.runs)
	sec := func(d time.Duration) float64 { return d.Seconds() / n }
	align := a.src - a.query - a.compute
	other := a.took - a.src - a.write - a.state
	b.ReportMetric(sec(a.took), "run_s/op")
	b.ReportMetric(sec(a.query), "query_s/op")
	b.ReportMetric(sec(a.state), "state_read_s/op")
	b.ReportMetric(sec(align), "align_s/op")
	b.ReportMetric(sec(a.compute), "compute_s/op")
	b.ReportMetric(sec(a.write), "write_s/op")
	b.ReportMetric(a.share(), "agent_%")
	b.ReportMetric(float64(a.hours)/a.took.Seconds(), "hours/s")
	b.ReportMetric(float64(a.peak)/(1<<20), "peak_heap_MiB")
	b.Logf("%d runs: per run %d hours, %d samples in %d reads, %d commits; %.2fs: query %.2fs, state %.2fs, align %.2fs (%.2fs in sample callbacks), compute %.2fs, write %.2fs, other %.3fs; agent %.1f %%; peak heap %.1f MiB",
		a.runs, a.hours/a.runs, a.samples/a.runs, a.reqs/a.runs, a.commits/a.runs, sec(a.took), sec(a.query), sec(a.state), sec(align),
		sec(a.push), sec(a.compute), sec(a.write), sec(other), a.share(), float64(a.peak)/(1<<20))
}

// benchAgent is the wiring of "dewline run" on InfluxDB, opened once.
type benchAgent struct {
	cfg   *config.Config
	st    *stores
	units map[string]ingest.AirHandlerPoints
	dir   string
	seq   int
}

func newBenchAgent(b *testing.B, cfg *config.Config) *benchAgent {
	st, err := openStore(context.Background(), cfg, false, zerolog.Nop())
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(st.Close)
	units := map[string]ingest.AirHandlerPoints{}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		units[a.ID] = ingest.AirHandlerPoints{Points: a.PointMap(), Stale: cfg.StaleLimits(a)}
	}
	return &benchAgent{cfg: cfg, st: st, units: units, dir: b.TempDir()}
}

func (ba *benchAgent) client() *influx.Client { return ba.st.Store.(*influx.Backend).Client() }

// site returns a site id of its own, so that the checkpoints, which live
// in InfluxDB, start afresh; with a non-zero cp every air handler's
// checkpoint is preset to it.
func (ba *benchAgent) site(b *testing.B, cp time.Time) string {
	ba.seq++
	site := fmt.Sprintf("bench-%d-%d", time.Now().UnixNano(), ba.seq)
	if cp.IsZero() {
		return site
	}
	pts := make([]influx.Point, 0, len(ba.cfg.AirHandlers))
	for _, a := range ba.cfg.AirHandlers {
		pts = append(pts, influx.Point{Measurement: influx.MeasurementCheckpoint, Tags: map[string]string{"site": site, "ahu": a.ID},
			Strings: map[string]string{"hour": cp.UTC().Format(time.RFC3339)}, Time: influx.StateTime})
	}
	if err := ba.client().WritePoints(context.Background(), pts); err != nil {
		b.Fatal(err)
	}
	return site
}

// run runs the runner once over ahus with the results of site, and fails
// b unless it computed wantHrs hours.
func (ba *benchAgent) run(b *testing.B, site string, ahus []string, wantHrs int) benchIter {
	ctx := context.Background()
	ba.seq++
	statePath := filepath.Join(ba.dir, fmt.Sprintf("state-%d.db", ba.seq))
	tr := &timedReader{r: ba.st.Store}
	src := &timedSource{src: &ingest.StoreHours{Reader: tr, AirHandlers: ba.units, Step: ba.cfg.Grid.Step, IsMissing: ba.st.IsMissing}}
	payload := func(t metrics.Transition) (json.RawMessage, error) {
		return webhook.AlertPayload(t, ba.cfg.Prices.Currency)
	}
	queue := func(ctx context.Context) (store.EventQueue, error) {
		return embedded.OpenQueue(ctx, statePath, payload)
	}
	state, err := influx.NewBackend(ba.client(), influx.BackendOptions{Site: site, Queue: queue}).Agent(ctx)
	if err != nil {
		b.Fatal(err)
	}
	defer state.Close()
	ts := &timedStore{ResultStore: state}
	runner := &agent.Runner{Cfg: ba.cfg, Source: src, Store: ts, Log: zerolog.Nop(), AHUs: ahus,
		Clock: func() time.Time { return benchAsOf }}
	runtime.GC()
	stopHeap := heapPeak()
	start := time.Now()
	rep, err := runner.RunOnce(ctx)
	took := time.Since(start)
	peak := stopHeap()
	if err != nil {
		b.Fatal(err)
	}
	if f := rep.Failed(); len(f) > 0 {
		b.Fatalf("%s: %v", f[0].AHU, f[0].Err)
	}
	if rep.Hours != wantHrs {
		b.Fatalf("%d hours computed, want %d", rep.Hours, wantHrs)
	}
	return benchIter{took: took, query: tr.query, state: ts.read, push: tr.push, src: src.total, compute: src.compute, write: ts.write,
		samples: tr.samples, reqs: tr.reqs, commits: ts.commits, hours: rep.Hours, runs: 1, peak: peak}
}

// The reference: the store's bulk read of every sample a run needs, in
// one query, counted but not kept. Both query languages InfluxDB 1.8
// answers are timed; the faster is the reference.

// bulkInfluxQL reads the six fields of the air handlers ahus (all of the
// measurement when nil) in [from, to) with one InfluxQL query, answered as
// CSV, and returns the number of values.
func bulkInfluxQL(ctx context.Context, url, db string, ahus []string, from, to time.Time) (int, error) {
	fields := make([]string, len(benchRoles))
	for i, r := range benchRoles {
		fields[i] = `"` + r[1] + `"`
	}
	q := fmt.Sprintf(`SELECT %s FROM %q WHERE time >= '%s' AND time < '%s'`, strings.Join(fields, ","), benchMeas,
		from.UTC().Format(time.RFC3339Nano), to.UTC().Format(time.RFC3339Nano))
	if ahus != nil {
		q += ` AND "ahu" =~ /^(?:` + strings.Join(ahus, "|") + `)$/`
	}
	q += ` GROUP BY "ahu"`
	form := neturl.Values{"db": {db}, "q": {q}, "epoch": {"ns"}}
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, url+"/query", strings.NewReader(form.Encode()))
	if err != nil {
		return 0, err
	}
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Accept", "application/csv")
	return countCSV(req, func(rec []string) int {
		// name,tags,time,field...: a header row has "time" there.
		if len(rec) < 4 || rec[2] == "time" {
			return 0
		}
		n := 0
		for _, v := range rec[3:] {
			if v != "" {
				n++
			}
		}
		return n
	})
}

// bulkFlux is bulkInfluxQL in Flux, answered as annotated CSV (one value
// per row).
func bulkFlux(ctx context.Context, url, db string, ahus []string, from, to time.Time) (int, error) {
	flux := fmt.Sprintf("from(bucket: %q)\n  |> range(start: %s, stop: %s)\n  |> filter(fn: (r) => r._measurement == %q)\n  |> filter(fn: (r) => r._time < %s)\n",
		db+"/autogen", from.UTC().Format(time.RFC3339Nano), to.UTC().Format(time.RFC3339Nano), benchMeas, to.UTC().Format(time.RFC3339Nano))
	if ahus != nil {
		flux += "  |> filter(fn: (r) => r.ahu =~ /^(?:" + strings.Join(ahus, "|") + ")$/)\n"
	}
	body, err := json.Marshal(map[string]any{"query": flux, "type": "flux"})
	if err != nil {
		return 0, err
	}
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, url+"/api/v2/query", bytes.NewReader(body))
	if err != nil {
		return 0, err
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Accept", "application/csv")
	return countCSV(req, func(rec []string) int {
		// Annotation rows start with "#", header rows have "result" where
		// data rows have the result's name (empty: its #default).
		if len(rec) < 3 || rec[0] != "" || rec[1] == "result" {
			return 0
		}
		return 1
	})
}

// countCSV sends req and sums count over the CSV rows of the answer.
func countCSV(req *http.Request, count func(rec []string) int) (int, error) {
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return 0, err
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		msg, _ := io.ReadAll(io.LimitReader(resp.Body, 500))
		return 0, fmt.Errorf("bulk read: %s: %s", resp.Status, msg)
	}
	r := csv.NewReader(bufio.NewReaderSize(resp.Body, 1<<16))
	r.FieldsPerRecord = -1
	r.ReuseRecord = true
	n := 0
	for {
		rec, err := r.Read()
		if err == io.EOF {
			return n, nil
		}
		if err != nil {
			return n, err
		}
		n += count(rec)
	}
}

// bulkRef times both bulk reads of ahus' samples in [from, to), checks
// that they return the same number of values, at least want, and returns
// their times.
func bulkRef(b *testing.B, url, db string, ahus []string, from, to time.Time, want int) (influxQL, flux time.Duration) {
	ctx := context.Background()
	t0 := time.Now()
	nq, err := bulkInfluxQL(ctx, url, db, ahus, from, to)
	if err != nil {
		b.Fatal(err)
	}
	influxQL = time.Since(t0)
	t0 = time.Now()
	nf, err := bulkFlux(ctx, url, db, ahus, from, to)
	if err != nil {
		b.Fatal(err)
	}
	flux = time.Since(t0)
	if nq != nf || nq < want {
		b.Fatalf("bulk reads returned %d (InfluxQL) and %d (Flux) values, want the same and at least %d", nq, nf, want)
	}
	return influxQL, flux
}

func agentBenchConfig(b *testing.B, url, db string, n int) *config.Config {
	cfg, err := config.Parse(strings.NewReader(benchConfigYAML(url, db+"/autogen", n)), "bench.yaml")
	if err != nil {
		b.Fatal(err)
	}
	return cfg
}

// reportRef adds the references and the ratio of run to the faster one.
func reportRef(b *testing.B, run benchIter, influxQL, flux time.Duration) {
	n := float64(run.runs)
	ref := min(influxQL, flux)
	b.ReportMetric(influxQL.Seconds()/n, "bulk_influxql_s/op")
	b.ReportMetric(flux.Seconds()/n, "bulk_flux_s/op")
	b.ReportMetric(run.took.Seconds()/ref.Seconds(), "x_bulk")
	b.Logf("run %.2fs per run beside the bulk read %.2fs (InfluxQL) / %.2fs (Flux): %.2fx the faster",
		run.took.Seconds()/n, influxQL.Seconds()/n, flux.Seconds()/n, run.took.Seconds()/ref.Seconds())
}

// BenchmarkAgentHourly is one scheduled run of a portfolio: 1,000 air
// handlers, their checkpoints an hour behind, the last 3 hours re-computed
// (lookback), beside the bulk read of those hours' samples (and the stale
// limit before them, which the run reads too). Then the same run split
// over 3 replicas (--shard i/3), one after the other, in benchShardRounds
// rounds, each beside a single replica's run of its own: shard_max_% is
// the median over the rounds of the slowest replica's time over that
// round's single replica's (a paired ratio: one run of either on a machine
// shared with the server varies by a third), shard_worst_% the largest,
// and shard_sum_% all three replicas' together over the single runs.
func BenchmarkAgentHourly(b *testing.B) {
	url, db := benchEnv(b)
	cfg := agentBenchConfig(b, url, db, benchPortfol)
	ba := newBenchAgent(b, cfg)
	ahus := make([]string, benchPortfol)
	for i := range ahus {
		ahus[i] = benchAHU(i)
	}
	slot := agent.Slot(benchAsOf)
	end := slot.Add(time.Hour)
	from := end.Add(-cfg.Schedule.Lookback - 15*time.Minute) // the stale limit of the points
	var run, shardMax benchIter
	var influxQL, flux, shardSum, shardOne time.Duration
	var ratios []float64
	for b.Loop() {
		q, f := bulkRef(b, url, db, nil, from, end, benchPortfol*len(benchRoles)*int(end.Sub(from)/time.Minute))
		influxQL += q
		flux += f
		site := ba.site(b, slot.Add(-time.Hour))
		run.add(ba.run(b, site, ahus, benchPortfol*3))

		for range benchShardRounds {
			one := ba.run(b, ba.site(b, slot.Add(-time.Hour)), ahus, benchPortfol*3).took
			site = ba.site(b, slot.Add(-time.Hour))
			total, worst := 0, benchIter{}
			for i := 0; i < benchShards; i++ {
				owned := agent.Shard{Index: i, Count: benchShards}.Owned(cfg)
				it := ba.run(b, site, owned, len(owned)*3)
				total += len(owned)
				shardSum += it.took
				b.Logf("replica %d/%d: %d air handlers in %.2fs (query %.2fs, state %.2fs, write %.2fs), %.0f %% of one replica's %.2fs",
					i, benchShards, len(owned), it.took.Seconds(), it.query.Seconds(), it.state.Seconds(), it.write.Seconds(),
					100*it.took.Seconds()/one.Seconds(), one.Seconds())
				if it.took > worst.took {
					worst = it
				}
			}
			if total != benchPortfol {
				b.Fatalf("the shards own %d air handlers together, want %d", total, benchPortfol)
			}
			shardMax.add(worst)
			shardOne += one
			ratios = append(ratios, 100*worst.took.Seconds()/one.Seconds())
		}
	}
	run.report(b)
	reportRef(b, run, influxQL, flux)
	slices.Sort(ratios)
	med := ratios[len(ratios)/2]
	if len(ratios)%2 == 0 {
		med = (ratios[len(ratios)/2-1] + ratios[len(ratios)/2]) / 2
	}
	b.ReportMetric(shardMax.took.Seconds()/float64(shardMax.runs), "shard_max_s/op")
	b.ReportMetric(med, "shard_max_%")
	b.ReportMetric(ratios[len(ratios)-1], "shard_worst_%")
	// All replicas' time over one replica's: 100 % when sharding costs
	// nothing beyond the work itself.
	b.ReportMetric(100*shardSum.Seconds()/shardOne.Seconds(), "shard_sum_%")
	b.Logf("slowest of %d replicas over a single replica's run, %d rounds: median %.0f %%, %.0f to %.0f %%",
		benchShards, len(ratios), med, ratios[0], ratios[len(ratios)-1])
}

// BenchmarkAgentBackfill is a fresh agent catching up 10 air handlers over
// 10 and 30 days, beside the bulk read of the same samples: the time
// should grow with the days and the peak heap not.
func BenchmarkAgentBackfill(b *testing.B) {
	url, db := benchEnv(b)
	ahus := make([]string, benchBackfill)
	for i := range ahus {
		ahus[i] = benchAHU(i)
	}
	end := agent.Slot(benchAsOf).Add(time.Hour)
	for _, days := range []int{10, 30} {
		b.Run(fmt.Sprintf("days=%d", days), func(b *testing.B) {
			cfg := agentBenchConfig(b, url, db, benchBackfill)
			cfg.Schedule.Backfill = time.Duration(days) * 24 * time.Hour
			ba := newBenchAgent(b, cfg)
			from := end.Add(-cfg.Schedule.Backfill)
			var run benchIter
			var influxQL, flux time.Duration
			b.ReportAllocs()
			for b.Loop() {
				q, f := bulkRef(b, url, db, ahus, from, end, benchBackfill*len(benchRoles)*int(end.Sub(from)/time.Minute))
				influxQL += q
				flux += f
				run.add(ba.run(b, ba.site(b, time.Time{}), ahus, benchBackfill*days*24))
			}
			run.report(b)
			reportRef(b, run, influxQL, flux)
		})
	}
}
