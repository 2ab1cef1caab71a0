package demo_test

import (
	"crypto/sha256"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/demo"
)

func fileHashes(t *testing.T, sc *demo.Scenario) map[string][32]byte {
	t.Helper()
	out := map[string][32]byte{}
	for _, p := range append(slices.Clone(sc.Exports), sc.ConfigPath) {
		f, err := os.Open(p)
		require.NoError(t, err)
		h := sha256.New()
		_, err = io.Copy(h, f)
		f.Close()
		require.NoError(t, err)
		var sum [32]byte
		copy(sum[:], h.Sum(nil))
		out[filepath.Base(p)] = sum
	}
	return out
}

func TestWrite_SameSeedSameBytes(t *testing.T) {
	base := fileHashes(t, scenario(t))

	again, err := demo.Write(t.TempDir(), demo.Options{Seed: 1})
	require.NoError(t, err)
	assert.Equal(t, base, fileHashes(t, again), "seed 1 written twice must give byte-identical files")
	assert.Equal(t, scenario(t).Rows, again.Rows)

	other, err := demo.Write(t.TempDir(), demo.Options{Seed: 2})
	require.NoError(t, err)
	oh := fileHashes(t, other)
	require.Len(t, oh, len(base))
	for name, sum := range base {
		assert.NotEqual(t, sum, oh[name], "%s: seed 2 gave the same bytes as seed 1", name)
	}
}

func TestWrite_Options(t *testing.T) {
	for _, days := range []int{13, 29, -1} {
		_, err := demo.Write(t.TempDir(), demo.Options{Days: days})
		assert.Error(t, err, "days %d", days)
	}

	// A start in the middle of a July afternoon: the period begins at that
	// day's local midnight and spans no daylight-saving change.
	loc, err := time.LoadLocation(demo.ZoneName)
	require.NoError(t, err)
	sc, err := demo.Write(t.TempDir(), demo.Options{Days: 14, Seed: 7, Start: time.Date(2026, 7, 6, 15, 30, 0, 0, loc)})
	require.NoError(t, err)
	assert.Equal(t, time.Date(2026, 7, 6, 5, 0, 0, 0, time.UTC), sc.From, "local midnight of 6 July, CDT = UTC-5")
	assert.Equal(t, 14*24*time.Hour, sc.To.Sub(sc.From))
	assert.True(t, sc.FallBack.IsZero(), "no fall-back in July")
	_, err = config.Load(sc.ConfigPath)
	assert.NoError(t, err)
}

func TestScenario_Default(t *testing.T) {
	sc := scenario(t)
	assert.Equal(t, demo.SiteName, sc.Site)
	assert.Equal(t, "America/Chicago", sc.Zone)
	assert.Equal(t, sc.From, sc.From.Truncate(time.Hour), "From is a whole hour")
	assert.Equal(t, sc.To, sc.To.Truncate(time.Hour), "To is a whole hour")
	// 21 local days that include the fall-back day have 21 x 24 + 1 hours.
	assert.Equal(t, 21*24+1, int(sc.To.Sub(sc.From).Hours()))
	// US daylight saving ends on the first Sunday of November, at 02:00
	// CDT = 07:00 UTC (Energy Policy Act of 2005; Go's zone data agrees).
	assert.Equal(t, time.Date(2026, 11, 1, 7, 0, 0, 0, time.UTC), sc.FallBack)
	require.Len(t, sc.AirHandlers, 5)
	kinds := map[string]bool{}
	for _, u := range sc.AirHandlers {
		kinds[u.Reheat] = true
		assert.NotEmpty(t, u.Behaviour, u.ID)
	}
	assert.Equal(t, map[string]bool{"electric": true, "hot_water": true, "recovered": true}, kinds)
	assert.Positive(t, sc.Rows)
	for _, p := range sc.Exports {
		assert.Equal(t, filepath.Dir(sc.ConfigPath), filepath.Dir(p), "exports sit beside the configuration")
	}
}

