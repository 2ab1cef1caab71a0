package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/testkit"
)

// writeSequenceChange writes a scenario of our own around a sequence
// change, for the analyzeConfig unit (AHU-7, 8000 CFM, IP units, Chicago):
//
//   - 2026-07-14 and 15 (before): humid from 08:00 to 20:00 local (12 h a
//     day), when the coil leaves at 50 °F and the reheat brings the supply
//     to 62 °F (12 °F of reheat);
//   - 2026-07-16 and 17 (after): humid from 04:00 to 22:00 (18 h a day),
//     the new sequence reheats to 56 °F only (6 °F);
//   - other hours are dry: the coil leaves at 62 °F, no reheat.
//
// Humid hours enter at 76 °F 60 % RH, dry ones at 76 °F 38 % RH in both
// periods, so each period's hours fall into the same two dew-point bins
// and every humid hour after the change has exactly half the reheat of one
// before it. The export starts two hours early and ends two hours late so
// that every hour of the four days is fully covered.
func writeSequenceChange(t *testing.T, dir string) (cfg, data string) {
	t.Helper()
	start := time.Date(2026, 7, 13, 22, 0, 0, 0, time.UTC) // wall clock, written without a zone: site time
	end := time.Date(2026, 7, 18, 2, 0, 0, 0, time.UTC)
	return writeCase(t, dir, analyzeConfig, minuteExport("Time,MAT,MARH,LAT,SAT,CFM", start, end, func(ts time.Time) string {
		after := ts.Day() >= 16
		h := ts.Hour()
		humid := h >= 8 && h < 20
		sat := 62.0
		if after {
			humid = h >= 4 && h < 22
			sat = 56
		}
		rh, lat := 38.0, 62.0
		if humid {
			rh, lat = 60, 50
		} else {
			sat = 62
		}
		// A sensor never reads exactly the same value all hour; the
		// engine flags one that does (and the comparison leaves such
		// hours out): the readings alternate by 0.02 °F and 0.1 % RH.
		j := float64(ts.Minute() % 2)
		return fmt.Sprintf(",%.2f,%.1f,%.2f,%.2f,8000", 76+0.02*j, rh+0.1*j, lat+0.02*j, sat+0.02*j)
	}))
}

