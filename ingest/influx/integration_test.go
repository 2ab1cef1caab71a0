package influx

// Tests against the real InfluxDB server that deploy/dev/test.sh starts
// (see testkit.InfluxDB): they skip without it outside CI and fail in CI.

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"net"
	"net/http"
	"net/http/httptest"
	"net/http/httputil"
	"net/url"
	"strconv"
	"sync/atomic"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"

	"github.com/dewline/dewline/deploy/testkit"
)

// realClient returns a client for the test server; opt.URL and opt.Bucket
// default to it.
func realClient(t *testing.T, opt Options) *Client {
	t.Helper()
	u, db := testkit.InfluxDB(t)
	if opt.URL == "" {
		opt.URL = u
	}
	if opt.Bucket == "" {
		opt.Bucket = db + "/autogen"
	}
	c, err := New(opt)
	require.NoError(t, err)
	t.Cleanup(c.Close)
	return c
}

// unique returns a name no earlier run has used, so reruns against one
// server stay independent.
func unique(prefix string) string {
	return prefix + "_" + strconv.FormatInt(time.Now().UnixNano(), 36)
}

var t0 = time.Date(2024, time.July, 15, 14, 0, 0, 0, time.UTC)

func readAll(t *testing.T, c *Client, ref metrics.PointRef, kind psychro.Kind, from, to time.Time) []ingest.Sample {
	t.Helper()
	var got []ingest.Sample
	require.NoError(t, c.ReadSeries(context.Background(), ref, kind, from, to, func(s ingest.Sample) error {
		got = append(got, s)
		return nil
	}))
	return got
}

// rawValues reads what is stored, with the client library's own query API,
// as a check independent of this package's read path: time -> value.
func rawValues(t *testing.T, c *Client, flux string) map[time.Time]float64 {
	t.Helper()
	res, err := c.client.QueryAPI("").Query(context.Background(), flux)
	require.NoError(t, err)
	defer res.Close()
	got := map[time.Time]float64{}
	for res.Next() {
		v, ok := res.Record().Value().(float64)
		require.True(t, ok, "value %v", res.Record().Value())
		got[res.Record().Time()] = v
	}
	require.NoError(t, res.Err())
	return got
}

func TestInflux_PingReady(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	require.NoError(t, c.Ping(ctx))
	require.NoError(t, c.Ready(ctx))
}

// TestClient_WriteReadRoundTrip writes SI samples to a point's own location
// (logged in °F) and to the default location, checks what is stored with
// the client library's own reader, and reads them back as SI.
func TestInflux_WriteReadRoundTrip(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	samples := []ingest.Sample{
		{Time: t0, Value: 12.5},
		{Time: t0.Add(time.Minute + time.Nanosecond), Value: 13},
		{Time: t0.Add(2*time.Minute + 123456789), Value: -40},
	}
	// °F = °C × 1.8 + 32 (definition of the Fahrenheit scale).
	wantF := []float64{54.5, 55.4, -40}

	t.Run("own location", func(t *testing.T) {
		ref := metrics.PointRef{Measurement: unique("rt_ahu"), Field: "supply_temp", Tags: map[string]string{"ahu": "AHU-1"}, Unit: "°F"}
		require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindTemperature, samples))

		stored := rawValues(t, c, fmt.Sprintf(`from(bucket: %q) |> range(start: 2024-07-15T00:00:00Z, stop: 2024-07-16T00:00:00Z)
  |> filter(fn: (r) => r._measurement == %q and r._field == "supply_temp" and r.ahu == "AHU-1")`, c.opt.Bucket, ref.Measurement))
		require.Len(t, stored, 3)
		for i, s := range samples {
			assert.InDelta(t, wantF[i], stored[s.Time], 1e-9, "stored in the point's unit at %s", s.Time) // float rounding only
		}

		got := readAll(t, c, ref, psychro.KindTemperature, t0, t0.Add(time.Hour))
		require.Len(t, got, 3)
		for i, s := range samples {
			assert.True(t, s.Time.Equal(got[i].Time), "time %s, want %s (exact to the ns)", got[i].Time, s.Time)
			assert.InDelta(t, s.Value, got[i].Value, 1e-9, "SI again") // float rounding of the two conversions
		}
	})

	t.Run("default location", func(t *testing.T) {
		ref := metrics.PointRef{Column: unique("SAT"), Unit: "°F"}
		require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindTemperature, samples))

		stored := rawValues(t, c, fmt.Sprintf(`from(bucket: %q) |> range(start: 2024-07-15T00:00:00Z, stop: 2024-07-16T00:00:00Z)
  |> filter(fn: (r) => r._measurement == "dewline_trend" and r._field == "value" and r.point == %q and r.unit == "°C")`, c.opt.Bucket, ref.Column))
		require.Len(t, stored, 3)
		for _, s := range samples {
			assert.Equal(t, s.Value, stored[s.Time], "stored in SI, exactly")
		}
		got := readAll(t, c, ref, psychro.KindTemperature, t0, t0.Add(time.Hour))
		assert.Equal(t, samples, utc(got))
	})
}

