package main

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
)

// The benchmark air handler: one year of one-minute readings of ten points
// in a wide export, an invented humid-climate unit with a cold coil by day
// and reheat around the clock.
const benchConfig = `version: 1
site: {timezone: UTC, altitude: 30m, units: ip}
air_handlers:
  - id: AHU-B
    cooling: {kind: dx, rated_eer: 11}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: draw_through, heat_rise: 0.5K}
    target: {max_space_dewpoint: 55F}
    points:
      entering_temp: {column: MAT, unit: F}
      entering_rh: {column: MARH, unit: "%"}
      leaving_temp: {column: LAT, unit: F}
      supply_temp: {column: SAT, unit: F}
      supply_flow: {column: CFM, unit: CFM}
      reheat_kw: {column: RHKW, unit: kW}
      outdoor_temp: {column: OAT, unit: F}
      outdoor_rh: {column: OARH, unit: "%"}
      space_temp: {column: RAT, unit: F}
      space_rh: {column: RARH, unit: "%"}
`

var (
	benchOnce sync.Once
	benchDir  string
	benchErr  error
)

// benchFiles writes the year export and its configuration once per run.
func benchFiles(b *testing.B, minutes int) (cfgPath, csvPath string) {
	benchOnce.Do(func() {
		benchDir, benchErr = os.MkdirTemp("", "dewline-bench")
		if benchErr != nil {
			return
		}
		benchErr = os.WriteFile(filepath.Join(benchDir, "config.yaml"), []byte(benchConfig), 0o600)
		if benchErr != nil {
			return
		}
		f, err := os.Create(filepath.Join(benchDir, "year.csv"))
		if err != nil {
			benchErr = err
			return
		}
		w := bufio.NewWriterSize(f, 1<<20)
		fmt.Fprintln(w, "Time,MAT,MARH,LAT,SAT,CFM,RHKW,OAT,OARH,RAT,RARH")
		t0 := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
		for m := 0; m < minutes; m++ {
			t := t0.Add(time.Duration(m) * time.Minute)
			d := float64(m) / 1440
			day := t.Hour() >= 7 && t.Hour() < 19
			mat := 76 + 3*math.Sin(d*2*math.Pi) + 0.3*math.Sin(float64(m)/37)
			rh := 55 + 8*math.Sin(d/365*2*math.Pi) + 2*math.Sin(float64(m)/53)
			lat, cfm := 54.0, 6000.0
			if day {
				lat, cfm = 51, 9000
			}
			lat += 0.2 * math.Sin(float64(m)/11)
			sat := 61 + 0.3*math.Sin(float64(m)/7)
			rkw := 1.08 * cfm * (sat - lat - 0.9) / 3412
			fmt.Fprintf(w, "%s,%.2f,%.1f,%.2f,%.2f,%.0f,%.2f,%.1f,%.1f,%.1f,%.1f\n", t.Format("2006-01-02T15:04:05Z"),
				mat, rh, lat, sat, cfm, rkw, 80+10*math.Sin(d*2*math.Pi), 70+10*math.Sin(d), 74+0.5*math.Sin(float64(m)/90), 48+3*math.Sin(float64(m)/70))
		}
		if benchErr = w.Flush(); benchErr == nil {
			benchErr = f.Close()
		}
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	return filepath.Join(benchDir, "config.yaml"), filepath.Join(benchDir, "year.csv")
}

const benchMinutes = 365 * 24 * 60

// BenchmarkAnalyzeYear compares, in the same run, reading the year export
// alone (parse) with the whole analysis from it (analyze: parse, convert,
// align, compute with uncertainty, alerts). The goal is analyze within
// 1.5x of parse.
func BenchmarkAnalyzeYear(b *testing.B) {
	cfgPath, csvPath := benchFiles(b, benchMinutes)
	cfg, err := config.Load(cfgPath)
	if err != nil {
		b.Fatal(err)
	}
	st, _ := os.Stat(csvPath)
	var parseNs float64
	b.Run("parse", func(b *testing.B) {
		b.SetBytes(st.Size())
		for b.Loop() {
			files, err := csvfile.OpenFiles([]string{csvPath}, csvfile.Options{Location: time.UTC})
			if err != nil {
				b.Fatal(err)
			}
			n := 0
			for {
				_, err := files.Next()
				if errors.Is(err, io.EOF) {
					break
				}
				if err != nil {
					b.Fatal(err)
				}
				n++
			}
			files.Close()
		}
		parseNs = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		b.ReportMetric(float64(benchMinutes)/(parseNs/1e9), "rows/s")
	})
	b.Run("analyze", func(b *testing.B) {
		b.SetBytes(st.Size())
		a := &cfg.AirHandlers[0]
		for b.Loop() {
			files, err := csvfile.OpenFiles([]string{csvPath}, csvfile.Options{Location: time.UTC})
			if err != nil {
				b.Fatal(err)
			}
			src := &ingest.RecordHours{Src: files, Step: cfg.Grid.Step,
				Units: map[string]ingest.UnitPoints{a.ID: {Points: a.PointMap(), Stale: cfg.StaleLimits(a)}}}
			an := &agent.Analyzer{Cfg: cfg, Source: src}
			hours := 0
			_, _, err = an.Run(context.Background(), time.Time{}, time.Time{}, nil, func(context.Context, *metrics.Record, []metrics.Transition) error {
				hours++
				return nil
			})
			if err != nil {
				b.Fatal(err)
			}
			if hours != 8760 {
				b.Fatalf("%d hours", hours)
			}
			files.Close()
		}
		ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		b.ReportMetric(8760/(ns/1e9), "hours/s")
		if parseNs > 0 {
			b.ReportMetric(ns/parseNs, "x_parse")
		}
	})
}
