package main

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/metrics"
)

// A portfolio of our own invention for the benchmark: 200 air handlers with
// 30 days of hourly results each (144,000 records) in an embedded store.
const (
	portfolioAirHandlers = 200
	portfolioDays        = 30
	// maxPageBytes is the most the overview may weigh for a portfolio of
	// this size: it has to stay quick to load over a slow site link.
	maxPageBytes = 500 << 10
)

var portfolioEnd = time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC)

// portfolioRecord is a plausible hour of air handler k: a cool-and-reheat unit
// that dries humid air by day and reheats needlessly at night.
func portfolioRecord(k int, hour time.Time) metrics.Record {
	day := hour.Hour() >= 12 // 08-20 in a zone 4 h behind UTC, roughly
	x := float64(k)*0.37 + float64(hour.Unix()/3600)*0.11
	size := 0.5 + float64(k%17)/10 // units of different sizes
	r := metrics.Record{HourStart: hour, AHU: fmt.Sprintf("AHU-%03d", k), Coverage: 1}
	r.DryAirKg = 9000 * size
	r.EnteringTempC = 24 + math.Sin(x)
	r.LeavingTempC = 11.5 + 0.3*math.Sin(x/3)
	r.SupplyTempC = 17.5
	if day {
		r.EnteringDewPointC = 16 + math.Sin(x/2)
		r.WaterRemovedKg = 35 * size * (1 + 0.2*math.Sin(x))
		r.ReheatNeededKWh, r.ReheatAvoidKWh = 14*size, 2*size
		r.HumidityNeedHours = 1
	} else {
		r.EnteringDewPointC = 9 + math.Sin(x/2)
		r.WaterRemovedKg = 0
		r.ReheatNeededKWh, r.ReheatAvoidKWh = 0, 16*size
	}
	r.LeavingDewPointC = math.Min(r.EnteringDewPointC, r.LeavingTempC-0.7)
	r.RequiredLeavingC = 12.5
	r.OvercoolingK = 1
	r.ReheatKWh = r.ReheatNeededKWh + r.ReheatAvoidKWh
	r.ReheatInputKWh = r.ReheatKWh
	r.CoilLatentKWh = r.WaterRemovedKg * 0.68
	r.CoilSensibleKWh = 40 * size
	r.CoilTotalKWh = r.CoilSensibleKWh + r.CoilLatentKWh
	r.CoilTotalGrossKWh = r.CoilTotalKWh + 0.05
	r.CoolingInputKWh = r.CoilTotalKWh / 3.1
	r.CoolingAvoidKWh = r.CoolingInputKWh * 0.08
	r.ElectricityKWh = r.CoolingInputKWh + r.ReheatInputKWh
	r.ReheatCoilRatio = r.ReheatKWh / r.CoilTotalKWh
	r.CoilEER = 3.412 * r.CoilTotalKWh / r.CoolingInputKWh
	r.EffectiveEER = 3.412 * (r.CoilTotalKWh - r.ReheatKWh) / r.ElectricityKWh
	r.SHR = r.CoilSensibleKWh / r.CoilTotalKWh
	r.WaterPerKWhL = r.WaterRemovedKg / r.ElectricityKWh
	r.SHCHours, r.SHCUnneededH = 1, 0
	r.Cost = 0.14 * r.ElectricityKWh
	r.CostAvoidable = 0.14 * (r.ReheatAvoidKWh + r.CoolingAvoidKWh)
	r.CO2Kg, r.CO2AvoidableKg = 0.4*r.ElectricityKWh, 0.4*(r.ReheatAvoidKWh+r.CoolingAvoidKWh)
	r.WaterRemovedKgU95, r.CoilTotalKWhU95 = 0.15*r.WaterRemovedKg, 0.08*r.CoilTotalKWh
	r.ReheatKWhU95, r.ReheatAvoidKWhU95 = 0.06*r.ReheatKWh, 0.1*r.ReheatAvoidKWh
	r.FanHeatKWh = 0
	if k%50 == 0 && hour.Hour() == 3 {
		r.Flags = []string{"low_coverage"}
		r.Coverage = 0.6
	}
	return r
}