func utc(ss []ingest.Sample) []ingest.Sample {
	for i := range ss {
		ss[i].Time = ss[i].Time.UTC()
	}
	return ss
}

// TestClient_ReadWindowBounds checks [from, to) to the nanosecond. InfluxDB
// 1.8's range() includes its stop time (influxdata/influxdb#19966), so the
// sample at `to` is what this catches there.
func TestInflux_ReadWindowBounds(t *testing.T) {
	c := realClient(t, Options{})
	ref := metrics.PointRef{Column: unique("bounds"), Unit: "°C"}
	from, to := t0, t0.Add(time.Hour)
	var samples []ingest.Sample
	for i, at := range []time.Time{from.Add(-1), from, from.Add(1), to.Add(-1), to, to.Add(1)} {
		samples = append(samples, ingest.Sample{Time: at, Value: float64(i)})
	}
	require.NoError(t, c.WriteSamples(context.Background(), ref, psychro.KindTemperature, samples))
	got := utc(readAll(t, c, ref, psychro.KindTemperature, from, to))
	assert.Equal(t, samples[1:4], got)

	st, err := c.CheckPoint(context.Background(), ref, from, to)
	require.NoError(t, err)
	assert.Equal(t, PointStats{Count: 3, First: from, Last: to.Add(-1), Series: 1}, st)
}

// TestInflux_ReadWideBounds: a wide read of [from, to) returns the rows at
// from .. to-1 and not the one at to, which InfluxDB 1.x's range() would
// include (its stop time is inclusive there; Flux documents it exclusive).
func TestInflux_ReadWideBounds(t *testing.T) {
	c := realClient(t, Options{})
	m := unique("wide")
	var lines bytes.Buffer
	for h := -1; h <= 3; h++ {
		fmt.Fprintf(&lines, "%s,ahu=AHU-1 reheat_kwh=%d %d\n", m, h, t0.Add(time.Duration(h)*time.Hour).UnixNano())
	}
	require.NoError(t, c.client.WriteAPIBlocking("", c.opt.Bucket).WriteRecord(context.Background(), lines.String()))
	var got []time.Time
	require.NoError(t, c.ReadWide(context.Background(), WideQuery{Measurement: m, Match: map[string]string{"ahu": "AHU-1"},
		From: t0, To: t0.Add(2 * time.Hour)}, func(r Row) error {
		at, err := r.Time()
		got = append(got, at.UTC())
		return err
	}))
	assert.Equal(t, []time.Time{t0, t0.Add(time.Hour)}, got)
}

// TestClient_ReadPointsAggregated has the server average 1-minute samples
// valued 0, 1, 2, ... (minute index) over 15-minute windows. The mean of
// the consecutive integers a..b is (a+b)/2.
func TestInflux_ReadPointsAggregated(t *testing.T) {
	c := realClient(t, Options{})
	ref := metrics.PointRef{Measurement: unique("agg"), Field: "temp", Unit: "°F"}
	var samples []ingest.Sample
	for k := 0; k <= 60; k++ { // the sample at minute 60 lies at `to`
		samples = append(samples, ingest.Sample{Time: t0.Add(time.Duration(k) * time.Minute), Value: psychro.FToC(float64(k))})
	}
	require.NoError(t, c.WriteSamples(context.Background(), ref, psychro.KindTemperature, samples))

	tests := []struct {
		name     string
		from, to time.Time
		want     map[time.Time]float64 // window start -> mean in °F
	}{
		{"aligned", t0, t0.Add(time.Hour), map[time.Time]float64{
			t0: 7, t0.Add(15 * time.Minute): 22, t0.Add(30 * time.Minute): 37, t0.Add(45 * time.Minute): 52}},
		{"unaligned from", t0.Add(5 * time.Minute), t0.Add(30 * time.Minute), map[time.Time]float64{
			t0.Add(5 * time.Minute): 9.5, t0.Add(15 * time.Minute): 22}},
		// The sample at minute 50 lies at `to` and must stay out of the
		// last window: 47 from minutes 45..49, not 47.5.
		{"unaligned to", t0.Add(30 * time.Minute), t0.Add(50 * time.Minute), map[time.Time]float64{
			t0.Add(30 * time.Minute): 37, t0.Add(45 * time.Minute): 47}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := map[time.Time]float64{}
			var order []time.Time
			err := c.ReadPoints(context.Background(), []Query{{Ref: ref, Kind: psychro.KindTemperature}}, tt.from, tt.to, 15*time.Minute,
				func(i int, s ingest.Sample) error {
					assert.Equal(t, 0, i)
					got[s.Time.UTC()] = psychro.CToF(s.Value)
					order = append(order, s.Time)
					return nil
				})
			require.NoError(t, err)
			require.Len(t, got, len(tt.want), "windows: %v", got)
			for at, mean := range tt.want {
				assert.InDelta(t, mean, got[at], 1e-9, "window at %s", at) // float rounding of °F↔°C
			}
			assert.IsIncreasing(t, unixNanos(order))
		})
	}
}