// TestCompare_EndToEnd imports the scenario into the embedded store,
// analyses it with the real pipeline and compares the two periods.
//
// Expected, by construction: raw reheat before = 2 days × 12 h × R, after
// = 2 × 18 × R/2, so the raw change is -25 % although the sequence halved
// the reheat of every humid hour; normalised to the before period's 24
// humid and 24 dry hours the change is -50 %. R by the sensible rule of
// thumb (common practice, no source): 1.08 × 8000 CFM × 12 °F =
// 103,680 Btu/h = 30.4 kWh per hour, so about 729 kWh before.
func TestCompare_EndToEnd(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeSequenceChange(t, dir)
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	mustCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-17")

	// The table, and the HTML file.
	page := filepath.Join(dir, "compare.html")
	code, out, errOut := runCLI(t, "--log-level", "warn", "compare", "--config", cfg,
		"--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17", "-o", page)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "before 14 Jul 2026 – 15 Jul 2026, after 16 Jul 2026 – 17 Jul 2026")
	assert.Contains(t, out, "hours stored: before 48, after 48")
	// The baseline model projects the before sequence onto the after
	// period's 36 humid hours: 36 × R ≈ 1,094 kWh; measured half of it.
	assert.Regexp(t, `(?m)^AHU-7\s+1,[01]\d\d\s+5\d\d\s+\+5\d\d\s+\+50 %\s+± 0.0 %\s+saving`, out, "baseline ≈ 1,094, measured ≈ 547 kWh, +50 % avoided")
	assert.Contains(t, out, "saves +50 %", "the bin check agrees")
	assert.Contains(t, out, "engineer of record")
	assert.Contains(t, out, "HTML: "+page)
	html, err := os.ReadFile(page)
	require.NoError(t, err)
	assert.Contains(t, string(html), "<svg")
	assert.Contains(t, string(html), "AHU-7")
	assert.NotContains(t, strings.ToLower(string(html)), "<script")
	assert.Contains(t, string(html), "°F", "the site's display units are IP")

	// The figures, from the JSON.
	code, out, errOut = runCLI(t, "--log-level", "warn", "compare", "--config", cfg,
		"--before", "2026-07-14..2026-07-15", "--after", "2026-07-16T00:00..2026-07-18T00:00", "--json", "--units", "si")
	require.Equal(t, 0, code, errOut)
	var c struct {
		Units []struct {
			ID    string `json:"id"`
			Model struct {
				Savings []struct {
					Quantity   string  `json:"quantity"`
					Baseline   float64 `json:"baseline_projected"`
					Measured   float64 `json:"measured"`
					AvoidedPct float64 `json:"avoided_pct"`
					Finding    string  `json:"finding"`
					Fit        struct {
						N        int  `json:"n"`
						MeetsG14 bool `json:"meets_guideline14"`
					} `json:"fit"`
				} `json:"savings"`
				Hours []struct {
					Period string `json:"period"`
				} `json:"hours"`
			} `json:"baseline_model"`
			Humidity struct {
				Held string `json:"target"`
			} `json:"humidity"`
			Bins struct {
				RawBefore struct {
					Reheat float64 `json:"reheat_kwh"`
				} `json:"raw_before"`
				RawAfter struct {
					Reheat float64 `json:"reheat_kwh"`
				} `json:"raw_after"`
				Reheat struct {
					Before    float64 `json:"before"`
					After     float64 `json:"after_normalised"`
					ChangePct float64 `json:"change_pct"`
				} `json:"reheat_kwh"`
				HoursBefore struct {
					Usable   int `json:"usable"`
					InCommon int `json:"in_common_bins"`
				} `json:"hours_before"`
				CommonBins int `json:"common_bins"`
			} `json:"bin_check"`
		} `json:"units"`
		Warnings []string `json:"warnings"`
	}
	require.NoError(t, json.Unmarshal([]byte(out), &c), out)
	require.Len(t, c.Units, 1)
	md := c.Units[0].Model
	require.Len(t, md.Savings, 4, "reheat, cooling input, water removed, cost")
	reheat := md.Savings[0]
	assert.Equal(t, "reheat_kwh", reheat.Quantity)
	// By construction the after sequence halves the reheat of every humid
	// hour: avoided = 50 % of the projected baseline, whose 36 humid hours
	// follow the rule of thumb's R (3 %, as below).
	assert.InDelta(t, 50, reheat.AvoidedPct, 0.5)
	assert.InEpsilon(t, 36*30.4, reheat.Baseline, 0.03)
	assert.Equal(t, "saving", reheat.Finding)
	assert.Equal(t, 48, reheat.Fit.N)
	assert.True(t, reheat.Fit.MeetsG14)
	assert.Len(t, md.Hours, 96, "every usable hour of both periods, with its prediction")
	assert.Equal(t, "held", c.Units[0].Humidity.Held)

	u := c.Units[0].Bins
	// Rule-of-thumb check of the engine's reheat, 3 % (the 1.08 factor is
	// for standard air at 70 °F; the engine uses the moist-air heat).
	assert.InEpsilon(t, 24*30.4, u.RawBefore.Reheat, 0.03)
	// By construction: raw after / raw before = (18 × 2 × R/2) / (24 × R) = 0.75.
	assert.InDelta(t, 0.75, u.RawAfter.Reheat/u.RawBefore.Reheat, 0.005)
	// Normalised: -50 %, and the before figure is the before period's own total.
	assert.InDelta(t, -50, u.Reheat.ChangePct, 0.5)
	assert.InDelta(t, u.RawBefore.Reheat, u.Reheat.Before, 1e-6)
	assert.Equal(t, 2, u.CommonBins, "one humid and one dry dew-point bin")
	assert.Equal(t, 48, u.HoursBefore.Usable)
	assert.Equal(t, 48, u.HoursBefore.InCommon)
	for _, w := range c.Warnings {
		assert.NotContains(t, w, "bin check", "every hour is in a common bin")
	}

	// A period with nothing stored is an error that says what to do.
	code, _, errOut = runCLI(t, "--log-level", "warn", "compare", "--config", cfg,
		"--before", "2026-07-14..2026-07-15", "--after", "2026-08-01..2026-08-02")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "no results are stored for the after period")
	assert.Contains(t, errOut, "dewline analyze")
}

