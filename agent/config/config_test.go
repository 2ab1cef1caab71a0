package config

import (
	"errors"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

func TestLoadConfig_Good(t *testing.T) {
	files, err := filepath.Glob("../../testdata/config/*.good.yaml")
	require.NoError(t, err)
	files = append(files, "../../deploy/examples/dewline.yaml") // the shipped example must stay valid
	require.GreaterOrEqual(t, len(files), 3)
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			cfg, err := Load(f)
			require.NoError(t, err)
			require.NotNil(t, cfg.Location)
			assert.Greater(t, cfg.PressurePa, 50000.0)
			for _, a := range cfg.AirHandlers {
				assert.InDelta(t, 0.95, a.LeavingRHFrac, 0.05)
			}
		})
	}
}

// TestLoadConfig_Bad: every problem of a broken file is reported at once,
// with its line and a fix.
func TestLoadConfig_Bad(t *testing.T) {
	tests := []struct {
		file string
		want []string // substrings, each expected somewhere in the error
	}{
		{"unknown-key.bad.yaml", []string{
			`:2: unknown key "unitz"; did you mean "units"?`,
			`:11: unknown key "colum"; did you mean "column"?`,
		}},
		{"many.bad.yaml", []string{
			`:3: site.timezone: unknown time zone "Mars/Olympus"`,
			`site: neither altitude nor pressure is given`,
			`:8: unknown key "token"; secrets do not belong in the file`,
			`store.influxdb.url: "ftp://example" is not an http(s) URL`,
			`store.influxdb.bucket: missing bucket`,
			`air_handlers[0].cooling.rated_eer: a DX unit needs a cooling_kw point or a rated EER`,
			`air_handlers[0].reheat.boiler_efficiency: hot-water reheat needs the boiler efficiency`,
			`air_handlers[0].airflow.basis: unknown basis "nominal"`,
			`air_handlers[0].fan.heat_rise: a draw-through fan heats the air`,
			`air_handlers[0].leaving_rh: 120% is outside 50-100 %`,
			`air_handlers[0].target.max_space_dewpoint: "55" has no unit`,
			`air_handlers[0].target: 2 humidity targets given`,
			`air_handlers[0].target.space_temp: max_space_rh needs the space temperature`,
			`air_handlers[0].points.entering_temp.unit: "degF2" is not a unit of temperature`,
			`air_handlers[0].points.supply_flow.unit: "F" is not a unit of airflow`,
			`the point "MAT" is also mapped to entering_temp`,
			`unknown role "leaving_tmp"; did you mean "leaving_temp"?`,
			`required role leaving_temp is not mapped`,
			`entering humidity is not mapped`,
			`air_handlers[1].id: id "A" is also used by air_handlers[0]`,
			`air_handlers[1].cooling.kind: unknown cooling kind "steam"`,
		}},
		{"open-listen.bad.yaml", []string{
			`:4: http.listen: "0.0.0.0:9470" listens beyond loopback without a token; set http.token_env to an environment variable holding a token of at least 16 characters`,
		}},
		// Not-a-number, infinity and absurd magnitudes are refused with the
		// key and the range (the ranges are common practice, no source).
		{"numbers.bad.yaml", []string{
			`:5: prices.electricity_per_kwh: NaN is outside 0..100000`,
			`:6: prices.fuel_per_kwh: +Inf is outside 0..100000`,
			`:7: prices.electricity_co2_kg_per_kwh: 40 is outside 0..3 kg/kWh`,
			`:8: prices.fuel_co2_kg_per_kwh: -Inf is outside 0..3 kg/kWh`,
			`:10: alerts.min_avoidable_kwh: NaN is outside 0 < x <= 1000000 kWh`,
			`:11: alerts.min_effective_eer: +Inf is outside 0 < x <= 40 Btu/Wh`,
			`:12: alerts.coil_min_leaving: 1e300F is outside 0..25 °C (32..77 °F)`,
			`:15: air_handlers[0].cooling.rated_eer: NaN is outside 0 < x <= 40 Btu/Wh`,
			`:15: air_handlers[0].cooling.eer_per_kelvin: 5 is outside -2..0 Btu/Wh per K`,
			`:15: air_handlers[0].cooling.rated_outdoor: 1e300F is outside 15..55 °C (59..131 °F)`,
			`:16: air_handlers[0].reheat.boiler_efficiency: NaN is outside 0 < x <= 1;`,
			`:19: air_handlers[0].target.max_supply_dewpoint: 1e300F is outside 0..25 °C (32..77 °F)`,
			`:27: air_handlers[1].cooling.plant_kw_per_ton: NaN is outside 0 < x <= 3 kW/ton`,
			`:27: air_handlers[1].cooling.eer_per_kelvin: +Inf is outside -2..0 Btu/Wh per K`,
			`:31: air_handlers[1].target.max_space_rh: 300% is outside 20..90 %`,
			`:31: air_handlers[1].target.space_temp: -400C is outside 10..35 °C (50..95 °F)`,
		}},
		// A zero that would divide, or that the code would read as the
		// key left out, is refused with its key, its line and a range
		// that excludes it.
		{"zeros.bad.yaml", []string{
			`:3: grid.step: step 0s must divide an hour and lie between 1s and 15m`,
			`:5: alerts.min_avoidable_kwh: 0 is outside 0 < x <= 1000000 kWh`,
			`:6: alerts.min_effective_eer: 0 is outside 0 < x <= 40 Btu/Wh`,
			`:9: air_handlers[0].cooling.rated_eer: 0 is outside 0 < x <= 40 Btu/Wh; give the rated EER in Btu/Wh`,
			`:9: air_handlers[0].cooling.rated_capacity: 0kW is outside 0 < x <= 5000 kW`,
			`:10: air_handlers[0].reheat.boiler_efficiency: 0 is outside 0 < x <= 1; set boiler_efficiency as a fraction`,
			`:12: air_handlers[0].fan.rated_power: 0kW is outside 0 < x <= 500 kW`,
			`:22: air_handlers[1].cooling.rated_eer: -3 is outside 0 < x <= 40 Btu/Wh`,
			`:38: air_handlers[2].cooling.plant_kw_per_ton: 0 is outside 0 < x <= 3 kW/ton`,
			`:53: air_handlers[3].outdoor_air.min_fraction: 0% is outside 0 < x <= 100 %`,
		}},
		// A duration of 0 that means nothing is refused with its key,
		// its line and its range, not replaced by the default.
		{"zero-durations.bad.yaml", []string{
			`:8: store.influxdb.timeout: 0s is outside 0 < x: a request needs time; give the time one request may take, e.g. 30s, or leave it out for 30s`,
			`:10: schedule.backfill: backfill 0s must lie between 1h and 3 years`,
			`:11: schedule.timeout: timeout 0s is too short: a run needs at least 1m`,
			`:14: webhook.timeout: 0s is outside 0 < x: a request needs time`,
			`:15: webhook.max_age: 0s is outside 0 < x: every event would be too old to send`,
		}},
		// For an InfluxDB store, the names its writes would refuse: the
		// site and air handler ids tag every result, a point without a
		// measurement of its own is stored under its name.
		{"linenames.bad.yaml", []string{
			`:2: site.id: site id "North\\ Wing" has a backslash before ' ', which InfluxDB would read as an escape`,
			`:7: air_handlers[0].id: air handler id "AHU\\=2" has a backslash before '='`,
			`:15: air_handlers[0].points.entering_rh.point: the point "RH\\" is stored in InfluxDB under its name (tag point), but the name ends with a backslash`,
			`keep point: as the export names it and add measurement: and field:`,
			`:16: air_handlers[0].points.leaving_temp.column: the point "LAT\tA" is stored in InfluxDB under its name (tag point), but the name contains a tab or line break`,
			`:17: air_handlers[0].points.supply_temp: measurement "#ahu" starts with #`,
			`:18: air_handlers[0].points.supply_flow: tag key "_field" is reserved by Flux or line protocol; tag "unit" value "a\\\"b" has a backslash before '"'`,
		}},
		// "." and ".." are the ids a path segment cannot carry, encoded
		// or not; every other id is percent-encoded in the dashboard's
		// addresses.
		{"dots.bad.yaml", []string{
			`:2: site.id: ".." cannot name the site's pages`,
			`:4: air_handlers[0].id: id "." cannot name the air handler's pages`,
		}},
		{"mixing.bad.yaml", []string{
			`:12: air_handlers[0].points.entering_rh: entering_rh "AHU-1 Return RH" reads like a return RH, but entering_temp "AHU-1 Mixed Air Temp" is the mixed air`,
			`map it as return_rh (or space_rh) instead`,
			`:24: air_handlers[1].points.entering_rh: entering_rh is the space_rh point "H2"`,
			`air_handlers[2].points: mixing return and outdoor air needs the outdoor-air share`,
			`set outdoor_air.min_fraction (e.g. 20%) or map outdoor_flow`,
			`air_handlers[3].outdoor_air.min_fraction: 150% is outside 0 < x <= 100 %`,
		}},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			_, err := Load(filepath.Join("../../testdata/config", tt.file))
			require.Error(t, err)
			var ce *Error
			require.True(t, errors.As(err, &ce))
			for _, w := range tt.want {
				assert.Contains(t, err.Error(), w)
			}
			for _, p := range ce.Problems {
				assert.NotEmpty(t, p.Msg)
			}
			assert.NotContains(t, err.Error(), "hunter2", "a secret in the file is never echoed")
		})
	}
}