func unixNanos(ts []time.Time) []int64 {
	out := make([]int64, len(ts))
	for i, t := range ts {
		out[i] = t.UnixNano()
	}
	return out
}

// TestClient_ReadPointsRoutesByTags reads five points, told apart by
// measurement, field and tags, among decoy series, in one query. Each
// series' values encode its number, so a sample at the wrong index shows.
func TestInflux_ReadPointsRoutesByTags(t *testing.T) {
	c := realClient(t, Options{})
	m1, m2 := unique("route_ahu"), unique("route_rh")
	series := []Point{
		{Measurement: m1, Tags: map[string]string{"site": "A", "ahu": "AHU-1"}, Fields: map[string]float64{"supply_temp": 0}},
		{Measurement: m1, Tags: map[string]string{"site": "A", "ahu": "AHU-2"}, Fields: map[string]float64{"supply_temp": 0}},
		{Measurement: m1, Tags: map[string]string{"site": "A", "ahu": "AHU-1"}, Fields: map[string]float64{"return_temp": 0}},
		{Measurement: m2, Tags: map[string]string{"ahu": "AHU-1", "sensor": "space"}, Fields: map[string]float64{"rh": 0}},
		// decoys
		{Measurement: m1, Tags: map[string]string{"site": "B", "ahu": "AHU-3"}, Fields: map[string]float64{"supply_temp": 0}},
		{Measurement: m2, Tags: map[string]string{"ahu": "AHU-1", "sensor": "duct"}, Fields: map[string]float64{"rh": 0}},
		{Measurement: m2, Tags: map[string]string{"ahu": "AHU-2", "sensor": "space"}, Fields: map[string]float64{"rh": 0}},
	}
	var points []Point
	for s, p := range series {
		for k := 0; k < 10; k++ {
			q := Point{Measurement: p.Measurement, Tags: p.Tags, Fields: map[string]float64{}, Time: t0.Add(time.Duration(k)*time.Minute + time.Duration(s))}
			for f := range p.Fields {
				q.Fields[f] = float64(s*100 + k)
			}
			points = append(points, q)
		}
	}
	require.NoError(t, c.WritePoints(context.Background(), points))
	defaultRef := metrics.PointRef{Point: unique("route-default"), Unit: "%"}
	var defSamples []ingest.Sample
	for k := 0; k < 10; k++ {
		defSamples = append(defSamples, ingest.Sample{Time: t0.Add(time.Duration(k) * time.Minute), Value: float64(400 + k)})
	}
	require.NoError(t, c.WriteSamples(context.Background(), defaultRef, psychro.KindRH, defSamples))

	queries := []Query{
		{Ref: metrics.PointRef{Measurement: m1, Field: "supply_temp", Tags: map[string]string{"ahu": "AHU-1"}, Unit: "°C"}, Kind: psychro.KindTemperature},
		{Ref: metrics.PointRef{Measurement: m1, Field: "supply_temp", Tags: map[string]string{"ahu": "AHU-2", "site": "A"}, Unit: "°C"}, Kind: psychro.KindTemperature},
		{Ref: metrics.PointRef{Measurement: m1, Field: "return_temp", Tags: map[string]string{"ahu": "AHU-1"}, Unit: "°C"}, Kind: psychro.KindTemperature},
		{Ref: metrics.PointRef{Measurement: m2, Field: "rh", Tags: map[string]string{"ahu": "AHU-1", "sensor": "space"}, Unit: "fraction"}, Kind: psychro.KindRH},
		{Ref: defaultRef, Kind: psychro.KindRH},
	}
	wantSeries := []int{0, 1, 2, 3, 4} // series number behind each query; 4 is the default-location point
	got := make([][]ingest.Sample, len(queries))
	err := c.ReadPoints(context.Background(), queries, t0, t0.Add(time.Hour), 0, func(i int, s ingest.Sample) error {
		got[i] = append(got[i], s)
		return nil
	})
	require.NoError(t, err)
	for i, s := range wantSeries {
		require.Len(t, got[i], 10, "point %d", i)
		for k, sample := range got[i] {
			want := float64(s*100 + k)
			at := t0.Add(time.Duration(k)*time.Minute + time.Duration(s))
			if s == 4 {
				at = t0.Add(time.Duration(k) * time.Minute)
			}
			assert.Equal(t, want, sample.Value, "point %d sample %d", i, k)
			assert.True(t, at.Equal(sample.Time), "point %d sample %d at %s, want %s", i, k, sample.Time, at)
		}
	}

	t.Run("ambiguous", func(t *testing.T) {
		// Tag ahu=AHU-1 alone matches the space and the duct sensor.
		ref := metrics.PointRef{Measurement: m2, Field: "rh", Tags: map[string]string{"ahu": "AHU-1"}, Unit: "fraction"}
		err := c.ReadSeries(context.Background(), ref, psychro.KindRH, t0, t0.Add(time.Hour), func(ingest.Sample) error { return nil })
		assert.ErrorIs(t, err, ErrAmbiguousPoint)
		assert.ErrorContains(t, err, "add the tag that tells them apart")
		assert.ErrorContains(t, err, "sensor=duct")
		assert.ErrorContains(t, err, "sensor=space")
		t.Log(err)

		st, err := c.CheckPoint(context.Background(), ref, t0, t0.Add(time.Hour))
		require.NoError(t, err)
		assert.Equal(t, 2, st.Series)
		assert.Equal(t, 20, st.Count)
	})
}