// TestConfig_LoadsAndEveryPointHasData: the configuration loads with the
// agent's own loader, and every point it maps is in the exports.
func TestConfig_LoadsAndEveryPointHasData(t *testing.T) {
	sc := scenario(t)
	cfg, err := config.Load(sc.ConfigPath)
	require.NoError(t, err)
	assert.Equal(t, "ip", cfg.Site.Units)
	assert.Equal(t, "embedded", cfg.Store.Kind)
	assert.Equal(t, filepath.Join(filepath.Dir(sc.ConfigPath), "demo.db"), cfg.StorePath())
	assert.Greater(t, cfg.Prices.ElectricityPerKWh, 0.0)
	assert.Greater(t, cfg.Prices.FuelPerKWh, 0.0)
	require.Len(t, cfg.AirHandlers, len(sc.AirHandlers))

	recs, _ := readAll(t, sc, cfg)
	count := map[string]int{}
	for _, r := range recs {
		count[r.Series]++
	}
	hours := int(sc.To.Sub(sc.From).Hours())
	var roleSets []string
	for i, u := range sc.AirHandlers {
		a := &cfg.AirHandlers[i]
		require.Equal(t, u.ID, a.ID)
		assert.Equal(t, u.Reheat, a.Reheat.Kind, u.ID)
		assert.Equal(t, u.Cooling, a.Cooling.Kind, u.ID)
		var roles []string
		for role, p := range a.Points {
			roles = append(roles, role)
			// A change-of-value point logs at least every 15 minutes, an
			// interval point every 5: four records an hour at the least,
			// less the controller's hours offline.
			assert.GreaterOrEqual(t, count[p.Name()], 4*(hours-8), "%s %s (%s) has too little data", u.ID, role, p.Name())
		}
		sort.Strings(roles)
		roleSets = append(roleSets, strings.Join(roles, ","))
	}
	// The point sets differ between air handlers.
	for i := range roleSets {
		for j := i + 1; j < len(roleSets); j++ {
			assert.NotEqual(t, roleSets[i], roleSets[j], "%s and %s map the same roles", sc.AirHandlers[i].ID, sc.AirHandlers[j].ID)
		}
	}
}

// TestExports_DaylightSaving: the repeated hour of 1 November is in the
// files as local wall time, read without rejections, and each series stays
// in time order across it.
func TestExports_DaylightSaving(t *testing.T) {
	sc := scenario(t)
	cfg, err := config.Load(sc.ConfigPath)
	require.NoError(t, err)

	// The raw text names the wall hour 01:xx of 1 November twice: once
	// before and once after the clocks go back.
	raw, err := os.ReadFile(sc.Exports[0])
	require.NoError(t, err)
	var walls []string
	for _, line := range strings.Split(string(raw), "\n") {
		if strings.HasPrefix(line, "2026-11-01 01:") {
			walls = append(walls, line[:19])
		}
	}
	backwards := 0
	for i := 1; i < len(walls); i++ {
		if walls[i] < walls[i-1] {
			backwards++
		}
	}
	assert.Equal(t, 1, backwards, "wall time steps back once inside 01:00-01:59 (first CDT, then CST)")

	recs, stats := readAll(t, sc, cfg)
	for i, s := range stats {
		name := filepath.Base(sc.Exports[i])
		assert.Zero(t, s.RejectedTotal(), "%s: rejected %v %v", name, s.Rejected, s.Examples)
		assert.Positive(t, s.DST.RepeatedEarlier, "%s: rows in the first pass of the repeated hour", name)
		assert.Positive(t, s.DST.RepeatedLater, "%s: rows in the second pass of the repeated hour", name)
		assert.Zero(t, s.DST.Skipped, name)
	}

	last := map[string]time.Time{}
	before, after := map[string]int{}, map[string]int{}
	for _, r := range recs {
		if prev, ok := last[r.Series]; ok && !r.Time.After(prev) {
			t.Errorf("%s: %s at %s is not after %s", r.File, r.Series, r.Time.UTC(), prev.UTC())
		}
		last[r.Series] = r.Time
		switch {
		case !r.Time.Before(sc.FallBack.Add(-time.Hour)) && r.Time.Before(sc.FallBack):
			before[r.Series]++
		case !r.Time.Before(sc.FallBack) && r.Time.Before(sc.FallBack.Add(time.Hour)):
			after[r.Series]++
		}
	}
	for s := range last {
		assert.Positive(t, before[s], "%s: no reading at 01:xx CDT", s)
		assert.Positive(t, after[s], "%s: no reading at 01:xx CST", s)
	}
}

