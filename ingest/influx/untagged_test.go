package influx

import (
	"context"
	"math"
	"net/http"
	"net/url"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/metrics"
)

// freshBucket creates a database of its own on the test server (results
// measurements have fixed names, so tests of them cannot share one).
func freshBucket(t *testing.T) *Client {
	t.Helper()
	base, _ := testkit.InfluxDB(t)
	db := unique("sites")
	resp, err := http.PostForm(base+"/query", url.Values{"q": {"CREATE DATABASE " + db}})
	require.NoError(t, err)
	resp.Body.Close()
	require.Equal(t, http.StatusOK, resp.StatusCode)
	t.Cleanup(func() {
		if r, err := http.PostForm(base+"/query", url.Values{"q": {"DROP DATABASE " + db}}); err == nil {
			r.Body.Close()
		}
	})
	return realClient(t, Options{Bucket: db + "/autogen"})
}

// hoursOf reads a site's records of ahu back, by hour.
func hoursOf(t *testing.T, b *Backend, ahu string, from, to time.Time) map[time.Time]metrics.Record {
	t.Helper()
	out := map[time.Time]metrics.Record{}
	require.NoError(t, b.Results(time.Now).Hours(context.Background(), ahu, from, to, func(r *metrics.Record) error {
		c := *r
		c.Flags = append([]string(nil), r.Flags...)
		out[r.HourStart] = c
		return nil
	}))
	return out
}

// sameFields compares two records field by field, NaN equal to NaN.
func sameFields(t *testing.T, want, got metrics.Record, msg string) {
	t.Helper()
	g := map[string]float64{}
	for _, f := range got.Fields() {
		g[f.Name] = f.Value
	}
	for _, f := range want.Fields() {
		if math.IsNaN(f.Value) {
			assert.True(t, math.IsNaN(g[f.Name]), "%s: %s is %v, want no value", msg, f.Name, g[f.Name])
			continue
		}
		assert.Equal(t, f.Value, g[f.Name], "%s: %s", msg, f.Name)
	}
	assert.Equal(t, want.Flags, got.Flags, msg)
}

// TestInflux_UntaggedResultsAdopted is the upgrade path on the real
// server: results written before they carried the site tag are read by no
// site, are found, are refused to a site that does not have their air
// handlers, and are adopted by the one that does, without replacing an hour
// it wrote since.
func TestInflux_UntaggedResultsAdopted(t *testing.T) {
	c := freshBucket(t)
	ctx := context.Background()
	north := NewBackend(c, BackendOptions{Site: "north"})
	south := NewBackend(c, BackendOptions{Site: "south"})
	h0 := time.Date(2025, 8, 4, 10, 0, 0, 0, time.UTC)

	// What an older dewline wrote: four hours of AHU-1 and an alert
	// opening, tagged by ahu only.
	var old []metrics.Record
	for i := range 4 {
		r := metrics.Record{AHU: "AHU-1", HourStart: h0.Add(time.Duration(i) * time.Hour)}
		for name, p := range r.FieldPtrs() {
			*p = float64(i) + float64(len(name))/100
		}
		r.ReheatKWh = math.NaN()
		if i == 1 {
			r.Flags = []string{"stale"}
		}
		old = append(old, r)
	}
	opened := metrics.Transition{From: metrics.StatusPending, To: metrics.StatusOpen, At: h0.Add(3 * time.Hour),
		Alert: metrics.Alert{ID: "AHU-1/overcool/20250804T10Z", AHU: "AHU-1", Kind: "overcool", Severity: "warning",
			Status: metrics.StatusOpen, Start: h0, EnergyKWh: 12.5, Money: 1.5, Reason: "cooled 4 K below the target"}}
	var untagged []Point
	for _, p := range append(HourlyPoints("", old), AlertPoints("", []metrics.Transition{opened})...) {
		delete(p.Tags, "site")
		untagged = append(untagged, p)
	}
	require.NoError(t, c.WritePoints(ctx, untagged))
	// Since the upgrade north has re-written the last hour, tagged.
	newer := old[3]
	newer.Coverage = 0.5
	require.NoError(t, north.PutResults(ctx, []metrics.Record{newer}, nil, nil))

	from, to := h0.Add(-time.Hour), h0.Add(24*time.Hour)
	require.Len(t, hoursOf(t, north, "", from, to), 1, "north reads only its tagged hour")
	require.Empty(t, hoursOf(t, south, "", from, to), "south reads none of it")

	found, err := north.UntaggedResults(ctx, time.Now())
	require.NoError(t, err)
	assert.Equal(t, map[string]int{"AHU-1": 4}, found)

	// South has no AHU-1: refused, nothing copied.
	_, err = south.AdoptUntagged(ctx, []string{"AHU-2"}, time.Now())
	require.Error(t, err)
	assert.Contains(t, err.Error(), "AHU-1")
	assert.Contains(t, err.Error(), "configuration of the site that wrote them")
	require.Empty(t, hoursOf(t, south, "", from, to))

	done, err := north.AdoptUntagged(ctx, []string{"AHU-1", "AHU-2"}, time.Now())
	require.NoError(t, err)
	assert.Equal(t, 3, done.Hours)
	assert.Equal(t, 1, done.Transitions)
	assert.Equal(t, 1, done.Kept, "the hour north re-wrote")
	check := func() {
		got := hoursOf(t, north, "AHU-1", from, to)
		require.Len(t, got, 4)
		for i, r := range old[:3] {
			sameFields(t, r, got[r.HourStart], "hour "+string(rune('0'+i)))
		}
		assert.Equal(t, 0.5, got[old[3].HourStart].Coverage, "the newer hour stays")
		alerts, err := north.Results(time.Now).Alerts(ctx, dashboards.AlertQuery{From: from, To: to})
		require.NoError(t, err)
		require.Len(t, alerts, 1)
		assert.Equal(t, opened.Alert.ID, alerts[0].ID)
		assert.Equal(t, "open", alerts[0].State)
		assert.Equal(t, 1.5, alerts[0].Money)
		assert.Equal(t, opened.Alert.Reason, alerts[0].Reason)
		assert.True(t, h0.Equal(alerts[0].Start))
		assert.Empty(t, hoursOf(t, south, "", from, to), "south still reads none")
	}
	check()

	// Again: nothing left to copy, nothing changes.
	done, err = north.AdoptUntagged(ctx, []string{"AHU-1"}, time.Now())
	require.NoError(t, err)
	assert.Equal(t, 0, done.Hours+done.Transitions)
	assert.Equal(t, 5, done.Kept)
	check()
}

// TestInflux_ResultsCarryTheSite: every point of the results is tagged
// with the site (the line protocol as the InfluxDB reference writes tags:
// sorted by key).
func TestInflux_ResultsCarryTheSite(t *testing.T) {
	h := time.Date(2025, 8, 4, 10, 0, 0, 0, time.UTC)
	r := metrics.Record{AHU: "AHU-1", HourStart: h, Coverage: 1}
	tr := metrics.Transition{To: metrics.StatusOpen, At: h, Alert: metrics.Alert{ID: "x", AHU: "AHU-1", Kind: "k", Severity: "warning"}}
	for _, tc := range []struct{ name, site, want string }{
		{"a site", "north", "site=north"},
		{"no id", "", "site=default"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			for _, p := range append(HourlyPoints(tc.site, []metrics.Record{r}), AlertPoints(tc.site, []metrics.Transition{tr})...) {
				head, _, _ := strings.Cut(LineProtocol(p), " ")
				assert.Contains(t, strings.Split(head, ","), tc.want, head)
			}
		})
	}
}
