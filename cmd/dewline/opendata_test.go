package main

import (
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestOpenData_HILFTHeatPump runs the open laboratory data of a measured
// two-stage air-source heat pump (HILFT ASHP, NIST, MIT licence; see
// testdata/open/hilft-ashp/README.md) through "dewline analyze" with the
// files' quirks handled in its configuration, and checks each day against
// physically plausible bands (common practice, no source):
//   - the unit's air-side COP (net coil load / outdoor-unit power) between
//     2.5 and 5.5, the range of such units at 75-100 °F outdoors;
//   - a sensible heat ratio between 0.6 and 0.95, typical of a DX coil;
//   - water removed on every day, more than its own uncertainty;
//   - no hour above 4.5 x the largest airflow (1100 scfm) x 10 Btu/lb of
//     enthalpy drop, an upper bound on what this coil can carry;
//   - the unit cycles: its wet coil gives water back to the air when the
//     compressor stops and the first air after a restart carries it. That
//     water is reported as water_reevaporated_kg, and the coil-adds-moisture
//     finding (a sensor fault) stays off all but a few hours.
func TestOpenData_HILFTHeatPump(t *testing.T) {
	dir := "../../testdata/open/hilft-ashp"
	cfg := filepath.Join(dir, "config.yaml")
	for _, city := range []string{"Atlanta", "Buffalo", "Tucson"} {
		t.Run(city, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "hourly.csv")
			code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg,
				"--input", filepath.Join(dir, city+"_Eff_Default.csv.gz"), "--out", out, "--no-store")
			require.Equal(t, 0, code, errOut)
			header, rows := readHourly(t, out)
			col := map[string]int{}
			for i, h := range header {
				col[h] = i
			}
			num := func(r []string, k string) float64 {
				v, err := strconv.ParseFloat(r[col[k]], 64)
				if err != nil {
					return 0
				}
				return v
			}
			var coil, sens, water, waterU2, input, cover, reevap float64
			moist := 0
			maxHour := 0.0
			for _, r := range rows {
				coil += num(r, "coil_total_kwh")
				sens += num(r, "coil_sensible_kwh")
				water += num(r, "water_removed_kg")
				waterU2 += math.Pow(num(r, "water_removed_kg_u95"), 2)
				input += num(r, "cooling_input_kwh")
				cover += num(r, "coverage")
				maxHour = math.Max(maxHour, num(r, "coil_total_kwh"))
				reevap += num(r, "water_reevaporated_kg")
				if strings.Contains(r[col["flags"]], "coil_adds_moisture") {
					moist++
				}
			}
			require.GreaterOrEqual(t, len(rows), 24)
			require.Greater(t, input, 1.0, "the compressor ran")
			cop, shr := coil/input, sens/coil
			t.Logf("%s: coil %.1f kWh, water %.1f kg (±%.1f), outdoor unit %.1f kWh, COP %.2f, SHR %.2f, coverage %.0f %%",
				city, coil, water, math.Sqrt(waterU2), input, cop, shr, 100*cover/float64(len(rows)))
			assert.Greater(t, cover/float64(len(rows)), 0.9, "one-minute data with no gaps")
			assert.True(t, cop > 2.5 && cop < 5.5, "COP %.2f", cop)
			assert.True(t, shr > 0.6 && shr < 0.95, "SHR %.2f", shr)
			assert.Greater(t, water, math.Sqrt(waterU2), "water removed exceeds its uncertainty")
			bound := 4.5 * 1100 * 10 / 3412.14 // kWh in one hour
			assert.Less(t, maxHour, bound)
			t.Logf("%s: water given back %.2f kg; coil_adds_moisture on %d of %d hours", city, reevap, moist, len(rows))
			assert.Greater(t, reevap, 0.5, "a cycling wet coil gives water back")
			assert.LessOrEqual(t, moist, len(rows)/10, "coil_adds_moisture is a sensor finding, not the cycling coil")
		})
	}
}