func TestCompare_BadFlags(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "site.yaml")
	require.NoError(t, os.WriteFile(cfg, []byte(analyzeConfig), 0o600))
	ok := []string{"--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17"}
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no config", ok, 2, "--config is required"},
		{"no before", []string{"--config", cfg, "--after", "2026-07-16..2026-07-17"}, 2, "--before is required"},
		{"no after", []string{"--config", cfg, "--before", "2026-07-14..2026-07-15"}, 2, "--after is required"},
		{"not a range", []string{"--config", cfg, "--before", "2026-07-14", "--after", "2026-07-16..2026-07-17"}, 2, `--before "2026-07-14": give FROM..TO`},
		{"not a time", []string{"--config", cfg, "--before", "2026-07-14..2026-07-15", "--after", "July..August"}, 2, `--after: start "July" is not a time`},
		{"reversed", []string{"--config", cfg, "--before", "2026-07-15..2026-07-14", "--after", "2026-07-16..2026-07-17"}, 2, "the end is not after the start"},
		{"overlap", []string{"--config", cfg, "--before", "2026-07-14..2026-07-16", "--after", "2026-07-16..2026-07-17"}, 2, "--before 2026-07-14..2026-07-16 and --after 2026-07-16..2026-07-17 overlap"},
		{"units", append([]string{"--config", cfg, "--units", "metric"}, ok...), 2, `--units "metric": use si or ip`},
		{"min hours", append([]string{"--config", cfg, "--min-hours", "1"}, ok...), 2, "--min-hours 1: use 2 or more"},
		{"normalise", append([]string{"--config", cfg, "--normalise-to", "summer"}, ok...), 2, `--normalise-to "summer": use before, after, or a period FROM..TO`},
		{"output folder", append([]string{"--config", cfg, "-o", filepath.Join(dir, "nope", "c.html")}, ok...), 2, "-o " + filepath.Join(dir, "nope", "c.html")},
		{"unknown flag", append([]string{"--config", cfg, "--bins", "2"}, ok...), 2, "-bins"},
		{"no store yet", append([]string{"--config", cfg}, ok...), 1, "embedded store"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, _, errOut := runCLI(t, append([]string{"--log-level", "error", "compare"}, tt.args...)...)
			assert.Equal(t, tt.code, code, errOut)
			assert.Contains(t, errOut, tt.want)
		})
	}
}

// TestInflux_CompareMatchesEmbedded analyses the sequence-change scenario
// into the embedded store and into the real InfluxDB test server and
// compares the two periods from each: the baseline model, its statistics
// and the bin check come out the same from both stores.
func TestInflux_CompareMatchesEmbedded(t *testing.T) {
	embCfg, fluxCfg, data := inBothStores(t, "compare", writeSequenceChange, analyzeConfig)
	outs := map[string]string{}
	for _, cfg := range []string{embCfg, fluxCfg} {
		code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--from", "2026-07-14", "--to", "2026-07-17")
		require.Equal(t, 0, code, errOut)
		code, out, errOut := runCLI(t, "--log-level", "warn", "compare", "--config", cfg,
			"--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17", "--json", "--normalise-to", "before")
		require.Equal(t, 0, code, errOut)
		outs[cfg] = out
	}
	type savings struct {
		Quantity   string   `json:"quantity"`
		Baseline   *float64 `json:"baseline_projected"`
		Measured   *float64 `json:"measured"`
		AvoidedPct *float64 `json:"avoided_pct"`
		U90        *float64 `json:"u90"`
		Finding    string   `json:"finding"`
		Fit        struct {
			N      int      `json:"n"`
			P      int      `json:"p"`
			CVRMSE *float64 `json:"cv_rmse"`
		} `json:"fit"`
	}
	type result struct {
		Units []struct {
			Model struct {
				Savings []savings `json:"savings"`
			} `json:"baseline_model"`
			Bins struct {
				Reheat struct {
					ChangePct *float64 `json:"change_pct"`
				} `json:"reheat_kwh"`
			} `json:"bin_check"`
		} `json:"units"`
	}
	var e, f result
	require.NoError(t, json.Unmarshal([]byte(outs[embCfg]), &e))
	require.NoError(t, json.Unmarshal([]byte(outs[fluxCfg]), &f))
	require.Len(t, e.Units, 1)
	require.Len(t, f.Units, 1)
	se, sf := e.Units[0].Model.Savings, f.Units[0].Model.Savings
	require.Len(t, se, 4)
	require.Len(t, sf, 4)
	num := func(p *float64) float64 {
		if p == nil {
			return -1e300 // null on one side must be null on the other
		}
		return *p
	}
	for q := range se {
		assert.Equal(t, se[q].Quantity, sf[q].Quantity)
		assert.Equal(t, se[q].Finding, sf[q].Finding, se[q].Quantity)
		assert.Equal(t, se[q].Fit.N, sf[q].Fit.N, se[q].Quantity)
		assert.Equal(t, se[q].Fit.P, sf[q].Fit.P, se[q].Quantity)
		// Six significant digits in the JSON.
		for _, pair := range [][2]*float64{{se[q].Baseline, sf[q].Baseline}, {se[q].Measured, sf[q].Measured}, {se[q].AvoidedPct, sf[q].AvoidedPct}} {
			// relative 1e-5, and absolute near zero (a figure the change
			// left as it was reads 0 % avoided in both stores)
			a, b := num(pair[0]), num(pair[1])
			assert.InDelta(t, a, b, 1e-5*math.Max(math.Abs(a), math.Abs(b))+1e-9, "%s: embedded %g, InfluxDB %g", se[q].Quantity, a, b)
		}
	}
	assert.InDelta(t, 50, num(se[0].AvoidedPct), 0.5, "the scenario halves the reheat of every humid after hour")
	assert.InDelta(t, num(e.Units[0].Bins.Reheat.ChangePct), num(f.Units[0].Bins.Reheat.ChangePct), 1e-4)
}

