// Package comparetest builds the hourly records the tests of a before/after
// comparison feed it (metrics/compare's own, and the dashboards' page of a
// comparison), so both test the same invented fixture. Test data only: no
// part of dewline's running code imports it.
package comparetest

import (
	"math"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Entering dew points in the middle of 1 K bins, °C.
const (
	DewPointDryC   = 10.5 // bin [10, 11)
	DewPointHumidC = 16.5 // bin [16, 17)
	DewPointWetC   = 20.5 // bin [20, 21)
)

// Record is an hourly record of air handler ahu at hour with the fields
// named in set (metrics.Record.SetField) and every other field NaN; an
// unknown field name panics.
func Record(ahu string, hour time.Time, set map[string]float64) metrics.Record {
	r := metrics.Record{AHU: ahu, HourStart: hour}
	for _, p := range r.FieldPtrs() {
		*p = math.NaN()
	}
	for k, v := range set {
		if !r.SetField(k, v) {
			panic("unknown field " + k)
		}
	}
	return r
}

// Hours appends to recs n consecutive hours of air handler ahu from *at
// (which it advances), each fully covered, with entering dew point dpC and
// the fields of set(i).
func Hours(recs []metrics.Record, ahu string, at *time.Time, n int, dpC float64, set func(i int) map[string]float64) []metrics.Record {
	for i := 0; i < n; i++ {
		f := map[string]float64{"coverage": 1, "entering_dewpoint_c": dpC}
		for k, v := range set(i) {
			f[k] = v
		}
		recs = append(recs, Record(ahu, *at, f))
		*at = at.Add(time.Hour)
	}
	return recs
}

// NoCommonBins is 20 dry hours of air handler ahu from before, reheat 1 kWh
// each, and 20 wet hours from after, reheat 5 kWh each: two periods that
// share no dew-point bin.
func NoCommonBins(ahu string, before, after time.Time) []metrics.Record {
	recs := Hours(nil, ahu, &before, 20, DewPointDryC, ReheatOnly(1))
	return Hours(recs, ahu, &after, 20, DewPointWetC, ReheatOnly(5))
}

// ReheatOnly sets reheat_kwh to v in every hour.
func ReheatOnly(v float64) func(int) map[string]float64 {
	return func(int) map[string]float64 { return map[string]float64{"reheat_kwh": v} }
}