// hostileNames are names that would change a query if pasted into it
// unescaped, or that a careless escaper gets wrong.
var hostileNames = []string{
	`quote"in"name`,
	`back\slash`,
	`\\two`,
	`pipe |> forward`,
	"${x}",
	`\${x}`,
	`$"`,
	`end$`,
	`") |> drop(columns: ["_value"]) |> yield(name: "x`,
	`" or r._field != "`,
	`lit\nnewline`, // a backslash and an n, which is what line protocol can carry
	`sp ace,com=ma`,
	`°C / m³`,
	`#hash`,
}

// TestClient_HostileNames writes series whose measurement, field, tag key
// and tag value are hostile names, plus decoys that differ by one
// character, and reads each back through ReadSeries, ReadPoints and
// CheckPoint: exactly its own samples come back, so every name was read
// as data.
func TestInflux_HostileNames(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	prefix := unique("hostile") + " "
	refs := make([]metrics.PointRef, len(hostileNames))
	var points []Point
	for i, name := range hostileNames {
		refs[i] = metrics.PointRef{Measurement: prefix + name, Field: "f " + name, Tags: map[string]string{"k " + name: "v " + name}, Unit: "°C"}
		for k := 0; k < 3; k++ {
			at := t0.Add(time.Duration(k) * time.Minute)
			points = append(points,
				Point{Measurement: prefix + name, Tags: map[string]string{"k " + name: "v " + name}, Fields: map[string]float64{"f " + name: float64(i*10 + k)}, Time: at},
				// decoys: same measurement and field, tag value one character off
				Point{Measurement: prefix + name, Tags: map[string]string{"k " + name: "v " + name + "x"}, Fields: map[string]float64{"f " + name: -1}, Time: at},
				Point{Measurement: prefix + name + "x", Tags: map[string]string{"k " + name: "v " + name}, Fields: map[string]float64{"f " + name: -1}, Time: at},
			)
		}
	}
	require.NoError(t, c.WritePoints(ctx, points))

	want := func(i int) []float64 { return []float64{float64(i * 10), float64(i*10 + 1), float64(i*10 + 2)} }
	values := func(ss []ingest.Sample) []float64 {
		var v []float64
		for _, s := range ss {
			v = append(v, s.Value)
		}
		return v
	}

	for i, name := range hostileNames {
		t.Run(fmt.Sprintf("series %d", i), func(t *testing.T) {
			got := readAll(t, c, refs[i], psychro.KindTemperature, t0, t0.Add(time.Hour))
			assert.Equal(t, want(i), values(got), "name %q", name)
			st, err := c.CheckPoint(ctx, refs[i], t0, t0.Add(time.Hour))
			require.NoError(t, err, "name %q", name)
			assert.Equal(t, 3, st.Count, "name %q", name)
		})
	}

	var queries []Query
	for _, r := range refs {
		queries = append(queries, Query{Ref: r, Kind: psychro.KindTemperature})
	}
	got := make([][]ingest.Sample, len(refs))
	require.NoError(t, c.ReadPoints(ctx, queries, t0, t0.Add(time.Hour), 0, func(i int, s ingest.Sample) error {
		got[i] = append(got[i], s)
		return nil
	}))
	for i, name := range hostileNames {
		assert.Equal(t, want(i), values(got[i]), "ReadPoints, name %q", name)
	}

	t.Run("real newline is not backslash n", func(t *testing.T) {
		// The stored name has a backslash and an n; asking with a line
		// break must find nothing, and must not fail.
		ref := refs[10]
		require.Equal(t, `lit\nnewline`, hostileNames[10])
		ref.Measurement = prefix + "lit\nnewline"
		assert.Empty(t, readAll(t, c, ref, psychro.KindTemperature, t0, t0.Add(time.Hour)))
	})

	t.Run("unwritable names are refused", func(t *testing.T) {
		for _, name := range []string{"line\nbreak", "tab\there", `trailing\`, `esc\,comma`} {
			err := c.WritePoints(ctx, []Point{{Measurement: prefix + "ok", Tags: map[string]string{"k": name}, Fields: map[string]float64{"v": 1}, Time: t0}})
			assert.ErrorIs(t, err, ErrInvalidPoint, "%q", name)
		}
	})
}

func TestInflux_CheckPoint(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	m := unique("check")
	var points []Point
	for k := 0; k < 5; k++ {
		points = append(points, Point{Measurement: m, Tags: map[string]string{"ahu": "AHU-1"}, Fields: map[string]float64{"sat": float64(k)}, Time: t0.Add(time.Duration(k) * time.Minute)})
	}
	require.NoError(t, c.WritePoints(ctx, points))
	ref := metrics.PointRef{Measurement: m, Field: "sat", Tags: map[string]string{"ahu": "AHU-1"}, Unit: "°C"}

	st, err := c.CheckPoint(ctx, ref, t0, t0.Add(time.Hour))
	require.NoError(t, err)
	assert.Equal(t, PointStats{Count: 5, First: t0, Last: t0.Add(4 * time.Minute), Series: 1}, st)

	st, err = c.CheckPoint(ctx, ref, t0.Add(24*time.Hour), t0.Add(25*time.Hour))
	require.NoError(t, err, "a quiet window is not an error")
	assert.Equal(t, PointStats{}, st)

	tests := []struct {
		name string
		ref  metrics.PointRef
		why  string
	}{
		{"no measurement", metrics.PointRef{Measurement: m + "_nope", Field: "sat", Unit: "°C"}, "does not exist"},
		{"no field", metrics.PointRef{Measurement: m, Field: "nope", Unit: "°C"}, `has no field "nope"`},
		{"no tags", metrics.PointRef{Measurement: m, Field: "sat", Tags: map[string]string{"ahu": "AHU-9"}, Unit: "°C"}, `no series with tags "ahu"="AHU-9"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := c.CheckPoint(ctx, tt.ref, t0, t0.Add(time.Hour))
			assert.ErrorIs(t, err, ErrNoSuchPoint)
			assert.ErrorContains(t, err, tt.why)
			assert.ErrorContains(t, err, tt.ref.Measurement)
		})
	}
}