func TestParseConfig_Syntax(t *testing.T) {
	_, err := Parse(strings.NewReader("version: 1\nsite: [unclosed\n"), "broken.yaml")
	require.Error(t, err)
	assert.Contains(t, err.Error(), "broken.yaml:")
	assert.Contains(t, err.Error(), "fix the YAML syntax")
	_, err = Parse(strings.NewReader(""), "empty.yaml")
	assert.ErrorContains(t, err, "the file is empty")
	_, err = Parse(strings.NewReader("version: 1\ngrid: {step: soon}\n"), "d.yaml")
	assert.ErrorContains(t, err, `"soon" is not a valid duration`)
}

func TestInfluxConfig_Token(t *testing.T) {
	ic := &InfluxConfig{TokenEnv: "DEWLINE_TEST_TOKEN_XYZ"}
	_, err := ic.Token()
	assert.ErrorContains(t, err, "DEWLINE_TEST_TOKEN_XYZ is not set")
	t.Setenv("DEWLINE_TEST_TOKEN_XYZ", " s3cret\n")
	tok, err := ic.Token()
	require.NoError(t, err)
	assert.Equal(t, "s3cret", tok)
	f := filepath.Join(t.TempDir(), "tok")
	require.NoError(t, os.WriteFile(f, []byte("filetoken\n"), 0o600))
	tok, err = (&InfluxConfig{TokenFile: f}).Token()
	require.NoError(t, err)
	assert.Equal(t, "filetoken", tok)
}