// portfolioStore fills a store in a temporary folder with the portfolio.
func portfolioStore(b *testing.B) (*embedded.Store, *dashboards.Site) {
	b.Helper()
	ctx := context.Background()
	st, err := embedded.Open(ctx, filepath.Join(b.TempDir(), "portfolio.db"), embedded.Options{DayZone: time.UTC})
	require.NoError(b, err)
	b.Cleanup(func() { st.Close() })
	site := &dashboards.Site{Name: "Benchmark portfolio", Zone: time.UTC, Currency: "USD", PressurePa: 101325}
	from := portfolioEnd.AddDate(0, 0, -portfolioDays)
	for k := range portfolioAirHandlers {
		id := fmt.Sprintf("AHU-%03d", k)
		site.AirHandlers = append(site.AirHandlers, dashboards.AirHandler{ID: id, Name: fmt.Sprintf("Air handler %d, building %c", k%40, 'A'+k/40)})
		rows := make([]embedded.HourRow, 0, portfolioDays*24)
		for h := from; h.Before(portfolioEnd); h = h.Add(time.Hour) {
			r := portfolioRecord(k, h)
			fields := map[string]float64{}
			for _, f := range r.Fields() {
				fields[f.Name] = f.Value
			}
			rows = append(rows, embedded.HourRow{AHU: id, Hour: h, Schema: metrics.RecordSchema, Fields: fields, Flags: r.Flags})
		}
		require.NoError(b, st.PutHourly(ctx, rows))
		if k%4 == 0 { // an open alert on every fourth unit
			require.NoError(b, st.PutAlert(ctx, embedded.AlertRow{ID: id + "/reheat_not_needed/20260629T02Z", AHU: id, Kind: "reheat_not_needed",
				Severity: "warning", State: embedded.StateOpen, Start: time.Date(2026, 6, 29, 2, 0, 0, 0, time.UTC),
				EnergyKWh: 120, Cost: 16.8, Reason: "reheat ran while the entering air was dry enough"}))
		}
	}
	return st, site
}

// BenchmarkOverview_Month times the overview page for 200 air handlers over
// 30 days (144,000 hourly records) on the embedded store, through the
// handler as a browser asks for it (GET /?period=month): reading, summing,
// ranking and rendering. The JSON API's overview is timed beside it, and
// two references in the same run: reading the same rows with
// Store.ReadRecords (the decoder the dashboard uses) and with
// Store.ReadHourly (the generic one, through encoding/json), for every
// unit at once as the overview asks, and with ReadRecords unit by unit.
// The page reads the store's daily sums (ReadDays); the references read
// every hour, which is what the page would cost without them.
// The page's size is reported as bytes/page and must stay under 500 KB.
//
//	go test -run '^$' -bench Overview -benchtime 5x ./cmd/dewline/
func BenchmarkOverview_Month(b *testing.B) {
	st, site := portfolioStore(b)
	h, err := dashboards.New(dashboards.Options{Site: site, Results: embedded.NewBackend(st, nil).Results(time.Now),
		Now: func() time.Time { return portfolioEnd.Add(2 * time.Hour) }, Log: zerolog.Nop()})
	require.NoError(b, err)
	ctx := context.Background()
	from := portfolioEnd.AddDate(0, 0, -portfolioDays)
	const records = portfolioAirHandlers * portfolioDays * 24

	get := func(b *testing.B, path string) *httptest.ResponseRecorder {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if rec.Code != http.StatusOK {
			b.Fatalf("GET %s: %d %s", path, rec.Code, rec.Body.String())
		}
		return rec
	}
	report := func(b *testing.B) {
		b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/op")
		b.ReportMetric(float64(records)*float64(b.N)/b.Elapsed().Seconds(), "records/s")
	}

	// answerSize gets path b.N times and reports the answer's size as unit.
	answerSize := func(b *testing.B, path, unit string) int {
		b.ReportAllocs()
		n := 0
		for b.Loop() {
			n = get(b, path).Body.Len()
		}
		report(b)
		b.ReportMetric(float64(n), unit)
		return n
	}

	b.Run("page", func(b *testing.B) {
		size := answerSize(b, "/?period=month", "bytes/page")
		if size >= maxPageBytes {
			b.Errorf("the overview of %d units weighs %d bytes, more than %d", portfolioAirHandlers, size, maxPageBytes)
		}
	})
	b.Run("api", func(b *testing.B) {
		answerSize(b, "/api/v1/overview?period=month", "bytes/answer")
	})
	b.Run("reference=ReadRecords", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			n := 0
			err := st.ReadRecords(ctx, "", from, portfolioEnd, func(*metrics.Record) error { n++; return nil })
			if err != nil || n != records {
				b.Fatalf("read %d records of %d: %v", n, records, err)
			}
		}
		report(b)
	})
	// The same rows read unit by unit: each read is a range of the table's
	// primary key (ahu, hour_ms), so the file is read in its own order.
	b.Run("reference=ReadRecords_by_unit", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			n := 0
			for _, u := range site.AirHandlers {
				err := st.ReadRecords(ctx, u.ID, from, portfolioEnd, func(*metrics.Record) error { n++; return nil })
				if err != nil {
					b.Fatal(err)
				}
			}
			if n != records {
				b.Fatalf("read %d records of %d", n, records)
			}
		}
		report(b)
	})
	b.Run("reference=ReadHourly", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			n := 0
			err := st.ReadHourly(ctx, "", from, portfolioEnd, func(embedded.HourRow) error { n++; return nil })
			if err != nil || n != records {
				b.Fatalf("read %d rows of %d: %v", n, records, err)
			}
		}
		report(b)
	})
}
