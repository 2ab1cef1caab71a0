package influx

import (
	"context"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// batchNames are tag values for the batch read: the hostile names, and the
// characters a regular expression treats specially (Go's regexp syntax,
// which Flux uses), each beside a decoy that a wrongly escaped expression
// would also match.
var batchNames = append(append([]string(nil), hostileNames...),
	`a.c`, `a|b`, `(x)`, `[y]`, `z*`, `q+`, `^s`, `d/e`, `\/`, `f\\/g`, `{2}`, `?`, `é空`)

// batchDecoys are written beside batchNames and never asked for.
var batchDecoys = []string{`abc`, `a`, `b`, `x`, `y`, `zzz`, `qq`, `s`, `d`, `e`, `/`, `f\/g`, `22`, `Q`, `é`}

// TestFluxRegexOneOf checks the regular expression of a set of tag values
// the way Flux reads it (internal/parser ParseRegexp in Flux v0.65, the
// version in InfluxDB 1.8: every "\/" becomes "/", then Go's regexp
// compiles it): it matches each value and no decoy, and values a literal
// cannot carry plainly are refused.
func TestFluxRegexOneOf(t *testing.T) {
	lit, ok := fluxRegexOneOf(batchNames)
	require.True(t, ok)
	require.True(t, strings.HasPrefix(lit, "/") && strings.HasSuffix(lit, "/"))
	body := lit[1 : len(lit)-1]
	require.NotContains(t, strings.ReplaceAll(body, `\/`, ""), "/", "every slash inside is escaped")
	re, err := regexp.Compile(strings.ReplaceAll(body, `\/`, "/"))
	require.NoError(t, err)
	for _, v := range batchNames {
		assert.True(t, re.MatchString(v), "matches %q", v)
	}
	for _, v := range append(batchDecoys, "", batchNames[0]+"x", "x"+batchNames[1]) {
		assert.False(t, re.MatchString(v), "does not match %q", v)
	}
	for _, v := range []string{"line\nbreak", "tab\there", "nul\x00", "bad\xff"} {
		_, ok := fluxRegexOneOf([]string{"plain", v})
		assert.False(t, ok, "%q is left to equality tests", v)
		assert.Contains(t, fluxOneOf("ahu", []string{"plain", v}), " or ", "%q", v)
	}
}

// TestInflux_ReadBatch writes two fields of many series of one measurement,
// tagged with hostile and regular-expression names plus decoys, and reads
// every asked-for point in one ReadBatch: each gets exactly its own
// samples (so no name was read as syntax), a decoy none, the same as
// ReadPoints returns point by point; in Flux and in InfluxQL. A second tag that varies selects
// combinations nobody asked for; those series are skipped.
func TestInflux_ReadBatch(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	meas := unique("batch")
	var points []Point
	write := func(ahu, site string, base float64) {
		for k := 0; k < 3; k++ {
			points = append(points, Point{Measurement: meas, Tags: map[string]string{"ahu": ahu, "site": site},
				Fields: map[string]float64{"sat": base + float64(k), "rat": base + 0.5 + float64(k)}, Time: t0.Add(time.Duration(k) * time.Minute)})
		}
	}
	for i, name := range batchNames {
		write(name, "north", float64(10*i))
	}
	for _, name := range batchDecoys {
		write(name, "north", -100)
	}
	// Two sites: asking for (north, AHU-N) and (south, AHU-S) selects
	// (north, AHU-S) and (south, AHU-N) too.
	write("AHU-N", "north", 1000)
	write("AHU-S", "south", 2000)
	write("AHU-S", "north", -100)
	write("AHU-N", "south", -100)
	require.NoError(t, c.WritePoints(ctx, points))

	var qs []Query
	var want [][]float64
	add := func(tags map[string]string, field string, base float64) {
		qs = append(qs, Query{Ref: metrics.PointRef{Measurement: meas, Field: field, Tags: tags, Unit: "°C"}, Kind: psychro.KindTemperature})
		want = append(want, []float64{base, base + 1, base + 2})
	}
	for i, name := range batchNames {
		add(map[string]string{"ahu": name}, "sat", float64(10*i))
		add(map[string]string{"ahu": name}, "rat", float64(10*i)+0.5)
	}
	add(map[string]string{"ahu": "AHU-N", "site": "north"}, "sat", 1000)
	add(map[string]string{"ahu": "AHU-S", "site": "south"}, "rat", 2000.5)

	assert.True(t, c.useInfluxQL(ctx), "a 1.x server is read with InfluxQL")
	for _, lang := range []struct {
		name string
		ql   int
	}{{"Flux", batchFlux}, {"InfluxQL", batchInfluxQL}} {
		t.Run(lang.name, func(t *testing.T) {
			c.batchQL = lang.ql
			defer func() { c.batchQL = batchAuto }()
			got := make([][]float64, len(qs))
			require.NoError(t, c.ReadBatch(ctx, qs, t0, t0.Add(time.Hour), func(i int, s ingest.Sample) error {
				got[i] = append(got[i], s.Value)
				return nil
			}))
			for i, q := range qs {
				assert.Equal(t, want[i], got[i], "point %s", q.Ref.Name())
				one := make([][]float64, 1)
				require.NoError(t, c.ReadPoints(ctx, qs[i:i+1], t0, t0.Add(time.Hour), 0, func(_ int, s ingest.Sample) error {
					one[0] = append(one[0], s.Value)
					return nil
				}))
				assert.Equal(t, one[0], got[i], "ReadBatch and ReadPoints agree on %s", q.Ref.Name())
			}

			t.Run("a point that matches two series fails", func(t *testing.T) {
				// AHU-N without its site matches the north and the south series.
				amb := []Query{qs[0], {Ref: metrics.PointRef{Measurement: meas, Field: "sat", Tags: map[string]string{"ahu": "AHU-N"}, Unit: "°C"}, Kind: psychro.KindTemperature}}
				err := c.ReadBatch(ctx, amb, t0, t0.Add(time.Hour), func(int, ingest.Sample) error { return nil })
				require.ErrorIs(t, err, ErrAmbiguousPoint)
				assert.Contains(t, err.Error(), "AHU-N")
			})
		})
	}
}

// recQueue records which air handlers' updates reach the local queue.
type recQueue struct{ ahus []string }

func (q *recQueue) Queue(_ context.Context, ahu string, _ store.AlertUpdate) error {
	q.ahus = append(q.ahus, ahu)
	return nil
}
func (q *recQueue) PendingEvents(context.Context, int) ([]store.Event, error) { return nil, nil }
func (q *recQueue) MarkDelivered(context.Context, int64, time.Time) error     { return nil }
func (q *recQueue) Close() error                                              { return nil }

// TestInflux_CommitBatchLoadStates commits several air handlers in one
// batch, names with regular-expression characters among them, and reads
// their checkpoints and alert states back in one query: the same as the
// one-by-one reads (Checkpoint, AlertStates) return, for the air handlers
// asked for only. Only an update with an alert reaches the local queue.
func TestInflux_CommitBatchLoadStates(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	q := &recQueue{}
	rs := &agentStore{c: c, site: unique("site"), queue: q}
	ahus := []string{"AHU-1", `AHU "2"/b`, "AHU.3", "AHU-3"}
	kind := metrics.Rules()[0].Kind
	open := metrics.Alert{ID: "AHU-1/" + kind + "/x", AHU: "AHU-1", Kind: kind, Severity: metrics.Rules()[0].Severity,
		Status: metrics.StatusOpen, Start: t0, Opened: t0.Add(2 * time.Hour), LastSeen: t0.Add(2 * time.Hour), Hits: 3, EnergyKWh: 1.5}
	var items []store.CommitItem
	for i, id := range ahus[:3] {
		through := t0.Add(time.Duration(i) * time.Hour)
		it := store.CommitItem{AHU: id, Through: through, Records: []metrics.Record{{AHU: id, HourStart: through}}}
		if i == 0 {
			it.Alerts.States = map[string]metrics.Alert{kind: open}
		}
		items = append(items, it)
	}
	require.NoError(t, rs.CommitBatch(ctx, items))
	assert.Equal(t, []string{"AHU-1"}, q.ahus)

	got, err := rs.LoadStates(ctx, ahus)
	require.NoError(t, err)
	assert.Len(t, got, 3, "AHU-3 was never committed")
	for i, id := range ahus {
		cp, has, err := rs.Checkpoint(ctx, id)
		require.NoError(t, err)
		states, err := rs.AlertStates(ctx, id)
		require.NoError(t, err)
		assert.Equal(t, i < 3, has, id)
		assert.Equal(t, has, got[id].HasCheckpoint, id)
		assert.True(t, cp.Equal(got[id].Checkpoint), "%s: %s and %s", id, cp, got[id].Checkpoint)
		assert.Equal(t, len(states), len(got[id].Alerts), id)
		for k, a := range states {
			assert.Equal(t, a.ID, got[id].Alerts[k].ID, id)
			assert.Equal(t, a.Status, got[id].Alerts[k].Status, id)
		}
	}
	assert.Equal(t, metrics.StatusOpen, got["AHU-1"].Alerts[kind].Status)

	one, err := rs.LoadStates(ctx, []string{"AHU.3"})
	require.NoError(t, err)
	assert.Len(t, one, 1, "a shard reads its own air handlers only")
	assert.True(t, one["AHU.3"].Checkpoint.Equal(t0.Add(2*time.Hour)))
}

// TestInflux_ReadBatchInfluxQLErrors: a statement's error in InfluxQL's
// answer (here a database that does not exist, which 1.8 reports inside
// the result rather than as the response's status) fails the read instead
// of reading as no data.
func TestInflux_ReadBatchInfluxQLErrors(t *testing.T) {
	c := realClient(t, Options{Bucket: unique("nosuchdb") + "/autogen"})
	c.batchQL = batchInfluxQL
	q := Query{Ref: metrics.PointRef{Measurement: "m", Field: "f", Tags: map[string]string{"ahu": "A"}, Unit: "°C"}, Kind: psychro.KindTemperature}
	err := c.ReadBatch(context.Background(), []Query{q, q}, t0, t0.Add(time.Hour), func(int, ingest.Sample) error { return nil })
	require.Error(t, err)
	assert.Contains(t, err.Error(), "database not found")
}

// TestQLRow reads rows of InfluxQL's JSON answer: numbers, integers and
// booleans as numbers, null as no value, a string as a value that is not a
// number.
func TestQLRow(t *testing.T) {
	tests := []struct {
		in   string
		t    int64
		v    []float64
		set  []bool
		kind []string
		err  bool
	}{
		{in: `[1720000000000000000,1.5,-2e3,7]`, t: 1720000000000000000, v: []float64{1.5, -2000, 7}, set: []bool{true, true, true}, kind: []string{"", "", ""}},
		{in: `[ 5 , null , true,false ]`, t: 5, v: []float64{0, 1, 0}, set: []bool{false, true, true}, kind: []string{"", "", ""}},
		{in: `[5,"a, \"b\"",2]`, t: 5, v: []float64{0, 2}, set: []bool{true, true}, kind: []string{"string", ""}},
		{in: `[]`, err: true},
		{in: `["x",1]`, err: true},
		{in: `[5,1.2.3]`, err: true},
	}
	for _, tc := range tests {
		var r qlRow
		err := r.UnmarshalJSON([]byte(tc.in))
		if tc.err {
			assert.Error(t, err, tc.in)
			continue
		}
		require.NoError(t, err, tc.in)
		assert.Equal(t, tc.t, r.t, tc.in)
		assert.Equal(t, tc.v, r.v, tc.in)
		assert.Equal(t, tc.set, r.set, tc.in)
		assert.Equal(t, tc.kind, r.kind, tc.in)
	}
}