// TestInfluxConfig_TokenFileBesideConfig: a relative token_file is found
// beside the configuration file, as the store path is, whatever folder
// the command runs in.
func TestInfluxConfig_TokenFileBesideConfig(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "config", "influx.good.yaml"))
	require.NoError(t, err)
	dir := t.TempDir()
	y := regexp.MustCompile(`(?m)^(\s*)token_env: .*$`).ReplaceAllString(string(b), "${1}token_file: secrets/influx.token")
	require.Contains(t, y, "token_file: secrets/influx.token")
	require.NoError(t, os.MkdirAll(filepath.Join(dir, "secrets"), 0o700))
	require.NoError(t, os.WriteFile(filepath.Join(dir, "secrets", "influx.token"), []byte("beside-the-config\n"), 0o600))
	p := filepath.Join(dir, "site.yaml")
	require.NoError(t, os.WriteFile(p, []byte(y), 0o600))

	// The test runs in the package's folder, not the configuration's.
	cfg, err := Load(p)
	require.NoError(t, err)
	assert.Equal(t, filepath.Join(dir, "secrets", "influx.token"), cfg.Store.InfluxDB.TokenFilePath())
	tok, err := cfg.Store.InfluxDB.Token()
	require.NoError(t, err)
	assert.Equal(t, "beside-the-config", tok)
	require.NoError(t, cfg.CheckSecrets())
}