// TestExports_Artefacts: the stuck sensor and the offline controller are
// where the Scenario says.
func TestExports_Artefacts(t *testing.T) {
	sc := scenario(t)
	cfg, err := config.Load(sc.ConfigPath)
	require.NoError(t, err)
	recs, _ := readAll(t, sc, cfg)

	// Stuck: every reading in the window is the same; in the day before it
	// the sensor moved in every hour.
	require.NotEmpty(t, sc.Stuck.Point)
	var inside []float64
	perHour := map[time.Time][]float64{}
	for _, r := range recs {
		if r.Series != sc.Stuck.Point {
			continue
		}
		switch {
		case !r.Time.Before(sc.Stuck.From) && r.Time.Before(sc.Stuck.To):
			inside = append(inside, r.Value)
		case r.Time.Before(sc.Stuck.From) && !r.Time.Before(sc.Stuck.From.Add(-24*time.Hour)):
			h := r.Time.UTC().Truncate(time.Hour)
			perHour[h] = append(perHour[h], r.Value)
		}
	}
	hoursStuck := sc.Stuck.To.Sub(sc.Stuck.From).Hours()
	assert.GreaterOrEqual(t, hoursStuck, 40.0, "about two days")
	assert.GreaterOrEqual(t, float64(len(inside)), 12*(hoursStuck-1), "a 5-minute point logs 12 readings an hour")
	for _, v := range inside {
		require.Equal(t, inside[0], v, "the stuck sensor must read one value")
	}
	assert.GreaterOrEqual(t, len(perHour), 23)
	for h, vs := range perHour {
		assert.False(t, allEqual(vs), "%s moved in no reading of the hour %s before it stuck", sc.Stuck.Point, h)
	}

	// Gap: no point of the offline unit in the window; its points are back
	// within a heartbeat on both sides; the other controllers logged on.
	var ahuCfg *config.AirHandler
	for i := range cfg.AirHandlers {
		if cfg.AirHandlers[i].ID == sc.Gap.AirHandler {
			ahuCfg = &cfg.AirHandlers[i]
		}
	}
	require.NotNil(t, ahuCfg)
	assert.GreaterOrEqual(t, sc.Gap.To.Sub(sc.Gap.From), 4*time.Hour, "several hours")
	names := map[string]bool{}
	for _, p := range ahuCfg.Points {
		names[p.Name()] = true
	}
	lastBefore, firstAfter := map[string]time.Time{}, map[string]time.Time{}
	othersInGap := 0
	for _, r := range recs {
		in := !r.Time.Before(sc.Gap.From) && r.Time.Before(sc.Gap.To)
		if !names[r.Series] {
			if in {
				othersInGap++
			}
			continue
		}
		assert.False(t, in, "%s logged at %s while its controller was offline", r.Series, r.Time.UTC())
		if r.Time.Before(sc.Gap.From) {
			lastBefore[r.Series] = r.Time
		} else if _, ok := firstAfter[r.Series]; !ok && !in {
			firstAfter[r.Series] = r.Time
		}
	}
	for n := range names {
		assert.LessOrEqual(t, sc.Gap.From.Sub(lastBefore[n]), 15*time.Minute, "%s: last reading before the gap", n)
		assert.LessOrEqual(t, firstAfter[n].Sub(sc.Gap.To), time.Minute, "%s: first reading after the gap", n)
	}
	assert.Greater(t, othersInGap, 100, "the other controllers kept logging")
}

