package influx

import (
	"context"
	"math"
	"net/http"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// TestWritePoints_RefusesBeforeSending: points that cannot be stored as
// given are refused with ErrInvalidPoint before any request is made.
func TestWritePoints_RefusesBeforeSending(t *testing.T) {
	c, n := fakeServer(t, Options{}, func(w http.ResponseWriter, r *http.Request) {
		w.WriteHeader(http.StatusNoContent)
	})
	ok := func() Point {
		return Point{Measurement: "hourly", Tags: map[string]string{"ahu": "AHU-1"}, Fields: map[string]float64{"reheat_kwh": 1}, Time: fakeFrom}
	}
	tests := []struct {
		name   string
		change func(p *Point)
		msg    string
	}{
		{"NaN", func(p *Point) { p.Fields["reheat_kwh"] = math.NaN() }, "is NaN"},
		{"Inf", func(p *Point) { p.Fields["reheat_kwh"] = math.Inf(1) }, "is +Inf"},
		{"zero time", func(p *Point) { p.Time = time.Time{} }, "time is zero"},
		{"no fields", func(p *Point) { p.Fields = nil }, "no fields"},
		{"empty measurement", func(p *Point) { p.Measurement = "" }, `measurement "" is empty`},
		{"comment measurement", func(p *Point) { p.Measurement = "#hourly" }, "starts with #"},
		{"reserved tag key", func(p *Point) { p.Tags["time"] = "x" }, `tag key "time" is reserved`},
		{"field named like a tag", func(p *Point) { p.Fields["ahu"] = 2 }, `field "ahu" has the name of a tag`},
		{"trailing backslash", func(p *Point) { p.Tags["ahu"] = `AHU-1\` }, "ends with a backslash"},
		{"backslash before comma", func(p *Point) { p.Measurement = `a\,b` }, "backslash before ','"},
		{"line break in a name", func(p *Point) { p.Tags["ahu"] = "AHU\n1" }, "tab or line break"},
		{"line break in a string field", func(p *Point) { p.Strings = map[string]string{"reason": "a\nb"} }, "tab or line break"},
		{"invalid UTF-8", func(p *Point) { p.Tags["ahu"] = "\xff" }, "not valid UTF-8"},
		{"number and string", func(p *Point) { p.Strings = map[string]string{"reheat_kwh": "x"} }, "both a number and a string"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p := ok()
			tt.change(&p)
			err := c.WritePoints(context.Background(), []Point{ok(), p})
			require.Error(t, err)
			assert.ErrorIs(t, err, ErrInvalidPoint)
			assert.ErrorContains(t, err, tt.msg)
			assert.ErrorContains(t, err, "write point 1 ")
			assert.NotContains(t, err.Error(), "\n", "one line")
		})
	}
	assert.EqualValues(t, 0, n.Load(), "nothing was sent")

	// All problems of a point come back at once.
	p := ok()
	p.Measurement = "#m"
	p.Tags["time"] = `x\`
	err := c.WritePoints(context.Background(), []Point{p})
	assert.ErrorContains(t, err, "starts with #")
	assert.ErrorContains(t, err, `tag key "time" is reserved`)
	assert.ErrorContains(t, err, "ends with a backslash")

	require.NoError(t, c.WritePoints(context.Background(), []Point{ok()}))
	assert.EqualValues(t, 1, n.Load())
}

func TestWriteSamples_RefusesBeforeSending(t *testing.T) {
	c, n := fakeServer(t, Options{}, func(w http.ResponseWriter, r *http.Request) {
		w.WriteHeader(http.StatusNoContent)
	})
	ctx := context.Background()
	good := []ingest.Sample{{Time: fakeFrom, Value: 1}}
	tests := []struct {
		name    string
		ref     metrics.PointRef
		kind    psychro.Kind
		samples []ingest.Sample
		msg     string
	}{
		{"unknown unit", metrics.PointRef{Column: "SAT", Unit: "degrees"}, psychro.KindTemperature, good, `unknown temperature unit "degrees"`},
		{"no location at all", metrics.PointRef{Unit: "°C"}, psychro.KindTemperature, good, "no column, point name"},
		{"tab in the column name", metrics.PointRef{Column: "SAT\t", Unit: "°C"}, psychro.KindTemperature, good, "tab or line break"},
		{"NaN sample", metrics.PointRef{Column: "SAT", Unit: "°C"}, psychro.KindTemperature, []ingest.Sample{{Time: fakeFrom, Value: math.NaN()}}, "NaN"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := c.WriteSamples(ctx, tt.ref, tt.kind, tt.samples)
			assert.ErrorIs(t, err, ErrInvalidPoint)
			assert.ErrorContains(t, err, tt.msg)
		})
	}
	require.NoError(t, c.WriteSamples(ctx, metrics.PointRef{Column: "SAT", Unit: "°C"}, psychro.KindTemperature, nil))
	assert.EqualValues(t, 0, n.Load(), "nothing was sent")
}

func TestSIUnit(t *testing.T) {
	// dewline's SI unit per kind, as psychro's package documentation lists them.
	want := map[psychro.Kind]string{
		psychro.KindTemperature: "°C", psychro.KindPressure: "Pa", psychro.KindRH: "fraction",
		psychro.KindFlow: "m³/s", psychro.KindPower: "kW", psychro.KindEnergy: "kWh",
		psychro.KindMass: "kg", psychro.KindHumRatio: "kg/kg", psychro.KindFraction: "fraction",
	}
	for kind, name := range want {
		got, err := siUnit(kind)
		require.NoError(t, err, kind.String())
		assert.Equal(t, name, got, kind.String())
	}
	_, err := siUnit(psychro.Kind(99))
	assert.ErrorIs(t, err, ErrInvalidPoint)
}