func TestAirHandler_FanHeatRiseK(t *testing.T) {
	for in, want := range map[string]float64{"0.6K": 0.6, "0.6C": 0.6, "1F": 1 / 1.8, "": 0} {
		a := AirHandler{Fan: Fan{HeatRise: in}}
		assert.InDelta(t, want, a.FanHeatRiseK(), 1e-12, in)
	}
}

// TestLoadConfigPartial: a problem confined to one air handler leaves that
// unit out and keeps the others; a site-wide problem still fails.
func TestLoadConfigPartial(t *testing.T) {
	cfg, broken, err := LoadPartial("../../testdata/config/one-broken.partial.yaml")
	require.NoError(t, err)
	require.Len(t, cfg.AirHandlers, 1)
	assert.Equal(t, "GOOD-1", cfg.AirHandlers[0].ID)
	require.Contains(t, broken, "BROKEN-2")
	msg := broken["BROKEN-2"].Error()
	assert.Contains(t, msg, `"degrees kelvin-ish" is not a unit of temperature`)
	assert.Contains(t, msg, "required role leaving_temp is not mapped")
	// The strict loader refuses the same file.
	_, err = Load("../../testdata/config/one-broken.partial.yaml")
	assert.Error(t, err)
	// A site-wide problem is not confined to a unit.
	_, _, err = LoadPartial("../../testdata/config/many.bad.yaml")
	assert.ErrorContains(t, err, "unknown time zone")
	// A good file has nothing broken.
	_, broken, err = LoadPartial("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	assert.Empty(t, broken)
}

// TestConfig_FanCyclingAndAssumptions: the fan's place and power, the DX
// unit's rated capacity and degradation coefficient, and the leaving RH's
// uncertainty reach the engine, with their defaults; contradictions are
// refused with the key and a fix.
func TestConfig_FanCyclingAndAssumptions(t *testing.T) {
	base, err := os.ReadFile("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	with := func(old, new string) string {
		s := strings.Replace(string(base), old, new, 1)
		require.NotEqual(t, string(base), s, old)
		return s
	}
	unit := func(t *testing.T, yaml string) *metrics.AirHandler {
		cfg, err := Parse(strings.NewReader(yaml), "c.yaml")
		require.NoError(t, err)
		return cfg.Spec(&cfg.AirHandlers[0])
	}
	u := unit(t, string(base))
	assert.Equal(t, metrics.DefaultLeavingRHU, u.LeavingRHU)
	assert.Zero(t, u.RatedCapacityKW, "no capacity: cycling not modelled")
	u = unit(t, with("rated_eer: 10}", "rated_eer: 10, rated_capacity: 40ton}\n    leaving_rh_uncertainty: 2%"))
	assert.InDelta(t, psychro.TonsToKW(40), u.RatedCapacityKW, 1e-9)
	assert.Equal(t, metrics.DefaultDegradationCd, u.DegradationCd)
	assert.InDelta(t, 0.02, u.LeavingRHU, 1e-12)
	u = unit(t, with("rated_eer: 10}", "rated_eer: 10, rated_capacity: 140kW, degradation_coefficient: 0.15}"))
	assert.InDelta(t, 0.15, u.DegradationCd, 1e-12)
	u = unit(t, with("fan: {position: none}", "fan: {position: blow_through, entering_sensor: before_fan, rated_power: 7.5kW}"))
	assert.Equal(t, metrics.FanBlowThrough, u.Fan)
	assert.InDelta(t, 7.5, u.FanRatedKW, 1e-12)
	u = unit(t, with("fan: {position: none}", "fan: {position: blow_through}"))
	assert.Equal(t, metrics.FanBlowThroughMeasured, u.Fan, "by default the entering sensor sits after the fan")

	for _, c := range []struct{ old, new, want string }{
		{"fan: {position: none}", "fan: {position: blow_through, entering_sensor: before_fan}", "fan.heat_rise: a blow-through fan after the entering sensor heats the air the coil then cools"},
		{"fan: {position: none}", "fan: {position: blow_through, entering_sensor: inside}", `fan.entering_sensor: unknown entering sensor place "inside"`},
		{"fan: {position: none}", "fan: {position: none, entering_sensor: before_fan}", "fan.entering_sensor: the entering sensor's place matters only for a blow-through fan"},
		{"fan: {position: none}", "fan: {position: draw_through, rated_power: 5kW, heat_rise: 0.5K}", "fan.rated_power: rated_power and heat_rise both give the fan's heat"},
		{"rated_eer: 10}", "rated_eer: 10, degradation_coefficient: 0.2}", "cooling.degradation_coefficient: the degradation coefficient needs the rated capacity"},
		{"rated_eer: 10}", "rated_eer: 10, rated_capacity: 40}", "cooling.rated_capacity"},
		{"fan: {position: none}", "fan: {position: none}\n    leaving_rh_uncertainty: 40%", "leaving_rh_uncertainty: 40% is outside 0-30 %"},
	} {
		_, err := Parse(strings.NewReader(with(c.old, c.new)), "c.yaml")
		require.Error(t, err, c.new)
		assert.Contains(t, err.Error(), c.want)
	}
}

// TestWebhook_UpdateEvery: an open alert's updates come every hour unless
// webhook.update_every says otherwise, in whole hours.
func TestWebhook_UpdateEvery(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "config", "minimal.good.yaml"))
	require.NoError(t, err)
	for _, tt := range []struct {
		name, yaml string
		want       time.Duration
		wantErr    string
	}{
		{"default", `webhook: {url: "https://alerts.example.org/x"}`, time.Hour, ""},
		{"six hours", `webhook: {url: "https://alerts.example.org/x", update_every: 6h}`, 6 * time.Hour, ""},
		{"not whole hours", `webhook: {url: "https://alerts.example.org/x", update_every: 90m}`, 0, "webhook.update_every"},
	} {
		t.Run(tt.name, func(t *testing.T) {
			cfg, err := Parse(strings.NewReader(string(b)+"\n"+tt.yaml+"\n"), "site.yaml")
			if tt.wantErr != "" {
				require.Error(t, err)
				assert.Contains(t, err.Error(), tt.wantErr)
				assert.Contains(t, err.Error(), "whole number of hours")
				return
			}
			require.NoError(t, err)
			assert.Equal(t, tt.want, cfg.Webhook.UpdateEvery)
		})
	}
}