// outdoorConfig is analyzeConfig with the outdoor roles mapped.
const outdoorConfig = analyzeConfig + `      outdoor_temp:  {column: OAT, unit: F}
      outdoor_rh:    {column: OARH, unit: "%"}
`

// writeOutdoorSequence writes six days of our own scenario with the
// outdoor air logged (configuration outdoorConfig):
//
//   - 2026-07-14 and 15 (before): humid from 08:00 to 20:00 local, the
//     coil leaving at 50 °F and the reheat bringing the supply to 62 °F;
//   - 2026-07-16 and 17 (after): humid from 04:00 to 22:00, reheat to
//     56 °F only (half the reheat of a humid hour);
//   - 2026-07-18 and 19 (a third period, the after sequence): humid all
//     day;
//   - other hours are dry: the coil leaves at 62 °F, no reheat.
//
// Outdoor air is 86 °F at 60 % RH in humid hours and at 30 % in dry
// ones; entering air 76 °F at 60 % and 38 % (as writeSequenceChange).
func writeOutdoorSequence(t *testing.T, dir string) (cfg, data string) {
	t.Helper()
	start := time.Date(2026, 7, 13, 22, 0, 0, 0, time.UTC) // wall clock, site time
	end := time.Date(2026, 7, 20, 2, 0, 0, 0, time.UTC)
	return writeCase(t, dir, outdoorConfig, minuteExport("Time,MAT,MARH,LAT,SAT,CFM,OAT,OARH", start, end, func(ts time.Time) string {
		h := ts.Hour()
		humid, sat := h >= 8 && h < 20, 62.0
		switch {
		case ts.Day() >= 18:
			humid, sat = true, 56
		case ts.Day() >= 16:
			humid, sat = h >= 4 && h < 22, 56
		}
		rh, lat, oarh := 38.0, 62.0, 30.0
		if humid {
			rh, lat, oarh = 60, 50, 60
		} else {
			sat = 62
		}
		j := float64(ts.Minute() % 2) // no sensor reads exactly the same all hour
		return fmt.Sprintf(",%.2f,%.1f,%.2f,%.2f,8000,%.2f,%.1f",
			76+0.02*j, rh+0.1*j, lat+0.02*j, sat+0.02*j, 86+0.02*j, oarh+0.1*j)
	}))
}

// outdoorResult is what the outdoor tests read of compare --json.
type outdoorResult struct {
	Normalise    string `json:"normalised_to"`
	NormalPeriod struct {
		Label string `json:"label"`
	} `json:"normalised_period"`
	Units []struct {
		Model struct {
			Drivers string `json:"drivers"`
			Savings []struct {
				Quantity   string  `json:"quantity"`
				AvoidedPct float64 `json:"avoided_pct"`
				Normalised struct {
					To         string  `json:"to"`
					Hours      int     `json:"hours"`
					Baseline   float64 `json:"baseline"`
					AvoidedPct float64 `json:"avoided_pct"`
				} `json:"normalised"`
			} `json:"savings"`
			Hours []struct {
				Period     string   `json:"period"`
				DewPointC  *float64 `json:"driver_dewpoint_c"`
				TempC      *float64 `json:"driver_temp_c"`
				EnteringDP *float64 `json:"entering_dewpoint_c"`
			} `json:"hours"`
		} `json:"baseline_model"`
	} `json:"units"`
}

