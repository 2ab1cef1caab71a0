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
// ReadPoints returns point by point. A second tag that varies selects
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
}
