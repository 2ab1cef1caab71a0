package influx

import (
	"bytes"
	"context"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// TestLineProtocol_Escaping checks the dry run's lines against the escaping
// rules of the InfluxDB line protocol reference (measurement: comma and
// space; tag keys and values: comma, equals sign and space; string field
// values: double quote and backslash; time in nanoseconds).
func TestLineProtocol_Escaping(t *testing.T) {
	p := Point{Measurement: "dewline hourly,x", Tags: map[string]string{"ahu": "AHU 1,a=b"},
		Fields:  map[string]float64{"b": 0.25, "a": 2},
		Strings: map[string]string{"reason": `said "wait" \ here`},
		Time:    time.Unix(1700000000, 5)}
	assert.Equal(t, `dewline\ hourly\,x,ahu=AHU\ 1\,a\=b a=2,b=0.25,reason="said \"wait\" \\ here" 1700000000000000005`, LineProtocol(p))
}

// TestDryRun_WritesNothing: a dry run prints the hourly point of each
// record and where the checkpoint would move, and commits nothing.
func TestDryRun_WritesNothing(t *testing.T) {
	var out bytes.Buffer
	inner := &countingResults{}
	d := &DryRun{Inner: inner, W: &out}
	hour := time.Date(2026, 7, 14, 10, 0, 0, 0, time.UTC)
	rec := metrics.Record{AHU: "AHU-1", HourStart: hour}
	for _, p := range rec.FieldPtrs() {
		*p = 1
	}
	require.NoError(t, d.Commit(context.Background(), "AHU-1", []metrics.Record{rec}, store.AlertUpdate{}, hour))
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	require.Len(t, lines, 2)
	assert.True(t, strings.HasPrefix(lines[0], MeasurementHourly+",ahu=AHU-1,site=default "), lines[0])
	assert.Equal(t, "# AHU-1: checkpoint would move to 2026-07-14T10:00:00Z (dry run: nothing written)", lines[1])
	assert.Zero(t, inner.commits)
}

// TestDryRun_RefusesWhatTheWriteWould: for an InfluxDB store, a dry run
// refuses a commit that the write would refuse (here a site id with a
// backslash before a space, which InfluxDB reads as an escape), with the
// write's own words, and prints nothing; for another store it prints the
// lines as before.
func TestDryRun_RefusesWhatTheWriteWould(t *testing.T) {
	hour := time.Date(2026, 7, 14, 10, 0, 0, 0, time.UTC)
	rec := metrics.Record{AHU: "AHU-1", HourStart: hour}
	const why = `tag "site" value "North\\ Wing" has a backslash before ' ', which InfluxDB would read as an escape`

	var out bytes.Buffer
	d := &DryRun{Inner: &countingResults{}, W: &out, Site: `North\ Wing`, Check: true}
	err := d.Commit(context.Background(), "AHU-1", []metrics.Record{rec}, store.AlertUpdate{}, hour)
	require.Error(t, err)
	assert.ErrorIs(t, err, ErrInvalidPoint)
	assert.Contains(t, err.Error(), why)
	assert.Empty(t, out.String())

	// The write refuses the same point with the same words, before any
	// request (the address is never dialled).
	c, err := New(Options{URL: "http://127.0.0.1:9", Bucket: "db/autogen"})
	require.NoError(t, err)
	err = c.WritePoints(context.Background(), HourlyPoints(`North\ Wing`, []metrics.Record{rec}))
	require.Error(t, err)
	assert.Contains(t, err.Error(), why)

	d.Check = false
	require.NoError(t, d.Commit(context.Background(), "AHU-1", []metrics.Record{rec}, store.AlertUpdate{}, hour))
	assert.Contains(t, out.String(), `site=North\\ Wing`)
}

type countingResults struct{ commits int }

func (c *countingResults) Checkpoint(context.Context, string) (time.Time, bool, error) {
	return time.Time{}, false, nil
}
func (c *countingResults) AlertStates(context.Context, string) (map[string]metrics.Alert, error) {
	return nil, nil
}
func (c *countingResults) Commit(context.Context, string, []metrics.Record, store.AlertUpdate, time.Time) error {
	c.commits++
	return nil
}

// TestOpenAlertPoints_ReplaceTheOpenTransition: an open alert's later state
// is written on its open transition point (same measurement, tags and time,
// the end of the hour it opened), so the alert stays one point per
// transition while its figures grow; a state without an opening time is
// written at the end of the last hour evaluated.
func TestOpenAlertPoints_ReplaceTheOpenTransition(t *testing.T) {
	start := time.Date(2026, 7, 15, 1, 0, 0, 0, time.UTC)
	opened := metrics.Alert{ID: "AHU-7/reheat_not_needed/20260715T01Z", AHU: "AHU-7", Kind: metrics.AlertReheatNotNeeded,
		Severity: metrics.SeverityWarning, Status: metrics.StatusOpen, Start: start, LastSeen: start.Add(time.Hour),
		Opened: start.Add(2 * time.Hour), EnergyKWh: 36, Money: 5.67, Reason: "first"}
	tr := AlertPoints("north", []metrics.Transition{{From: metrics.StatusPending, To: metrics.StatusOpen, Alert: opened, At: opened.Opened}})
	later := opened
	later.LastSeen, later.EnergyKWh, later.Money, later.Reason = start.Add(5*time.Hour), 108, 17, "latest"
	pending := later
	pending.Status = metrics.StatusPending
	up := OpenAlertPoints("north", []metrics.Alert{later, pending})
	require.Len(t, tr, 1)
	require.Len(t, up, 1, "pending alerts are not written")
	assert.Equal(t, tr[0].Measurement, up[0].Measurement)
	assert.Equal(t, tr[0].Tags, up[0].Tags)
	assert.True(t, tr[0].Time.Equal(up[0].Time), "same point: %s and %s", tr[0].Time, up[0].Time)
	assert.Equal(t, 108.0, up[0].Fields["energy_kwh"])
	assert.Equal(t, 17.0, up[0].Fields["money"])
	assert.Equal(t, "latest", up[0].Strings["reason"])

	old := later
	old.Opened = time.Time{}
	up = OpenAlertPoints("north", []metrics.Alert{old})
	require.Len(t, up, 1)
	assert.True(t, up[0].Time.Equal(start.Add(6*time.Hour)), "end of the last hour evaluated: %s", up[0].Time)
}