// checkOutdoorResult holds a comparison of writeOutdoorSequence to what
// the scenario gives by construction, and the hours' outdoor dew points to
// npm psychrolib's dew points of the logged outdoor states.
func checkOutdoorResult(t *testing.T, store string, c outdoorResult) {
	t.Helper()
	require.Len(t, c.Units, 1, store)
	md := c.Units[0].Model
	assert.Equal(t, "outdoor", md.Drivers, store)
	assert.Equal(t, "period", c.Normalise, store)
	assert.Equal(t, "18 Jul 2026 – 19 Jul 2026", c.NormalPeriod.Label, store)
	require.NotEmpty(t, md.Savings, store)
	r := md.Savings[0]
	assert.InDelta(t, 50, r.AvoidedPct, 0.5, "%s: every humid after hour has half the reheat", store)
	// Normalised to the third period's 48 humid hours: the baseline model
	// gives 48 R (R by the sensible rule of thumb, 1.08 × 8000 CFM × 12 °F
	// = 30.4 kWh, common practice, no source; 3 %), the after model half.
	assert.Equal(t, "period", r.Normalised.To, store)
	assert.Equal(t, 48, r.Normalised.Hours, store)
	assert.InEpsilon(t, 48*30.4, r.Normalised.Baseline, 0.03, store)
	assert.InDelta(t, 50, r.Normalised.AvoidedPct, 0.5, store)
	// The drivers are the outdoor dew points: psychrolib's at 30 °C (86 °F)
	// and 60 % or 30 % RH, within 0.05 K (the logged 0.1 % RH jitter).
	ref := testkit.PsychrolibStates(t, "SI", [][3]float64{{30, 0.6005, 101325}, {30, 0.3005, 101325}})
	require.NotEmpty(t, md.Hours, store)
	for _, h := range md.Hours {
		require.NotNil(t, h.DewPointC, store)
		require.NotNil(t, h.EnteringDP, store)
		near := math.Min(math.Abs(*h.DewPointC-ref[0][1]), math.Abs(*h.DewPointC-ref[1][1]))
		assert.Less(t, near, 0.05, "%s: outdoor dew point %.3f °C, psychrolib %.3f or %.3f", store, *h.DewPointC, ref[0][1], ref[1][1])
		assert.InDelta(t, 30, *h.TempC, 0.02, store)
		assert.Greater(t, math.Abs(*h.DewPointC-*h.EnteringDP), 1.0, "%s: the entering dew point is another", store)
	}
}

// TestCompare_OutdoorDriversAndThirdPeriod: with the outdoor roles mapped
// the baseline's drivers are the outdoor conditions, which the hourly
// records carry through the embedded store; --normalise-to FROM..TO
// normalises to a third period of stored results.
func TestCompare_OutdoorDriversAndThirdPeriod(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeOutdoorSequence(t, dir)
	code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--from", "2026-07-14", "--to", "2026-07-19")
	require.Equal(t, 0, code, errOut)
	args := []string{"--log-level", "warn", "compare", "--config", cfg, "--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17",
		"--normalise-to", "2026-07-18..2026-07-19"}
	code, out, errOut := runCLI(t, append(args, "--json", "--units", "si")...)
	require.Equal(t, 0, code, errOut)
	var c outdoorResult
	require.NoError(t, json.Unmarshal([]byte(out), &c), out)
	checkOutdoorResult(t, "embedded", c)

	code, out, errOut = runCLI(t, args...)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "AHU-7: outdoor (outdoor dry bulb and dew point")
	assert.Regexp(t, `normalised to the period 18 Jul 2026 – 19 Jul 2026's conditions, reheat: AHU-7 \+(49|50|51)\.\d % ± `, out)

	// A third period with nothing stored says so.
	code, _, errOut = runCLI(t, "--log-level", "warn", "compare", "--config", cfg, "--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17",
		"--normalise-to", "2026-09-01..2026-09-02")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "--normalise-to 1 Sep 2026 – 2 Sep 2026: no hours to compare: no results are stored for it")
	code, _, errOut = runCLI(t, "--log-level", "warn", "compare", "--config", cfg, "--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17",
		"--normalise-to", "2026-07-19..2026-07-18")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "--normalise-to \"2026-07-19..2026-07-18\": the end is not after the start")
}

// TestInflux_CompareOutdoorDrivers: the outdoor conditions go to InfluxDB
// as fields of dewline_hourly and come back: the comparison of the real
// server's results equals the embedded store's by construction and to
// psychrolib.
func TestInflux_CompareOutdoorDrivers(t *testing.T) {
	_, cfg, data := inBothStores(t, "compareoutdoor", writeOutdoorSequence, outdoorConfig)
	code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--from", "2026-07-14", "--to", "2026-07-19")
	require.Equal(t, 0, code, errOut)
	code, out, errOut := runCLI(t, "--log-level", "warn", "compare", "--config", cfg, "--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17",
		"--normalise-to", "2026-07-18..2026-07-19", "--json", "--units", "si")
	require.Equal(t, 0, code, errOut)
	var c outdoorResult
	require.NoError(t, json.Unmarshal([]byte(out), &c), out)
	checkOutdoorResult(t, "InfluxDB", c)
}
