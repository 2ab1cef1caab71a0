package influx

import (
	"context"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestInflux_State: state points written at StateTime replace each other
// and read back by their tags, on the real server.
func TestInflux_State(t *testing.T) {
	c := realClient(t, Options{})
	ctx := context.Background()
	meas := unique("state")
	write := func(ahu, kind, state string) {
		require.NoError(t, c.WritePoints(ctx, []Point{{Measurement: meas, Tags: map[string]string{"site": "s\"1", "ahu": ahu, "kind": kind},
			Strings: map[string]string{"state": state}, Time: StateTime}}))
	}
	write("AHU-1", "reheat_not_needed", `{"hits":1}`)
	write("AHU-1", "data_gap", `{"hits":4}`)
	write("AHU-2", "data_gap", `{"hits":9}`)
	write("AHU-1", "reheat_not_needed", `{"hits":2}`) // replaces the first
	got := map[string]string{}
	require.NoError(t, c.ReadState(ctx, meas, map[string]string{"site": "s\"1", "ahu": "AHU-1"}, "kind", func(k, f, v string) error {
		assert.Equal(t, "state", f)
		got[k] = v
		return nil
	}))
	assert.Equal(t, map[string]string{"reheat_not_needed": `{"hits":2}`, "data_gap": `{"hits":4}`}, got)
	n := 0
	require.NoError(t, c.ReadState(ctx, meas, map[string]string{"site": "s\"1", "ahu": "AHU-3"}, "kind", func(string, string, string) error { n++; return nil }))
	assert.Zero(t, n, "nothing stored is not an error")
}