// TestValidate_SiteAltitude: a site's altitude is held to -500..5500 m,
// given in metres or feet, with the key, its line and the range. The
// feet are converted by hand (1 ft = 0.3048 m, exact by definition).
func TestValidate_SiteAltitude(t *testing.T) {
	base, err := os.ReadFile("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	for _, tt := range []struct {
		name, altitude string
		ok             bool
	}{
		{"sea level", "0m", true},
		{"lowest", "-500m", true},
		{"highest", "5500m", true},
		{"lowest in feet", "-1640ft", true},  // -499.9 m
		{"highest in feet", "18044ft", true}, // 5499.8 m
		{"far below", "-2000m", false},
		{"just below", "-501m", false},
		{"below in feet", "-1700ft", false}, // -518.2 m
		{"above", "5501m", false},
		{"above in feet", "18100ft", false}, // 5516.9 m
	} {
		t.Run(tt.name, func(t *testing.T) {
			y := strings.Replace(string(base), "pressure: 101.325kPa", "altitude: "+tt.altitude, 1)
			require.NotEqual(t, string(base), y)
			_, err := Parse(strings.NewReader(y), "site.yaml")
			if tt.ok {
				require.NoError(t, err)
				return
			}
			require.Error(t, err)
			assert.Contains(t, err.Error(), "site.yaml:2: site.altitude: "+tt.altitude+" is outside -500..5500 m (-1640..18044 ft)")
			assert.Contains(t, err.Error(), "give the site's elevation")
		})
	}
}

