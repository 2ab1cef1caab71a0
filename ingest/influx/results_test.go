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
