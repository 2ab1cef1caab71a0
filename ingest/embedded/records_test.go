package embedded

import (
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// The fast decoder must agree with encoding/json (decodeFields) on
// everything appendFields writes, and fall back to it on anything else.
func TestDecodeInto_AgreesWithEncodingJSON(t *testing.T) {
	texts := []string{
		string(appendFields(nil, map[string]float64{"reheat_kwh": 12.5, "cost": math.NaN(), "coverage": 1, "shr": -0.25})),
		string(appendFields(nil, map[string]float64{"x": 1e21, "y": 5e-324, "z": math.Inf(1)})),
		string(appendFields(nil, map[string]float64{})),
		`{"reheat\u005fkwh":3}`,         // escaped key: the general decoder
		`{ "reheat_kwh" : 4 , "shr":1}`, // spaces: the general decoder
	}
	for _, text := range texts {
		want, err := decodeFields(text)
		require.NoError(t, err, text)
		got := map[string]*float64{}
		for k := range want {
			v := 999.0
			got[k] = &v
		}
		require.NoError(t, decodeInto([]byte(text), got), text)
		for k, v := range want {
			if math.IsNaN(v) {
				assert.True(t, math.IsNaN(*got[k]), "%s %s", text, k)
			} else {
				assert.Equal(t, v, *got[k], "%s %s", text, k)
			}
		}
	}
	for _, bad := range []string{`{"a":}`, `{"a":1`, `[1]`, `{"a":"x"}`} {
		v := 0.0
		assert.Error(t, decodeInto([]byte(bad), map[string]*float64{"a": &v}), bad)
	}
}

func TestReadRecords_MatchesReadHourly(t *testing.T) {
	s, _ := newStore(t)
	h0 := time.Date(2026, 7, 1, 10, 0, 0, 0, time.UTC)
	rows := []HourRow{
		{AHU: "AHU-1", Hour: h0, Schema: 1, Fields: map[string]float64{"reheat_kwh": 10.25, "water_removed_kg": 3, "unknown_future": 7}, Flags: []string{"gap", "flat"}},
		{AHU: "AHU-2", Hour: h0, Schema: 1, Fields: map[string]float64{"reheat_kwh": math.NaN()}},
		{AHU: "AHU-1", Hour: h0.Add(time.Hour), Schema: 1, Fields: map[string]float64{"coverage": 0.5}},
	}
	require.NoError(t, s.PutHourly(testCtx(t), rows))
	type got struct {
		ahu    string
		hour   time.Time
		reheat float64
		water  float64
		flags  []string
	}
	var all []got
	require.NoError(t, s.ReadRecords(testCtx(t), "", h0, h0.Add(2*time.Hour), func(r *metrics.Record) error {
		all = append(all, got{r.AHU, r.HourStart, r.ReheatKWh, r.WaterRemovedKg, append([]string(nil), r.Flags...)})
		return nil
	}))
	require.Len(t, all, 3)
	// Unit by unit, each in hour order.
	assert.Equal(t, got{"AHU-1", h0, 10.25, 3, []string{"gap", "flat"}}, all[0])
	assert.Equal(t, "AHU-1", all[1].ahu)
	assert.True(t, math.IsNaN(all[1].reheat), "a field the row lacks reads as NaN, not the previous row's value")
	assert.Empty(t, all[1].flags, "flags do not leak from the previous row")
	assert.Equal(t, "AHU-2", all[2].ahu)
	assert.True(t, math.IsNaN(all[2].reheat))
	var one int
	require.NoError(t, s.ReadRecords(testCtx(t), "AHU-2", h0, h0.Add(2*time.Hour), func(*metrics.Record) error { one++; return nil }))
	assert.Equal(t, 1, one)
}
