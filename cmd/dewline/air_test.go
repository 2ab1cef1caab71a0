package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/testkit"
)

func runCLI(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var o, e bytes.Buffer
	code = run(context.Background(), args, &o, &e)
	return code, o.String(), e.String()
}

// mustCLI is runCLI that fails the test unless the command exits 0; it
// returns the standard output.
func mustCLI(t *testing.T, args ...string) string {
	t.Helper()
	code, stdout, stderr := runCLI(t, args...)
	require.Equal(t, 0, code, stderr)
	return stdout
}

// TestAir_JSONAgreesWithPsychrolib runs "dewline air --json" and compares
// every key with npm psychrolib 1.1.1 (an independent implementation of
// ASHRAE Handbook - Fundamentals 2017 ch. 1) on the same state. Tolerances:
// 1e-4 relative on W, h, v, density; 0.01 K on dew point and wet bulb.
func TestAir_JSONAgreesWithPsychrolib(t *testing.T) {
	testkit.Psychrolib(t)
	cases := []struct {
		name string
		args []string
		// psychrolib inputs: t °C, RH fraction, p Pa; RH comes from our own
		// output only for the dew-point and wet-bulb cases.
		tC, pPa float64
	}{
		{"ip with altitude", []string{"--db", "75F", "--rh", "50", "--altitude", "300m"}, (75 - 32) / 1.8, 101325 * pow(1-2.25577e-5*300, 5.2559)},
		{"dew point and pressure", []string{"--db", "24C", "--dp", "13C", "--pressure", "98.2kPa"}, 24, 98200},
		{"wet bulb", []string{"--db", "30C", "--wb", "22C"}, 30, 101325},
		{"cold", []string{"--db", "-10C", "--rh", "80%", "--pressure", "29.5inHg"}, -10, 29.5 * 3386.389},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errOut := runCLI(t, append([]string{"air", "--json"}, tc.args...)...)
			require.Equal(t, 0, code, errOut)
			var got map[string]float64
			require.NoError(t, json.Unmarshal([]byte(out), &got))
			for _, k := range []string{"dry_bulb_c", "rh_pct", "pressure_kpa", "humidity_ratio", "dew_point_c", "wet_bulb_c", "enthalpy_kj_per_kg", "specific_volume_m3_per_kg", "density_kg_per_m3"} {
				require.Contains(t, got, k)
			}
			assert.InDelta(t, tc.pPa/1000, got["pressure_kpa"], 5e-4, "the JSON gives the pressure to the pascal")
			ref := testkit.PsychrolibStates(t, "SI", [][3]float64{{tc.tC, got["rh_pct"] / 100, tc.pPa}})[0]
			assert.InEpsilon(t, ref[0], got["humidity_ratio"], 1e-4, "W")
			assert.InDelta(t, ref[1], got["dew_point_c"], 0.01, "dew point")
			assert.InDelta(t, ref[2], got["wet_bulb_c"], 0.01, "wet bulb")
			assert.InEpsilon(t, ref[3]/1000, got["enthalpy_kj_per_kg"], 1e-4, "enthalpy")
			assert.InEpsilon(t, ref[4], got["specific_volume_m3_per_kg"], 1e-4, "volume")
			assert.InEpsilon(t, ref[5], got["density_kg_per_m3"], 1e-4, "density")
		})
	}
	// The dew point and wet bulb given on the command line come back out.
	_, out, _ := runCLI(t, "air", "--json", "--db", "24C", "--dp", "13C", "--pressure", "98.2kPa")
	assert.Contains(t, out, `"dew_point_c": 13`)
}

func pow(x, y float64) float64 {
	r, _ := strconv.ParseFloat(fmt.Sprintf("%.17g", math.Pow(x, y)), 64)
	return r
}

func TestAir_BadInput(t *testing.T) {
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"rh over 100", []string{"--db", "24C", "--rh", "120"}, 2, "between 0 and 100 %"},
		{"no unit", []string{"--db", "75", "--rh", "50"}, 2, "has no unit"},
		{"two humidities", []string{"--db", "24C", "--rh", "50", "--dp", "10C"}, 2, "exactly one"},
		{"no humidity", []string{"--db", "24C"}, 2, "exactly one"},
		{"wet bulb above dry bulb", []string{"--db", "24C", "--wb", "26C"}, 1, "above the dry bulb"},
		{"pressure unit", []string{"--db", "24C", "--rh", "50", "--pressure", "101.3"}, 2, "has no unit"},
		{"pressure too low", []string{"--db", "24C", "--rh", "50", "--pressure", "1kPa"}, 1, "pressure"},
		{"wrong unit kind", []string{"--db", "24kPa", "--rh", "50"}, 2, "unknown temperature unit"},
		{"altitude and pressure", []string{"--db", "24C", "--rh", "50", "--altitude", "10m", "--pressure", "100kPa"}, 2, "not both"},
		{"unknown flag", []string{"--db", "24C", "--humid", "50"}, 2, "flag provided but not defined"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errOut := runCLI(t, append([]string{"air"}, tt.args...)...)
			assert.Equal(t, tt.code, code)
			assert.Empty(t, out)
			assert.Contains(t, errOut, tt.want)
			assert.LessOrEqual(t, strings.Count(strings.TrimSpace(errOut), "\n"), 0, "one line: %q", errOut)
		})
	}
}

func TestAir_Table(t *testing.T) {
	code, out, _ := runCLI(t, "air", "--db", "75F", "--rh", "50")
	require.Equal(t, 0, code)
	assert.Contains(t, out, "°F")
	assert.Contains(t, out, "gr/lb dry air")
	code, out, _ = runCLI(t, "air", "--db", "24C", "--rh", "50", "--units", "ip")
	require.Equal(t, 0, code)
	assert.Contains(t, out, "75.2  °F")
	code, out, _ = runCLI(t, "air", "--db", "24", "--rh", "50", "--units", "si")
	require.Equal(t, 0, code)
	assert.Contains(t, out, "24.00  °C")
}
