package influx

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"testing"
	"time"

	"github.com/dewline/dewline/deploy/testkit"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestInflux_Discover: on the real server, in a database of its own,
// Discover lists the series that hold numbers with their tags and their
// last values, and leaves out string fields and dewline's own results.
func TestInflux_Discover(t *testing.T) {
	u, _ := testkit.InfluxDB(t)
	db := unique("discover")
	for _, q := range []string{"CREATE DATABASE " + db} {
		resp, err := http.PostForm(u+"/query", url.Values{"q": {q}})
		require.NoError(t, err)
		resp.Body.Close()
	}
	t.Cleanup(func() {
		resp, err := http.PostForm(u+"/query", url.Values{"q": {"DROP DATABASE " + db}})
		if err == nil {
			resp.Body.Close()
		}
	})
	c := realClient(t, Options{Bucket: db + "/autogen"})
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute)
	defer cancel()
	var pts []Point
	for i := 0; i < 10; i++ {
		at := t0.Add(time.Duration(i) * time.Minute)
		pts = append(pts,
			Point{Measurement: "bms", Tags: map[string]string{"equipRef": "ahu1", "id": "sat"}, Fields: map[string]float64{"val": 55 + float64(i)}, Time: at},
			Point{Measurement: "bms", Tags: map[string]string{"equipRef": "ahu1", "id": "mat"}, Fields: map[string]float64{"val": 75}, Time: at},
			Point{Measurement: "bms", Tags: map[string]string{"equipRef": "ahu1", "id": "mode"}, Strings: map[string]string{"state": "occupied"}, Time: at},
			Point{Measurement: "dewline_hourly", Tags: map[string]string{"ahu": "AHU-1"}, Fields: map[string]float64{"coverage": 1}, Time: at},
		)
	}
	require.NoError(t, c.WritePoints(ctx, pts))
	got, err := c.Discover(ctx, t0.Add(-time.Hour), t0.Add(time.Hour), 4)
	require.NoError(t, err)
	require.Len(t, got, 2, "%+v", got)
	assert.Equal(t, "bms", got[0].Measurement)
	assert.Equal(t, "val", got[0].Field)
	assert.Equal(t, map[string]string{"equipRef": "ahu1", "id": "mat"}, got[0].Tags)
	assert.Equal(t, map[string]string{"equipRef": "ahu1", "id": "sat"}, got[1].Tags)
	require.Len(t, got[1].Values, 4, "the last 4 values")
	assert.Equal(t, []float64{61, 62, 63, 64}, got[1].Values)
	assert.True(t, got[1].Times[3].Equal(t0.Add(9*time.Minute)), fmt.Sprint(got[1].Times))

	_, err = c.Discover(ctx, t0, t0, 4)
	assert.Error(t, err, "an empty period")
}