func allEqual(v []float64) bool {
	for _, x := range v {
		if x != v[0] {
			return false
		}
	}
	return true
}

// TestAnalysis_Behaviours runs the real pipeline and checks that the five
// designed behaviours come out distinct. Invented demo scenario: the
// thresholds are plausibility bounds for what each sequence was designed
// to do (common practice, no source), not reference values.
func TestAnalysis_Behaviours(t *testing.T) {
	sc := scenario(t)
	an := analyse(t)
	require.Empty(t, an.failed)
	hours := int(sc.To.Sub(sc.From).Hours())
	for _, u := range sc.AirHandlers {
		s := an.sums[u.ID]
		require.NotNil(t, s, u.ID)
		assert.Equal(t, hours, s.Hours, "%s: every hour of the period", u.ID)
		assert.Greater(t, s.CoilKWh, 1000.0, "%s: the coil worked", u.ID)
		assert.Greater(t, s.WaterKg, 100.0, "%s: the coil removed water", u.ID)
		t.Logf("%s: coverage %.3f, coil %.0f kWh, water %.0f kg, reheat %.0f kWh (needed %.0f, avoidable %.0f = %.0f %%), "+
			"reheat input %.0f kWh, cooling input %.0f kWh, electricity %.0f kWh, fuel %.0f kWh, cost %.0f USD (avoidable %.0f), "+
			"SHC %.0f h (unneeded %.0f h), effective EER %.1f",
			u.ID, s.Coverage(), s.CoilKWh, s.WaterKg, s.ReheatKWh, s.ReheatNeededKWh, s.ReheatAvoidKWh, 100*share(s.ReheatAvoidKWh, s.ReheatKWh),
			s.ReheatInputKWh, s.CoolingInputKWh, s.ElectricityKWh, s.FuelKWh, s.Cost, s.CostAvoidable,
			s.SHCHours, s.SHCUnneededHours, s.EffectiveEER())
	}
	s1, s2, s3, s4, s5 := an.sums["AHU-1"], an.sums["AHU-2"], an.sums["AHU-3"], an.sums["AHU-4"], an.sums["RTU-5"]

	// 1 and 2: the fixed cold coil wastes a large share of its reheat, the
	// dew-point reset little.
	share1, share2 := share(s1.ReheatAvoidKWh, s1.ReheatKWh), share(s2.ReheatAvoidKWh, s2.ReheatKWh)
	assert.Greater(t, s1.ReheatKWh, 100.0, "AHU-1 reheats when humidity needs it")
	assert.Less(t, share1, 0.25, "AHU-1 avoidable reheat share")
	assert.Greater(t, share2, 0.4, "AHU-2 avoidable reheat share")
	assert.Greater(t, share2, 3*share1, "AHU-2's avoidable share far above AHU-1's")
	assert.Greater(t, s2.ReheatKWh, s1.ReheatKWh, "AHU-2 reheats more than AHU-1")

	// 3: reheat at night while the air needs no drying; the other
	// occupied-hours units are off at night.
	loc := an.cfg.Location
	var nights, wasteful int
	for _, r := range an.records["AHU-3"] {
		if h := r.HourStart.In(loc).Hour(); h >= 23 || h < 5 {
			nights++
			if r.ReheatKWh > 5 && r.HumidityNeedHours == 0 && r.SHCUnneededH > 0.9 {
				wasteful++
			}
		}
	}
	require.Positive(t, nights)
	assert.Greater(t, float64(wasteful), 0.9*float64(nights), "AHU-3: night hours with reheat and no humidity need (%d of %d)", wasteful, nights)
	assert.Greater(t, s3.SHCUnneededHours, 0.5*s3.SHCHours, "AHU-3: most simultaneous heating and cooling is unneeded")
	assert.Greater(t, share(s3.ReheatAvoidKWh, s3.ReheatKWh), 0.6, "AHU-3 avoidable reheat share")
	for _, id := range []string{"AHU-1", "AHU-2"} {
		for _, r := range an.records[id] {
			if h := r.HourStart.In(loc).Hour(); h >= 23 || h < 5 {
				assert.Zero(t, r.ReheatKWh, "%s reheat at %s, when it should be off", id, r.HourStart)
			}
		}
	}

	// 4: hot-water reheat is fuel, priced as fuel, with no electric reheat.
	assert.Greater(t, s4.FuelKWh, 1000.0, "AHU-4 boiler fuel")
	assert.InDelta(t, s4.ReheatInputKWh, s4.FuelKWh, 1e-6, "AHU-4 reheat input is all fuel")
	assert.InDelta(t, s4.CoolingInputKWh, s4.ElectricityKWh, 1e-6, "AHU-4 electricity is cooling only: electric reheat input 0")
	// The configured boiler efficiency is 0.82: fuel = heat / 0.82.
	assert.InEpsilon(t, s4.ReheatKWh/0.82, s4.FuelKWh, 1e-6)

	// 5: recovered heat reheats for free.
	assert.Greater(t, s5.ReheatKWh, 1000.0, "RTU-5 reheat")
	assert.Zero(t, s5.ReheatInputKWh, "RTU-5 purchased reheat input")
	assert.Zero(t, s5.FuelKWh)
	assert.InDelta(t, s5.CoolingInputKWh, s5.ElectricityKWh, 1e-6)

	// The units with purchased electric reheat pay for it.
	for _, s := range []*agent.Summary{s1, s2, s3} {
		assert.Greater(t, s.ElectricityKWh, s.CoolingInputKWh, "%s electric reheat adds to electricity", s.AHU)
		assert.Zero(t, s.FuelKWh, s.AHU)
	}
}

