package main

import (
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// fieldTruth runs metrics/testdata/fieldtruth.js (npm psychrolib and the
// handbook's bypass-factor coil, no dewline code) into a temporary folder
// and returns the folder.
func fieldTruth(t *testing.T) string {
	t.Helper()
	dir := os.Getenv("DEWLINE_PSYCHROLIB")
	if _, err := exec.LookPath("node"); dir == "" || err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("DEWLINE_PSYCHROLIB and node are required under CI (deploy/dev/test.sh installs them)")
		}
		t.Skip("set DEWLINE_PSYCHROLIB to npm psychrolib's folder to run the field ground truth")
	}
	out := t.TempDir()
	cmd := exec.Command("node", "../../metrics/testdata/fieldtruth.js", out)
	cmd.Env = append(os.Environ(), "DEWLINE_PSYCHROLIB="+dir)
	b, err := cmd.CombinedOutput()
	require.NoError(t, err, string(b))
	return out
}

// csvTable reads a CSV file with a header into rows keyed by column name.
func csvTable(t *testing.T, path string) []map[string]string {
	t.Helper()
	header, rows := readHourly(t, path)
	out := make([]map[string]string, 0, len(rows))
	for _, r := range rows {
		m := make(map[string]string, len(r))
		for i, h := range header {
			m[h] = r[i]
		}
		out = append(out, m)
	}
	return out
}

func fnum(s string) float64 {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

// hourErrors is a figure's hourly relative errors. An hour's error is
// |estimate - truth| / max(truth, floor), the floor being a tenth of the
// air handler's mean hourly truth, so that a few grams on a dry hour are
// not a huge percentage while kilograms claimed on a dry hour still count.
// Hours where neither truth nor estimate reaches the floor say nothing
// about the figure and are left out.
type hourErrors struct {
	name  string
	errs  []float64
	worst []string
}

func (h *hourErrors) add(truth, est, floor float64, where string) {
	if math.IsNaN(truth) || math.IsNaN(est) {
		return
	}
	if math.Abs(truth) < floor && math.Abs(est) < floor {
		return
	}
	e := math.Abs(est-truth) / math.Max(math.Abs(truth), floor)
	h.errs = append(h.errs, e)
	h.worst = append(h.worst, fmt.Sprintf("%s truth %.3f est %.3f err %.1f %%", where, truth, est, 100*e))
}

func (h *hourErrors) stats() (mape, p95 float64) {
	if len(h.errs) == 0 {
		return math.NaN(), math.NaN()
	}
	s := append([]float64(nil), h.errs...)
	sort.Float64s(s)
	sum := 0.0
	for _, e := range s {
		sum += e
	}
	k := int(math.Ceil(0.95*float64(len(s)))) - 1
	return sum / float64(len(s)), s[k]
}

// worstN lists the n hours with the largest errors, for the failure message.
func (h *hourErrors) worstN(n int) string {
	idx := make([]int, len(h.errs))
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return h.errs[idx[a]] > h.errs[idx[b]] })
	var b strings.Builder
	for i := 0; i < n && i < len(idx); i++ {
		b.WriteString("\n  " + h.worst[idx[i]])
	}
	return b.String()
}