// TestInflux_MissingDatabase: a database, or a retention policy of an
// existing database, that the server lacks is named with the fix on every
// path (a Flux read, InfluxQL's batch read, the point check, a write,
// readiness) and not retried. InfluxDB 1.8 calls a missing policy
// "invalid retention policy" in a Flux query's HTTP 500, which was retried
// as a server error.
func TestInflux_MissingDatabase(t *testing.T) {
	_, db := testkit.InfluxDB(t)
	tests := []struct {
		name, bucket, fix string
	}{
		{"database", unique("dewline_missing") + "/autogen", "CREATE DATABASE"},
		{"retention policy", db + "/nosuchrp", `CREATE RETENTION POLICY "nosuchrp" ON "` + db + `"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := realClient(t, Options{Bucket: tt.bucket, Retries: 3})
			ctx := context.Background()
			ref := metrics.PointRef{Measurement: "ahu", Field: "sat", Unit: "°C"}
			checks := map[string]error{
				"read":  c.ReadSeries(ctx, ref, psychro.KindTemperature, t0, t0.Add(time.Hour), func(ingest.Sample) error { return nil }),
				"write": c.WriteSamples(ctx, ref, psychro.KindTemperature, []ingest.Sample{{Time: t0, Value: 1}}),
			}
			if tt.name == "database" {
				checks["ready"] = c.Ready(ctx) // readiness asks for the database, not the policy
			}
			_, checks["check"] = c.CheckPoint(ctx, ref, t0, t0.Add(time.Hour))
			q := Query{Ref: ref, Kind: psychro.KindTemperature}
			for _, lang := range []struct {
				name string
				ql   int
			}{{"batch flux", batchFlux}, {"batch influxql", batchInfluxQL}} {
				c.batchQL = lang.ql
				checks[lang.name] = c.ReadBatch(ctx, []Query{q, q}, t0, t0.Add(time.Hour), func(int, ingest.Sample) error { return nil })
			}
			for what, err := range checks {
				require.Error(t, err, what)
				assert.ErrorIs(t, err, ErrNoSuchBucket, what)
				assert.NotErrorIs(t, err, ErrNoSuchPoint, what)
				assert.ErrorContains(t, err, fmt.Sprintf("bucket %q does not exist", tt.bucket), what)
				assert.ErrorContains(t, err, tt.fix, what)
				var re *RequestError
				require.True(t, errors.As(err, &re), what)
				assert.Equal(t, 1, re.Attempts, "%s: not retried", what)
			}
		})
	}
}

func TestInflux_ServerDown(t *testing.T) {
	testkit.InfluxDB(t) // part of the integration set: same skip rules
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	require.NoError(t, err)
	addr := ln.Addr().String()
	require.NoError(t, ln.Close())

	c, err := New(Options{URL: "http://" + addr, Bucket: "dewline_test/autogen", Retries: 2, RetryWait: 10 * time.Millisecond})
	require.NoError(t, err)
	defer c.Close()
	ctx := context.Background()
	ref := metrics.PointRef{Column: "SAT", Unit: "°C"}
	checks := map[string]error{
		"ping":  c.Ping(ctx),
		"read":  c.ReadSeries(ctx, ref, psychro.KindTemperature, t0, t0.Add(time.Hour), func(ingest.Sample) error { return nil }),
		"write": c.WriteSamples(ctx, ref, psychro.KindTemperature, []ingest.Sample{{Time: t0, Value: 1}}),
	}
	for what, err := range checks {
		require.Error(t, err, what)
		assert.ErrorIs(t, err, ErrUnreachable, what)
		assert.ErrorContains(t, err, "connection refused", what)
		assert.ErrorContains(t, err, "http://"+addr, what)
		assert.ErrorContains(t, err, "check that InfluxDB is running", what)
		assert.ErrorContains(t, err, "after 3 attempts", what)
	}
}

// proxy puts a reverse proxy in front of the test server; before passing
// request n (from 1) on, it waits delay(n). It returns the proxy's URL and
// the request count.
func proxy(t *testing.T, delay func(n int32) time.Duration) (string, *atomic.Int32) {
	t.Helper()
	target, _ := testkit.InfluxDB(t)
	u, err := url.Parse(target)
	require.NoError(t, err)
	rp := httputil.NewSingleHostReverseProxy(u)
	var n atomic.Int32
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		i := n.Add(1)
		// Read the body first: only then does the server notice the
		// client hanging up.
		body, err := io.ReadAll(r.Body)
		if err != nil {
			return
		}
		r.Body = io.NopCloser(bytes.NewReader(body))
		if d := delay(i); d > 0 {
			select {
			case <-time.After(d):
			case <-r.Context().Done():
				return
			}
		}
		rp.ServeHTTP(w, r)
	}))
	t.Cleanup(func() {
		srv.CloseClientConnections()
		srv.Close()
	})
	return srv.URL, &n
}

// TestClient_SlowServer puts a proxy that holds requests past the client's
// timeout in front of the real server.
func TestInflux_SlowServer(t *testing.T) {
	setup := realClient(t, Options{})
	ref := metrics.PointRef{Column: unique("slow"), Unit: "°C"}
	samples := []ingest.Sample{{Time: t0, Value: 21.5}}
	require.NoError(t, setup.WriteSamples(context.Background(), ref, psychro.KindTemperature, samples))
	const timeout = 300 * time.Millisecond

	t.Run("recovers on retry", func(t *testing.T) {
		u, n := proxy(t, func(n int32) time.Duration {
			if n <= 2 {
				return time.Minute
			}
			return 0
		})
		c := realClient(t, Options{URL: u, Timeout: timeout, Retries: 3, RetryWait: 10 * time.Millisecond})
		got := readAll(t, c, ref, psychro.KindTemperature, t0, t0.Add(time.Hour))
		assert.Equal(t, samples, utc(got), "the third attempt reached the server")
		assert.EqualValues(t, 3, n.Load())
	})

	t.Run("gives up", func(t *testing.T) {
		u, n := proxy(t, func(int32) time.Duration { return time.Minute })
		c := realClient(t, Options{URL: u, Timeout: timeout, Retries: 2, RetryWait: 10 * time.Millisecond})
		start := time.Now()
		err := c.ReadSeries(context.Background(), ref, psychro.KindTemperature, t0, t0.Add(time.Hour), func(ingest.Sample) error { return nil })
		elapsed := time.Since(start)
		require.Error(t, err)
		assert.ErrorIs(t, err, ErrTimeout)
		assert.ErrorContains(t, err, "timed out after 3 attempts (timeout 300ms each)")
		assert.EqualValues(t, 3, n.Load())
		assert.GreaterOrEqual(t, elapsed, 3*timeout, "each attempt waited its timeout")
		assert.Less(t, elapsed, 20*time.Second, "bounded: the proxy would hold each request a minute")
	})
}

// TestClient_ClientErrorNotRetried provokes a real 4xx: a string written to
// a field that holds numbers is a type conflict.
func TestInflux_ClientErrorNotRetried(t *testing.T) {
	u, n := proxy(t, func(int32) time.Duration { return 0 })
	c := realClient(t, Options{URL: u, Retries: 3, RetryWait: 10 * time.Millisecond})
	ctx := context.Background()
	m := unique("conflict")
	require.NoError(t, c.WritePoints(ctx, []Point{{Measurement: m, Fields: map[string]float64{"v": 1}, Time: t0}}))
	n.Store(0)
	err := c.WritePoints(ctx, []Point{{Measurement: m, Strings: map[string]string{"v": "on"}, Time: t0.Add(time.Second)}})
	require.Error(t, err)
	assert.EqualValues(t, 1, n.Load(), "not retried")
	assert.ErrorIs(t, err, ErrRejected)
	assert.ErrorContains(t, err, "field type conflict", "the server's message is shown")
	var re *RequestError
	require.True(t, errors.As(err, &re))
	assert.Equal(t, http.StatusBadRequest, re.StatusCode)
}

func TestInflux_WriteReplaces(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	m := unique("replace")
	first := Point{Measurement: m, Tags: map[string]string{"ahu": "AHU-1"}, Fields: map[string]float64{"coil_kwh": 1.5, "reheat_kwh": 0.25}, Time: t0}
	again := Point{Measurement: m, Tags: map[string]string{"ahu": "AHU-1"}, Fields: map[string]float64{"coil_kwh": 2.5}, Time: t0}
	require.NoError(t, c.WritePoints(ctx, []Point{first}))
	require.NoError(t, c.WritePoints(ctx, []Point{again}))

	read := func(field string) []ingest.Sample {
		return readAll(t, c, metrics.PointRef{Measurement: m, Field: field, Tags: map[string]string{"ahu": "AHU-1"}, Unit: "kWh"}, psychro.KindEnergy, t0, t0.Add(time.Hour))
	}
	assert.Equal(t, []ingest.Sample{{Time: t0, Value: 2.5}}, utc(read("coil_kwh")), "one sample, the second value")
	assert.Equal(t, []ingest.Sample{{Time: t0, Value: 0.25}}, utc(read("reheat_kwh")), "a field not rewritten stays")

	// The same for samples: a re-import of the same hour replaces it.
	ref := metrics.PointRef{Column: unique("reimport"), Unit: "°C"}
	require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindTemperature, []ingest.Sample{{Time: t0, Value: 1}, {Time: t0.Add(time.Minute), Value: 2}}))
	require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindTemperature, []ingest.Sample{{Time: t0, Value: 3}, {Time: t0.Add(time.Minute), Value: 4}}))
	assert.Equal(t, []ingest.Sample{{Time: t0, Value: 3}, {Time: t0.Add(time.Minute), Value: 4}},
		utc(readAll(t, c, ref, psychro.KindTemperature, t0, t0.Add(time.Hour))))
}

func TestInflux_WriteBatches(t *testing.T) {
	u, n := proxy(t, func(int32) time.Duration { return 0 })
	c := realClient(t, Options{URL: u, BatchSize: 3})
	ctx := context.Background()
	ref := metrics.PointRef{Column: unique("batches"), Unit: "kW"}
	var samples []ingest.Sample
	for k := 0; k < 10; k++ {
		samples = append(samples, ingest.Sample{Time: t0.Add(time.Duration(k) * time.Second), Value: float64(k)})
	}
	require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindPower, samples))
	assert.EqualValues(t, 4, n.Load(), "10 samples in batches of 3")
	assert.Equal(t, samples, utc(readAll(t, c, ref, psychro.KindPower, t0, t0.Add(time.Hour))))

	n.Store(0)
	bad := append(append([]ingest.Sample{}, samples...), ingest.Sample{Time: t0.Add(time.Hour), Value: nan()})
	err := c.WriteSamples(ctx, ref, psychro.KindPower, bad)
	assert.ErrorIs(t, err, ErrInvalidPoint)
	assert.ErrorContains(t, err, "NaN")
	assert.EqualValues(t, 0, n.Load(), "checked before anything is sent")
}

func nan() float64 { return math.NaN() }

// TestClient_ReadErrorsBeforeQuery: bad units and references fail before any
// request.
func TestInflux_ReadErrorsBeforeQuery(t *testing.T) {
	u, n := proxy(t, func(int32) time.Duration { return 0 })
	c := realClient(t, Options{URL: u})
	tests := []struct {
		name string
		ref  metrics.PointRef
		kind psychro.Kind
		msg  string
	}{
		{"unknown unit", metrics.PointRef{Measurement: "ahu", Field: "sat", Unit: "furlongs"}, psychro.KindTemperature, `unknown temperature unit "furlongs"`},
		{"no unit", metrics.PointRef{Measurement: "ahu", Field: "sat"}, psychro.KindTemperature, `unknown temperature unit ""`},
		{"unit of another kind", metrics.PointRef{Measurement: "ahu", Field: "sat", Unit: "kW"}, psychro.KindTemperature, `unknown temperature unit "kW"`},
		{"measurement without field", metrics.PointRef{Measurement: "ahu", Unit: "°C"}, psychro.KindTemperature, "field is not"},
		{"reserved tag key", metrics.PointRef{Measurement: "ahu", Field: "sat", Tags: map[string]string{"_field": "x"}, Unit: "°C"}, psychro.KindTemperature, "reserved"},
		{"empty tag value", metrics.PointRef{Measurement: "ahu", Field: "sat", Tags: map[string]string{"ahu": ""}, Unit: "°C"}, psychro.KindTemperature, "empty value"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := c.ReadSeries(context.Background(), tt.ref, tt.kind, t0, t0.Add(time.Hour), func(ingest.Sample) error { return nil })
			assert.ErrorIs(t, err, ErrInvalidPoint)
			assert.ErrorContains(t, err, tt.msg)
		})
	}
	err := c.ReadSeries(context.Background(), metrics.PointRef{Column: "x", Unit: "°C"}, psychro.KindTemperature, t0, t0, func(ingest.Sample) error { return nil })
	assert.ErrorContains(t, err, "is empty")
	assert.EqualValues(t, 0, n.Load(), "no request was sent")
}

// TestClient_CallbackErrorStopsRead: an error from fn ends the read at once
// and comes back unchanged, not retried.
func TestInflux_CallbackErrorStopsRead(t *testing.T) {
	u, n := proxy(t, func(int32) time.Duration { return 0 })
	c := realClient(t, Options{URL: u, Retries: 3})
	ref := metrics.PointRef{Column: unique("stop"), Unit: "°C"}
	var samples []ingest.Sample
	for k := 0; k < 100; k++ {
		samples = append(samples, ingest.Sample{Time: t0.Add(time.Duration(k) * time.Second), Value: float64(k)})
	}
	require.NoError(t, c.WriteSamples(context.Background(), ref, psychro.KindTemperature, samples))
	n.Store(0)
	stop := errors.New("enough")
	calls := 0
	err := c.ReadSeries(context.Background(), ref, psychro.KindTemperature, t0, t0.Add(time.Hour), func(ingest.Sample) error {
		calls++
		if calls == 3 {
			return stop
		}
		return nil
	})
	assert.ErrorIs(t, err, stop)
	assert.Equal(t, 3, calls)
	assert.EqualValues(t, 1, n.Load())
}