// TestValidate_ZeroWhereMeaningful: a zero that means something is still
// accepted: free energy or carbon-free supply, no moisture added by the
// space, a leaving RH taken as exact, a metered unit with no rated EER.
func TestValidate_ZeroWhereMeaningful(t *testing.T) {
	base, err := os.ReadFile("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	y := strings.Replace(string(base), "    fan: {position: none}\n",
		"    fan: {position: none}\n    space_moisture_gain: 0g/kg\n    leaving_rh_uncertainty: 0%\n", 1) +
		"prices: {currency: USD, electricity_per_kwh: 0, fuel_per_kwh: 0, electricity_co2_kg_per_kwh: 0, fuel_co2_kg_per_kwh: 0}\n"
	cfg, err := Parse(strings.NewReader(y), "site.yaml")
	require.NoError(t, err)
	assert.Zero(t, cfg.Prices.ElectricityPerKWh)
	assert.Equal(t, DefaultStep, cfg.Grid.Step, "a step left out takes the default")

	flat := strings.Replace(string(base), "rated_eer: 10}", "rated_eer: 10, eer_per_kelvin: 0}", 1)
	cfg, err = Parse(strings.NewReader(flat), "site.yaml")
	require.NoError(t, err)
	assert.Zero(t, cfg.Spec(&cfg.AirHandlers[0]).COPPerK, "eer_per_kelvin: 0 is an EER that does not change outdoors, not the default")

	// lookback: 0 re-computes no hour already done; update_every: 0
	// sends no while-open update; degradation_coefficient: 0 is a unit
	// without cycling loss.
	zeros := strings.Replace(string(base), "rated_eer: 10}", "rated_eer: 10, rated_capacity: 40ton, degradation_coefficient: 0}", 1) +
		"schedule: {lookback: 0s}\nwebhook: {url: https://alerts.example.org/dewline, update_every: 0s}\n"
	cfg, err = Parse(strings.NewReader(zeros), "site.yaml")
	require.NoError(t, err)
	assert.Zero(t, cfg.Schedule.Lookback, "lookback: 0s, not the default 3h")
	assert.Zero(t, cfg.Webhook.UpdateEvery, "update_every: 0s, not the default 1h")
	assert.Zero(t, cfg.Spec(&cfg.AirHandlers[0]).DegradationCd, "degradation_coefficient: 0, not the default 0.25")

	metered := strings.Replace(string(base), "rated_eer: 10}", "}", 1) + "      cooling_kw: {point: ckw, unit: kW}\n"
	_, err = Parse(strings.NewReader(metered), "site.yaml")
	require.NoError(t, err, "a metered DX unit needs no rated EER")
}

// TestValidate_LineNamesInSiteName: a site name that line protocol cannot
// carry is refused for an InfluxDB store only when it stands in for the
// missing site.id, and the fix is a site.id.
func TestValidate_LineNamesInSiteName(t *testing.T) {
	const base = `version: 1
site: {SITE timezone: UTC, altitude: 0m, units: si}
store: {kind: influxdb, influxdb: {url: "http://127.0.0.1:8086", bucket: bms/autogen}}
air_handlers:
  - id: AHU-1
    cooling: {kind: dx, rated_eer: 11}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: none}
    target: {max_supply_dewpoint: 12C}
    points:
      entering_temp: {point: MAT, unit: C}
      entering_rh: {point: MRH, unit: "%"}
      leaving_temp: {point: LAT, unit: C}
      supply_temp: {point: SAT, unit: C}
      supply_flow: {point: FLOW, unit: m3/s}
`
	_, err := Parse(strings.NewReader(strings.Replace(base, "SITE", `name: 'Wing\,B',`, 1)), "site.yaml")
	require.Error(t, err)
	assert.Contains(t, err.Error(), `site.yaml:2: site.name: site name "Wing\\,B", the site's id when site.id is left out, has a backslash before ','`)
	assert.Contains(t, err.Error(), "set site.id to an id line protocol can carry")

	cfg, err := Parse(strings.NewReader(strings.Replace(base, "SITE", `name: 'Wing\,B', id: wing-b,`, 1)), "site.yaml")
	require.NoError(t, err)
	assert.Equal(t, "wing-b", cfg.Site.ID)
}