// TestFieldTruth_Goals holds "dewline analyze" to the accuracy goals on the
// field ground truth (metrics/testdata/fieldtruth.js): a week of four
// invented air handlers simulated minute by minute with npm psychrolib and
// the bypass-factor coil, logged as building controls log them (1-, 5- and
// 15-minute intervals and change of value, local time across the
// 2026-11-01 fall-back, a stuck entering-RH sensor on a 15-minute log, a dry
// coil with a noisy coil-leaving RH sensor, mixed air without its own RH,
// a controller that lags after a dry spell). The exports go through the
// user's path: the CSV reader, the aligner and the engine.
//
// Goals (MAPE / 95th percentile of the hourly error, stuck-sensor hours
// excluded): water removed 4 % / 12 %, net coil energy 2 % / 6 %, reheat
// 2 % / 6 %, effective EER (electric only) 3 % / 10 %, reheat needed for the
// supply dew-point target 10 % / 30 %; every stuck-sensor hour flagged.
func TestFieldTruth_Goals(t *testing.T) {
	dir := fieldTruth(t)
	out := filepath.Join(t.TempDir(), "hourly.csv")
	args := []string{"--log-level", "error", "analyze", "--config", filepath.Join(dir, "config.yaml"), "--out", out, "--no-store"}
	for _, id := range []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4"} {
		args = append(args, "--input", filepath.Join(dir, id+".csv"))
	}
	code, _, errOut := runCLI(t, args...)
	require.Equal(t, 0, code, errOut)

	truth := csvTable(t, filepath.Join(dir, "truth.csv"))
	got := map[string]map[string]string{}
	for _, r := range csvTable(t, out) {
		got[r["ahu"]+" "+r["hour_start"]] = r
	}
	// The mean hourly truth of each air handler sets the error floors.
	mean := map[string]map[string]float64{}
	count := map[string]float64{}
	figures := []string{"water_kg", "coil_net_kwh", "reheat_kwh", "reheat_needed_kwh"}
	for _, r := range truth {
		if mean[r["ahu"]] == nil {
			mean[r["ahu"]] = map[string]float64{}
		}
		for _, f := range figures {
			mean[r["ahu"]][f] += fnum(r[f])
		}
		count[r["ahu"]]++
	}
	water := &hourErrors{name: "water removed"}
	coil := &hourErrors{name: "net coil energy"}
	reheat := &hourErrors{name: "reheat energy"}
	eer := &hourErrors{name: "effective EER"}
	needed := &hourErrors{name: "reheat needed for the target"}
	byUnit := map[string]*hourErrors{}
	// per air handler, for the fixes that concern one of them
	unitErr := func(m map[string]*hourErrors, name, u string) *hourErrors {
		if m[u] == nil {
			m[u] = &hourErrors{name: name + ", " + u}
		}
		return m[u]
	}
	coilBy, reheatBy, eerBy := map[string]*hourErrors{}, map[string]*hourErrors{}, map[string]*hourErrors{}
	shortTruth, shortEst := map[string]float64{}, map[string]float64{}
	lagHours, lagAlerted := 0, 0
	shortRule := ruleOf(t, metrics.AlertShortfall)
	stuck, stuckFlagged := 0, 0
	var missing, falseFlat, dryWater []string
	for _, r := range truth {
		key := r["ahu"] + " " + r["hour_start"]
		g, ok := got[key]
		if !ok {
			missing = append(missing, key)
			continue
		}
		floor := func(f string) float64 { return 0.1 * mean[r["ahu"]][f] / count[r["ahu"]] }
		for _, f := range strings.Fields(g["flags"]) {
			if (strings.HasPrefix(f, "flat:") || f == metrics.FlagCOPImplausible || f == metrics.FlagMoistureAdded) && r["stuck"] != "1" {
				falseFlat = append(falseFlat, key+" "+f)
			}
		}
		// A coil whose surface never reached the entering dew point (no wet
		// minute in the truth) removes no water. With a leaving sensor
		// (AHU-2) physics must say so; a coil model without one may claim a
		// little on a coil within a few tenths of a kelvin of the dew
		// point, as long as the hour says it is within the uncertainty (the
		// assumed bypass factor decides where condensation starts).
		modelled := r["ahu"] != "AHU-2" && fnum(g["water_removed_kg"]) <= fnum(g["water_removed_kg_u95"]) &&
			strings.Contains(g["flags"], metrics.FlagWaterInUncertainty)
		if r["wet_minutes"] == "0" && fnum(g["water_removed_kg"]) > 0.5 && !modelled {
			dryWater = append(dryWater, fmt.Sprintf("%s: %s kg", key, g["water_removed_kg"]))
		}
		shortTruth[r["ahu"]] += fnum(r["shortfall_kg"])
		shortEst[r["ahu"]] += fnum(g["humidity_shortfall_kg"])
		// The lagging controller: hours where the coil left more than 5 kg
		// the target needed removed must raise too_little_dehumidification.
		if r["ahu"] == "AHU-4" && fnum(r["shortfall_kg"]) > 5 {
			lagHours++
			rec := recordOf(g)
			if hit, _, _, _ := shortRule.Check(&rec, metrics.DefaultRuleParams); hit {
				lagAlerted++
			}
		}
		if r["stuck"] == "1" {
			stuck++
			if strings.Contains(g["flags"], "flat:entering_rh") {
				stuckFlagged++
			}
			continue
		}
		if fnum(g["coverage"]) < 0.9 {
			t.Logf("%s: coverage %s, flags %s", key, g["coverage"], g["flags"])
		}
		water.add(fnum(r["water_kg"]), fnum(g["water_removed_kg"]), floor("water_kg"), key)
		if byUnit[r["ahu"]] == nil {
			byUnit[r["ahu"]] = &hourErrors{name: "water removed, " + r["ahu"]}
		}
		byUnit[r["ahu"]].add(fnum(r["water_kg"]), fnum(g["water_removed_kg"]), floor("water_kg"), key)
		coil.add(fnum(r["coil_net_kwh"]), fnum(g["coil_total_kwh"]), floor("coil_net_kwh"), key)
		reheat.add(fnum(r["reheat_kwh"]), fnum(g["reheat_kwh"]), floor("reheat_kwh"), key)
		eer.add(fnum(r["effective_eer_electric"]), fnum(g[eerColumn]), 0.5, key)
		unitErr(coilBy, "net coil energy", r["ahu"]).add(fnum(r["coil_net_kwh"]), fnum(g["coil_total_kwh"]), floor("coil_net_kwh"), key)
		unitErr(reheatBy, "reheat energy", r["ahu"]).add(fnum(r["reheat_kwh"]), fnum(g["reheat_kwh"]), floor("reheat_kwh"), key)
		unitErr(eerBy, "effective EER", r["ahu"]).add(fnum(r["effective_eer_electric"]), fnum(g[eerColumn]), 0.5, key)
		needed.add(fnum(r["reheat_needed_kwh"]), fnum(g["reheat_needed_kwh"]), floor("reheat_needed_kwh"), key)
	}
	require.Empty(t, missing, "hours without a record")
	assert.Empty(t, falseFlat, "sensor findings on sensors that work")
	assert.Empty(t, dryWater, "water on dry-coil hours")
	goals := []struct {
		e         *hourErrors
		mape, p95 float64
	}{
		{water, 0.04, 0.12}, {coil, 0.02, 0.06}, {reheat, 0.02, 0.06}, {eer, 0.03, 0.10}, {needed, 0.10, 0.30},
	}
	for _, u := range []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4"} {
		m, p := byUnit[u].stats()
		t.Logf("%-28s MAPE %5.1f %%  P95 %5.1f %%  (%d hours)", byUnit[u].name, 100*m, 100*p, len(byUnit[u].errs))
	}
	for _, u := range []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4"} {
		for _, e := range []*hourErrors{coilBy[u], reheatBy[u], eerBy[u]} {
			m, p := e.stats()
			t.Logf("%-28s MAPE %5.1f %%  P95 %5.1f %%  (%d hours)", e.name, 100*m, 100*p, len(e.errs))
		}
	}
	// The fixes of one air handler each, held to the goals on their own:
	// AHU-3's blow-through fan heat is coil load (without it its coil
	// energy is about 4 % low), AHU-3's modelled DX input carries the
	// part-load cycling loss (without it its EER is about 10 % high), and
	// the exact reheat meters of AHU-1 and AHU-3 outweigh the air side's
	// reading of the same heat (AHU-3's supply sensor reads 0.25 K high:
	// its air side alone is several per cent high).
	for _, c := range []struct {
		e         *hourErrors
		mape, p95 float64
	}{{coilBy["AHU-3"], 0.02, 0.06}, {eerBy["AHU-3"], 0.03, 0.10}, {reheatBy["AHU-1"], 0.005, 0.02}, {reheatBy["AHU-3"], 0.005, 0.02}} {
		m, p := c.e.stats()
		assert.LessOrEqual(t, m, c.mape, "%s MAPE; worst hours:%s", c.e.name, c.e.worstN(5))
		assert.LessOrEqual(t, p, c.p95, "%s P95; worst hours:%s", c.e.name, c.e.worstN(5))
	}
	for _, g := range goals {
		m, p := g.e.stats()
		t.Logf("%-28s MAPE %5.1f %%  P95 %5.1f %%  (%d hours; goal %.0f %% / %.0f %%)", g.e.name, 100*m, 100*p, len(g.e.errs), 100*g.mape, 100*g.p95)
		assert.LessOrEqual(t, m, g.mape, "%s MAPE; worst hours:%s", g.e.name, g.e.worstN(8))
		assert.LessOrEqual(t, p, g.p95, "%s P95; worst hours:%s", g.e.name, g.e.worstN(8))
	}
	for _, u := range []string{"AHU-2", "AHU-4"} {
		t.Logf("%s humidity shortfall: truth %.1f kg, dewline %.1f kg", u, shortTruth[u], shortEst[u])
		assert.InEpsilon(t, shortTruth[u], shortEst[u], 0.15, "%s humidity shortfall over the week", u)
	}
	t.Logf("lagging controller: %d of %d hours with more than 5 kg left in raise %s", lagAlerted, lagHours, metrics.AlertShortfall)
	require.Greater(t, lagHours, 5, "the scenario has a lagging controller")
	assert.GreaterOrEqual(t, float64(lagAlerted), 0.8*float64(lagHours))
	t.Logf("stuck entering-RH hours flagged: %d of %d", stuckFlagged, stuck)
	require.Equal(t, 7, stuck, "the scenario has seven stuck hours")
	assert.Equal(t, stuck, stuckFlagged, "every stuck-sensor hour carries flat:entering_rh")
}

