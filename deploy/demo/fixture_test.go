package demo_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"sync"
	"testing"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/demo"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
)

// The default scenario is written once and shared: generating it takes
// about half a second, analysing it a few tenths more.
var (
	root string

	scOnce sync.Once
	scVal  *demo.Scenario
	scErr  error

	anOnce sync.Once
	anVal  *analysis
	anErr  error

	rdOnce  sync.Once
	rdRecs  []ingest.Record
	rdStats []csvfile.Stats
	rdErr   error
)

func TestMain(m *testing.M) {
	var err error
	root, err = os.MkdirTemp("", "dewline-demo-test-")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	code := m.Run()
	_ = os.RemoveAll(root)
	os.Exit(code)
}

// scenario returns the default scenario, written into a shared folder.
func scenario(t testing.TB) *demo.Scenario {
	t.Helper()
	scOnce.Do(func() { scVal, scErr = demo.Write(root+"/default", demo.Options{}) })
	if scErr != nil {
		t.Fatalf("write the default scenario: %v", scErr)
	}
	return scVal
}

// readAll returns every record of the default scenario's exports, in
// time order, and the readers' stats; read once and shared.
func readAll(t testing.TB, sc *demo.Scenario, cfg *config.Config) ([]ingest.Record, []csvfile.Stats) {
	t.Helper()
	rdOnce.Do(func() { rdRecs, rdStats, rdErr = readExports(sc, cfg) })
	if rdErr != nil {
		t.Fatalf("read the exports: %v", rdErr)
	}
	return rdRecs, rdStats
}

func readExports(sc *demo.Scenario, cfg *config.Config) ([]ingest.Record, []csvfile.Stats, error) {
	files, err := csvfile.OpenFiles(sc.Exports, cfg.CSVOptions())
	if err != nil {
		return nil, nil, err
	}
	defer files.Close()
	var recs []ingest.Record
	for {
		r, err := files.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, nil, err
		}
		recs = append(recs, r)
	}
	var stats []csvfile.Stats
	for _, r := range files.Readers() {
		stats = append(stats, r.Stats())
	}
	return recs, stats, nil
}

// analysis is the result of the real pipeline over the exports.
type analysis struct {
	cfg     *config.Config
	records map[string][]metrics.Record // by air handler, in hour order
	sums    map[string]*agent.Summary
	opened  []metrics.Alert // alerts at the hour they opened
	failed  []agent.HourError
}

// analyse runs what "dewline analyze --input ..." runs: csvfile.OpenFiles
// -> ingest.RecordHours -> agent.Analyzer, over the scenario's period.
func analyse(t testing.TB) *analysis {
	t.Helper()
	sc := scenario(t)
	anOnce.Do(func() { anVal, anErr = runAnalysis(sc) })
	if anErr != nil {
		t.Fatalf("analyse the exports: %v", anErr)
	}
	return anVal
}

func runAnalysis(sc *demo.Scenario) (*analysis, error) {
	cfg, err := config.Load(sc.ConfigPath)
	if err != nil {
		return nil, err
	}
	files, err := csvfile.OpenFiles(sc.Exports, cfg.CSVOptions())
	if err != nil {
		return nil, err
	}
	defer files.Close()
	units := map[string]ingest.AirHandlerPoints{}
	var ids []string
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		ids = append(ids, a.ID)
		units[a.ID] = ingest.AirHandlerPoints{Points: a.PointMap(), Stale: cfg.StaleLimits(a)}
	}
	src := &ingest.RecordHours{Src: files, AirHandlers: units, Step: cfg.Grid.Step}
	an := &agent.Analyzer{Cfg: cfg, Source: src}
	out := &analysis{cfg: cfg, records: map[string][]metrics.Record{}}
	put := func(_ context.Context, r *metrics.Record, tr []metrics.Transition) error {
		out.records[r.AHU] = append(out.records[r.AHU], *r)
		for _, x := range tr {
			if x.To == metrics.StatusOpen {
				out.opened = append(out.opened, x.Alert)
			}
		}
		return nil
	}
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	out.sums, out.failed, err = an.Run(ctx, sc.From, sc.To, ids, put)
	if err != nil {
		return nil, err
	}
	return out, nil
}