// TestValidate_ScheduleCron: schedule.cron must fire at least once a year
// (30 February never comes; 29 February once in four years), an @every
// interval must lie between a minute and a year (the parser would raise
// zero, negative and sub-second ones to a second), and a time zone prefix
// is refused (it would override site.timezone). Each refusal names the
// key, its line and the fix.
func TestValidate_ScheduleCron(t *testing.T) {
	base, err := os.ReadFile("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	for _, tt := range []struct {
		name, cron string
		want       string // "" when valid; else the problem after the key
	}{
		{"hourly", "7 * * * *", ""},
		{"every minute", "* * * * *", ""},
		{"daily", "@daily", ""},
		{"yearly", "@yearly", ""},
		{"every minute by interval", "@every 1m", ""},
		{"every 90 minutes", "@every 1h30m", ""},
		{"every year by interval", "@every 8784h", ""},
		{"last of February or Mondays", "0 0 29 2 1", ""}, // day of month or of week: every Monday of February
		{"30 February", "0 0 30 2 *", "the schedule never fires (no such day)"},
		{"31 April", "0 0 31 4 *", "the schedule never fires (no such day)"},
		{"29 February", "0 0 29 2 *", "the schedule fires only on 29 February, once in four years"},
		{"negative interval", "@every -1h", "the interval -1h0m0s is below a minute"},
		{"zero interval", "@every 0s", "the interval 0s is below a minute"},
		{"millisecond", "@every 1ms", "the interval 1ms is below a minute"},
		{"59 seconds", "@every 59s", "the interval 59s is below a minute"},
		{"over a year", "@every 8785h", "the interval 8785h0m0s is above a year (8784h)"},
		{"CRON_TZ", "CRON_TZ=Asia/Tokyo 0 3 * * *", `the time zone prefix "CRON_TZ=Asia/Tokyo" would override the site's zone`},
		{"TZ", "TZ=UTC 0 3 * * *", `the time zone prefix "TZ=UTC" would override the site's zone`},
		{"TZ alone", "TZ=UTC", `the time zone prefix "TZ=UTC" would override the site's zone`},
		{"malformed", "7 * * *", "not a cron schedule"},
	} {
		t.Run(tt.name, func(t *testing.T) {
			y := string(base) + "schedule: {cron: \"" + tt.cron + "\"}\n"
			cfg, err := Parse(strings.NewReader(y), "site.yaml")
			if tt.want == "" {
				require.NoError(t, err)
				assert.Equal(t, tt.cron, cfg.Schedule.Cron)
				return
			}
			require.Error(t, err)
			assert.Contains(t, err.Error(), "site.yaml:16: schedule.cron: \""+tt.cron+"\": "+tt.want)
			var fix string
			switch {
			case strings.Contains(tt.cron, "="):
				fix = "set site.timezone"
			case strings.HasPrefix(tt.cron, "@every"):
				fix = "@every 1h"
			case tt.want == "not a cron schedule":
				fix = "use five fields"
			default:
				fix = "choose a day every month has"
			}
			assert.Contains(t, err.Error(), fix)
			_, err = ParseCron(tt.cron)
			var ce *CronError
			assert.ErrorAs(t, err, &ce, "the agent refuses it at start too")
		})
	}
}

// TestValidate_SiteIDInAddresses: a site id goes into the dashboard's
// addresses percent-encoded, so spaces, "/", "%", "*" and letters beyond
// ASCII are kept; "." and ".." (a path resolves them away) are refused,
// on site.name when site.id is left to default to it.
func TestValidate_SiteIDInAddresses(t *testing.T) {
	base, err := os.ReadFile("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	for _, tt := range []struct {
		name, site, want string // want: the problem, "" when accepted
	}{
		{"name with spaces", `name: "Saltmarsh Point Clinic"`, ""},
		{"slash and star", `id: "north/2.*"`, ""},
		{"percent", `id: "a%2Fb"`, ""},
		{"beyond ASCII", `id: "ÄBC"`, ""},
		{"two dots", `id: ".."`, `site.yaml:2: site.id: ".." cannot name the site's pages`},
		{"dot as the name", `name: "."`, `site.yaml:2: site.name: "." cannot name the site's pages`},
	} {
		t.Run(tt.name, func(t *testing.T) {
			y := strings.Replace(string(base), "site: {", "site: {"+tt.site+", ", 1)
			require.NotEqual(t, string(base), y)
			_, err := Parse(strings.NewReader(y), "site.yaml")
			if tt.want == "" {
				require.NoError(t, err)
				return
			}
			require.Error(t, err)
			assert.Contains(t, err.Error(), tt.want)
			assert.Contains(t, err.Error(), "set site.id to a name of the site")
		})
	}
}