func ruleOf(t *testing.T, kind string) metrics.Rule {
	for _, r := range metrics.Rules() {
		if r.Kind == kind {
			return r
		}
	}
	t.Fatalf("no rule %s", kind)
	return metrics.Rule{}
}

// recordOf reads an hourly CSV row back into a record.
func recordOf(row map[string]string) metrics.Record {
	var r metrics.Record
	for k, v := range row {
		r.SetField(k, fnum(v))
	}
	r.Flags = strings.Fields(row["flags"])
	return r
}

// eerColumn is the hourly column compared with the truth's electric-only
// effective EER.
const eerColumn = "effective_eer"

// analyzeTruth runs "dewline analyze" on the field ground truth's exports
// with the given configuration and returns the records by "ahu hour".
func analyzeTruth(t *testing.T, dir, config string) map[string]map[string]string {
	t.Helper()
	out := filepath.Join(t.TempDir(), "hourly.csv")
	args := []string{"--log-level", "error", "analyze", "--config", config, "--out", out, "--no-store"}
	for _, id := range []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4"} {
		args = append(args, "--input", filepath.Join(dir, id+".csv"))
	}
	code, _, errOut := runCLI(t, args...)
	require.Equal(t, 0, code, errOut)
	got := map[string]map[string]string{}
	for _, r := range csvTable(t, out) {
		got[r["ahu"]+" "+r["hour_start"]] = r
	}
	return got
}

