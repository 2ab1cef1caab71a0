package influx

import (
	"context"
	"fmt"
	"net"
	"testing"
	"time"

	influxdb2 "github.com/influxdata/influxdb-client-go/v2"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/testkit"
)

// TestInflux_RoundTrip writes air-handler samples through the v2 write API of
// a real InfluxDB 1.8 server and reads them back with Flux, exactly.
func TestInflux_RoundTrip(t *testing.T) {
	url, db := testkit.InfluxDB(t)
	bucket := db + "/autogen"
	// A fresh measurement per run keeps reruns against one server independent.
	measurement := fmt.Sprintf("ahu_trend_rt_%d", time.Now().UnixNano())

	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()

	client := influxdb2.NewClientWithOptions(url, "", influxdb2.DefaultOptions().SetHTTPRequestTimeout(10))
	defer client.Close()

	base := time.Date(2024, time.July, 15, 14, 0, 0, 0, time.UTC)
	type sample struct {
		at                  time.Time
		ahu                 string
		supply, coil, rhPct float64
	}
	samples := []sample{
		{base, "AHU-1", 12.5, 10.25, 55.5},
		{base.Add(time.Minute), "AHU-1", 12.75, 10.5, 56},
		{base.Add(2*time.Minute + 500*time.Millisecond), "AHU-1", 13.125, 10.75, 57.25},
		// Another unit at the same times must not leak through the tag filter.
		{base.Add(time.Minute), "AHU-2", 14, 11, 48},
	}

	write := client.WriteAPIBlocking("", bucket)
	for _, s := range samples {
		p := influxdb2.NewPoint(measurement,
			map[string]string{"ahu": s.ahu},
			map[string]interface{}{
				"supply_temp_c":       s.supply,
				"coil_leaving_temp_c": s.coil,
				"return_rh_pct":       s.rhPct,
			},
			s.at)
		require.NoError(t, write.WritePoint(ctx, p), "write point at %s", s.at)
	}

	// Flux string literals through the package's one escaping function.
	quote := fluxString
	flux := fmt.Sprintf(`from(bucket: %s)
  |> range(start: %s, stop: %s)
  |> filter(fn: (r) => r._measurement == %s and r.ahu == %s)`,
		quote(bucket),
		base.Add(-time.Minute).Format(time.RFC3339), base.Add(10*time.Minute).Format(time.RFC3339),
		quote(measurement), quote("AHU-1"))

	result, err := client.QueryAPI("").Query(ctx, flux)
	require.NoError(t, err, "flux query:\n%s", flux)
	defer result.Close()

	// time (RFC 3339, UTC) -> field -> value
	got := map[string]map[string]float64{}
	records := 0
	for result.Next() {
		rec := result.Record()
		records++
		assert.Equal(t, measurement, rec.Measurement())
		assert.Equal(t, "AHU-1", rec.ValueByKey("ahu"))
		v, ok := rec.Value().(float64)
		require.True(t, ok, "value of %s at %s is %T, want float64", rec.Field(), rec.Time(), rec.Value())
		at := rec.Time().UTC().Format(time.RFC3339Nano)
		if got[at] == nil {
			got[at] = map[string]float64{}
		}
		got[at][rec.Field()] = v
	}
	require.NoError(t, result.Err())

	want := map[string]map[string]float64{
		"2024-07-15T14:00:00Z":   {"supply_temp_c": 12.5, "coil_leaving_temp_c": 10.25, "return_rh_pct": 55.5},
		"2024-07-15T14:01:00Z":   {"supply_temp_c": 12.75, "coil_leaving_temp_c": 10.5, "return_rh_pct": 56},
		"2024-07-15T14:02:00.5Z": {"supply_temp_c": 13.125, "coil_leaving_temp_c": 10.75, "return_rh_pct": 57.25},
	}
	assert.Equal(t, want, got)
	assert.Equal(t, 9, records, "one record per field and timestamp")
}

// TestInflux_ClosedPortError checks that a server that is not there gives a
// prompt error naming the cause, rather than a hang or a silent success.
func TestInflux_ClosedPortError(t *testing.T) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	require.NoError(t, err)
	addr := ln.Addr().String()
	require.NoError(t, ln.Close())

	client := influxdb2.NewClientWithOptions("http://"+addr, "", influxdb2.DefaultOptions().SetHTTPRequestTimeout(3))
	defer client.Close()

	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	start := time.Now()

	p := influxdb2.NewPoint("ahu_trend", map[string]string{"ahu": "AHU-1"},
		map[string]interface{}{"supply_temp_c": 12.5}, time.Date(2024, time.July, 15, 14, 0, 0, 0, time.UTC))
	err = client.WriteAPIBlocking("", "dewline_test/autogen").WritePoint(ctx, p)
	require.Error(t, err, "write to closed port")
	assert.Contains(t, err.Error(), "connection refused")
	assert.Contains(t, err.Error(), addr)

	_, err = client.QueryAPI("").Query(ctx, `from(bucket: "dewline_test/autogen") |> range(start: -1h)`)
	require.Error(t, err, "query on closed port")
	assert.Contains(t, err.Error(), "connection refused")

	ok, err := client.Ping(ctx)
	assert.False(t, ok)
	require.Error(t, err, "ping on closed port")

	assert.Less(t, time.Since(start), 8*time.Second, "errors must come promptly")
}
