package ingest

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

func TestHourlyWriter(t *testing.T) {
	recs := []metrics.Record{
		{HourStart: t0, AHU: "AHU-1", Coverage: 1, WaterRemovedKg: 12.5, EffectiveEER: -1.5, RequiredLeavingC: math.NaN(), Flags: []string{"low_coverage", "flat:entering_rh"}},
		{HourStart: t0.Add(3600e9), AHU: `AHU "2"`, Coverage: 0.5},
	}
	t.Run("csv", func(t *testing.T) {
		rows, err := csv.NewReader(bytes.NewReader(writeHourly(t, "csv", recs))).ReadAll()
		require.NoError(t, err)
		require.Len(t, rows, 3)
		col := map[string]int{}
		for i, h := range rows[0] {
			col[h] = i
		}
		for _, want := range []string{"hour_start", "ahu", "coverage", "water_removed_kg", "effective_eer", "required_leaving_temp_c", "reheat_avoidable_kwh_u95", "flags"} {
			assert.Contains(t, col, want)
		}
		assert.Equal(t, "2026-07-14T12:00:00Z", rows[1][col["hour_start"]])
		assert.Equal(t, "12.5", rows[1][col["water_removed_kg"]])
		assert.Equal(t, "-1.5", rows[1][col["effective_eer"]])
		assert.Equal(t, "", rows[1][col["required_leaving_temp_c"]], "NaN is an empty cell")
		assert.Equal(t, "low_coverage flat:entering_rh", rows[1][col["flags"]])
		assert.Equal(t, `AHU "2"`, rows[2][col["ahu"]])
	})
	t.Run("json", func(t *testing.T) {
		buf := bytes.NewBuffer(writeHourly(t, "json", recs))
		var out []map[string]any
		require.NoError(t, json.Unmarshal(buf.Bytes(), &out), buf.String())
		require.Len(t, out, 2)
		assert.Equal(t, 12.5, out[0]["water_removed_kg"])
		assert.Nil(t, out[0]["required_leaving_temp_c"])
		assert.Equal(t, []any{"low_coverage", "flat:entering_rh"}, out[0]["flags"])
		assert.Equal(t, `AHU "2"`, out[1]["ahu"])
	})
	t.Run("empty json", func(t *testing.T) {
		var buf bytes.Buffer
		w, _ := NewHourlyWriter(&buf, "json")
		require.NoError(t, w.Close())
		var out []map[string]any
		require.NoError(t, json.Unmarshal(buf.Bytes(), &out))
		assert.Empty(t, out)
	})
	_, err := FormatFor("out.xlsx")
	assert.ErrorContains(t, err, ".csv or .json")
}