// bandCover counts the hours whose truth lies inside the estimate's 95 %
// band, est ± u95, over hours whose truth reaches floorShare of the air
// handler's mean hourly truth (stuck-sensor hours excluded).
func bandCover(truth []map[string]string, got map[string]map[string]string, truthCol, col string, floorShare float64, units ...string) (in, n int, relU []float64) {
	mean, count := map[string]float64{}, map[string]float64{}
	for _, r := range truth {
		mean[r["ahu"]] += fnum(r[truthCol])
		count[r["ahu"]]++
	}
	want := map[string]bool{}
	for _, u := range units {
		want[u] = true
	}
	for _, r := range truth {
		g, ok := got[r["ahu"]+" "+r["hour_start"]]
		tr := fnum(r[truthCol])
		if !ok || !want[r["ahu"]] || r["stuck"] == "1" || tr < floorShare*mean[r["ahu"]]/count[r["ahu"]] {
			continue
		}
		est, u := fnum(g[col]), fnum(g[col+"_u95"])
		n++
		if math.Abs(est-tr) <= u {
			in++
		}
		relU = append(relU, u/tr)
	}
	return in, n, relU
}

func median(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return s[len(s)/2]
}

// TestFieldTruth_BandsCoverTheTruth: the 95 % bands must hold the truth
// about 95 % of the time, including what the engine assumes where a
// building has no sensor. The truth's sensors carry noise but no
// calibration bias, so the configuration here states them nearly exact:
// what is left of each band is the assumptions. The truth's coils leave the
// rating air at about 95 % RH (AHU-1, AHU-3) and 93 % (AHU-4); AHU-4 is
// configured as a user who knows nothing of its coil writes it (the default
// 95 %), so its water removed is off by what the assumption can be off by,
// and a band without the assumption does not cover it. AHU-3 mixes return
// and outdoor air: its band carries the outdoor-air share's uncertainty.
func TestFieldTruth_BandsCoverTheTruth(t *testing.T) {
	dir := fieldTruth(t)
	truth := csvTable(t, filepath.Join(dir, "truth.csv"))
	b, err := os.ReadFile(filepath.Join(dir, "config.yaml"))
	require.NoError(t, err)
	cfg := strings.Replace(string(b), "    leaving_rh: 93%", "    # leaving_rh not known", 1)
	require.NotEqual(t, string(b), cfg, "the configuration states AHU-4's leaving RH")
	cfg = strings.Replace(cfg, "grid:\n", "sensors: {temperature: 0.02K, rh: 0.2%, airflow: 0.5%, power: 0.5%}\ngrid:\n", 1)
	path := filepath.Join(t.TempDir(), "config.yaml")
	require.NoError(t, os.WriteFile(path, []byte(cfg), 0o600))
	got := analyzeTruth(t, dir, path)
	for _, u := range []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4"} {
		in, n, relU := bandCover(truth, got, "water_kg", "water_removed_kg", 0.3, u)
		t.Logf("%s: water removed inside its 95 %% band in %d of %d hours (%.1f %%), median band ±%.1f %%", u, in, n, 100*float64(in)/float64(n), 100*median(relU))
		if u != "AHU-2" { // AHU-2 measures its leaving humidity: no assumption
			require.Greater(t, n, 100)
			assert.GreaterOrEqual(t, float64(in)/float64(n), 0.90, "%s: water removed inside its band", u)
		}
	}
}