func share(part, whole float64) float64 {
	if whole == 0 {
		return math.NaN()
	}
	return part / whole
}

// TestAnalysis_ArtefactAlerts: the alert rules find the stuck sensor and
// the gap on the right air handlers, at the right time, and nowhere else.
func TestAnalysis_ArtefactAlerts(t *testing.T) {
	sc := scenario(t)
	an := analyse(t)
	var flat, gap []ingestAlert
	for _, a := range an.opened {
		switch a.Kind {
		case "sensor_flat":
			flat = append(flat, ingestAlert{a.AHU, a.Start, a.Reason})
		case "data_gap":
			gap = append(gap, ingestAlert{a.AHU, a.Start, a.Reason})
		}
	}
	require.Len(t, flat, 1, "one sensor_flat alert: %v", flat)
	assert.Equal(t, sc.Stuck.AirHandler, flat[0].ahu)
	assert.Contains(t, flat[0].reason, sc.Stuck.Role)
	// The first flat hour is the first whole hour after the sensor stuck.
	assert.False(t, flat[0].start.Before(sc.Stuck.From), "flat from %s, stuck from %s", flat[0].start, sc.Stuck.From)
	assert.True(t, flat[0].start.Before(sc.Stuck.From.Add(time.Hour)), "flat from %s, stuck from %s", flat[0].start, sc.Stuck.From)

	require.Len(t, gap, 1, "one data_gap alert: %v", gap)
	assert.Equal(t, sc.Gap.AirHandler, gap[0].ahu)
	// The hour the controller went offline, once the last readings' 15
	// minutes of hold ran out, is the first hour below half coverage.
	assert.Equal(t, sc.Gap.From.Truncate(time.Hour), gap[0].start)

	// Coverage is full everywhere else.
	for _, u := range sc.AirHandlers {
		for _, r := range an.records[u.ID] {
			if u.ID == sc.Gap.AirHandler && r.HourStart.Add(time.Hour).After(sc.Gap.From) && r.HourStart.Before(sc.Gap.To) {
				continue
			}
			if r.Coverage < 0.98 {
				t.Errorf("%s %s: coverage %.3f", u.ID, r.HourStart, r.Coverage)
			}
		}
	}
}

type ingestAlert struct {
	ahu    string
	start  time.Time
	reason string
}
