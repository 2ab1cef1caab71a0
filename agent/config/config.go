package config

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"go.yaml.in/yaml/v3"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Version is the configuration schema this binary reads.
const Version = 1

// Config is a dewline configuration file.
type Config struct {
	Version     int          `yaml:"version"`
	Site        Site         `yaml:"site"`
	Store       Store        `yaml:"store"`
	Grid        Grid         `yaml:"grid"`
	Prices      Prices       `yaml:"prices"`
	Sensors     Sensors      `yaml:"sensors"`
	Alerts      Alerts       `yaml:"alerts"`
	Schedule    Schedule     `yaml:"schedule"`
	HTTP        HTTP         `yaml:"http"`
	Webhook     *Webhook     `yaml:"webhook"`
	Exports     Exports      `yaml:"exports"`
	AirHandlers []AirHandler `yaml:"air_handlers"`

	// Resolved by Parse from the fields above.
	Location   *time.Location `yaml:"-"`
	PressurePa float64        `yaml:"-"` // site barometric pressure
	baseDir    string
}

// Site describes where the air handlers are.
type Site struct {
	ID       string `yaml:"id"` // stable id of the site for sharding (default: name)
	Name     string `yaml:"name"`
	TimeZone string `yaml:"timezone"` // IANA zone, e.g. America/New_York
	Altitude string `yaml:"altitude"` // e.g. 15m or 50ft; sets the standard-atmosphere pressure
	Pressure string `yaml:"pressure"` // e.g. 101.1kPa; instead of altitude
	Units    string `yaml:"units"`    // display units: si or ip
}

// Store names where trend samples are read and results written.
type Store struct {
	Kind     string        `yaml:"kind"` // embedded or influxdb
	Path     string        `yaml:"path"` // embedded: the SQLite file, relative to the config file
	InfluxDB *InfluxConfig `yaml:"influxdb"`
	// StatePath (influxdb only): the local file of the agent's webhook
	// queue, relative to the config file; default dewline-state.db beside it.
	StatePath string `yaml:"state_path"`
}

// InfluxConfig locates an InfluxDB 2.x/Cloud bucket or a 1.8 database/retention policy.
type InfluxConfig struct {
	URL       string        `yaml:"url"`
	Org       string        `yaml:"org"`        // 2.x; empty for 1.8
	Bucket    string        `yaml:"bucket"`     // 2.x bucket, or "db/rp" for 1.8
	TokenEnv  string        `yaml:"token_env"`  // environment variable holding the token ("user:pass" for 1.8)
	TokenFile string        `yaml:"token_file"` // or a file holding it, relative to the config file
	Timeout   time.Duration `yaml:"timeout"`    // per request, above 0; default 30s

	baseDir string // the configuration file's folder, for a relative token_file
}

// Grid sets the time grid trend points are aligned onto.
type Grid struct {
	Step  time.Duration            `yaml:"step"`  // default 1m
	Stale map[string]time.Duration `yaml:"stale"` // per role: how long a logged value may hold
}

// Prices converts energy to money and CO2.
type Prices struct {
	Currency               string  `yaml:"currency"`
	ElectricityPerKWh      float64 `yaml:"electricity_per_kwh"`
	FuelPerKWh             float64 `yaml:"fuel_per_kwh"` // fuel energy (higher heating value)
	ElectricityCO2KgPerKWh float64 `yaml:"electricity_co2_kg_per_kwh"`
	FuelCO2KgPerKWh        float64 `yaml:"fuel_co2_kg_per_kwh"`
}

// Exports overrides what is detected in CSV trend exports, for files whose
// format cannot be told from the data.
type Exports struct {
	Layout       string `yaml:"layout"`        // wide or long (default: detected)
	Delimiter    string `yaml:"delimiter"`     // ",", ";", "tab" or "|" (default: detected)
	DecimalComma string `yaml:"decimal_comma"` // yes or no (default: detected)
	DayFirst     string `yaml:"day_first"`     // yes or no, for dates like 04/07/2026 (default: detected)
	TimeColumn   string `yaml:"time_column"`   // name of the time column (default: detected)
	Year         int    `yaml:"year"`          // year of dates written without one ("08/26 14:05")
}

// Schedule says when "dewline run" evaluates hours.
type Schedule struct {
	Cron     string        `yaml:"cron"`     // five-field cron spec in the site's time zone; default "7 * * * *"
	Lookback time.Duration `yaml:"lookback"` // recent hours re-computed each run for late data, 0..168h (0: none); default 3h
	Backfill time.Duration `yaml:"backfill"` // how far back a fresh or late agent catches up; default 168h
	Timeout  time.Duration `yaml:"timeout"`  // limit of one run, at least 1m; default 45m
}

// HTTP is the agent's own endpoint: health, readiness, metrics and the dashboard.
type HTTP struct {
	Listen   string `yaml:"listen"`    // host:port; default 127.0.0.1:9470
	TokenEnv string `yaml:"token_env"` // environment variable with a bearer token required by every page but /healthz
}

// Webhook is where opened and closed alerts are posted as JSON.
type Webhook struct {
	URL       string        `yaml:"url"`
	SecretEnv string        `yaml:"secret_env"` // environment variable with the HMAC-SHA256 signing secret
	Timeout   time.Duration `yaml:"timeout"`    // per request, above 0; default 10s
	MaxAge    time.Duration `yaml:"max_age"`    // undelivered events older than this are dropped and counted, above 0; default 24h
	// UpdateEvery is the cadence of an open alert's while-open updates
	// (its running totals), counted from the hour it opened; whole hours,
	// 0 for none, default 1h.
	UpdateEvery time.Duration `yaml:"update_every"`
}

// Sensors gives the accuracy of the site's sensors as 95 % half-widths of
// a calibration bias; empty values take metrics.DefaultAccuracy.
type Sensors struct {
	Temperature string `yaml:"temperature"` // e.g. 0.3K or 0.5F
	RH          string `yaml:"rh"`          // e.g. 3%
	DewPoint    string `yaml:"dewpoint"`    // e.g. 0.5K
	Airflow     string `yaml:"airflow"`     // e.g. 7%
	Power       string `yaml:"power"`       // e.g. 2%
}

// Alerts tunes the alert rules; empty values take metrics.DefaultRuleParams.
type Alerts struct {
	MinAvoidableKWh float64 `yaml:"min_avoidable_kwh"`
	Overcooling     string  `yaml:"overcooling"`       // e.g. 1.5K
	MinEffectiveEER float64 `yaml:"min_effective_eer"` // Btu/Wh
	CoilMinLeaving  string  `yaml:"coil_min_leaving"`  // the coldest the coils can reach, e.g. 50F
	MinCoverage     string  `yaml:"min_coverage"`      // e.g. 50%
}

// AirHandler is one unit: its equipment facts, humidity target and point map.
type AirHandler struct {
	ID        string  `yaml:"id"`
	Name      string  `yaml:"name"`
	Cooling   Cooling `yaml:"cooling"`
	Reheat    Reheat  `yaml:"reheat"`
	Airflow   Airflow `yaml:"airflow"`
	Fan       Fan     `yaml:"fan"`
	LeavingRH string  `yaml:"leaving_rh"` // assumed coil leaving RH when not measured, default 95%
	// LeavingRHUncertainty is the 95 % half-width of leaving_rh, default 5%
	// (metrics.DefaultLeavingRHU); a commissioning measurement of the coil
	// may justify less.
	LeavingRHUncertainty string `yaml:"leaving_rh_uncertainty"`
	// OutdoorAir is the outdoor-air share used when the entering state is
	// mixed from return and outdoor air and the temperatures are too close
	// to tell it.
	OutdoorAir OutdoorAir `yaml:"outdoor_air"`
	// SpaceMoistureGain is what the space adds to the supply air's humidity
	// ratio, for a space target without space humidity sensors, e.g.
	// 0.8g/kg (default metrics.DefaultSpaceGain).
	SpaceMoistureGain string                      `yaml:"space_moisture_gain"`
	Target            Target                      `yaml:"target"`
	Points            map[string]metrics.PointRef `yaml:"points"`

	// Resolved by Parse.
	LeavingRHFrac  float64 `yaml:"-"`
	LeavingRHUFrac float64 `yaml:"-"`
	MinOutdoorFrac float64 `yaml:"-"`
	SpaceGainKgKg  float64 `yaml:"-"`
}

// OutdoorAir describes the outdoor air the mixing box takes in.
type OutdoorAir struct {
	MinFraction string `yaml:"min_fraction"` // outdoor-air share of the supply at minimum position, e.g. 20%
}

// Cooling describes the cooling source.
type Cooling struct {
	Kind          string  `yaml:"kind"`             // dx or chilled_water
	RatedEER      float64 `yaml:"rated_eer"`        // dx without a metered cooling_kw point: Btu/Wh at rating conditions
	RatedOutdoor  string  `yaml:"rated_outdoor"`    // outdoor temperature of the rating, default 95F
	EERPerKelvin  float64 `yaml:"eer_per_kelvin"`   // change of EER per K of outdoor temperature above the rating (negative), default -0.1
	PlantKWPerTon float64 `yaml:"plant_kw_per_ton"` // chilled water: plant kW per ton of coil load
	// RatedCapacity is a DX unit's rated total cooling capacity, e.g. 40ton
	// or 140kW: with it a modelled cooling input carries the part-load
	// cycling loss (PLF = 1 - Cd (1 - PLR), AHRI Standard 210/240).
	RatedCapacity string `yaml:"rated_capacity"`
	// DegradationCoefficient is Cd of that factor, 0..0.5 (0: no cycling
	// loss); left out, metrics.DefaultDegradationCd.
	DegradationCoefficient float64 `yaml:"degradation_coefficient"`
}

// Reheat describes the reheat source.
type Reheat struct {
	Kind             string  `yaml:"kind"`              // electric, hot_water, recovered or none
	BoilerEfficiency float64 `yaml:"boiler_efficiency"` // hot_water: fuel-to-heat efficiency, 0..1
}

// Airflow says how the supply airflow point is to be read.
type Airflow struct {
	Basis    string `yaml:"basis"`    // standard (standard air, 1.204 kg/m³) or actual (volume at the sensor's state)
	Location string `yaml:"location"` // for actual: where the station sits: supply (default), entering or leaving
}

// Fan says where the supply fan sits and how much heat it adds.
type Fan struct {
	Position string `yaml:"position"`  // draw_through (between coil and supply sensor), blow_through or none
	HeatRise string `yaml:"heat_rise"` // temperature rise when no fan_kw point is trended, e.g. 0.6K or 1F
	// RatedPower is the fan's rated electric power, e.g. 7.5kW: its heat
	// when no fan_kw point is trended (a constant-speed fan at its rating).
	RatedPower string `yaml:"rated_power"`
	// EnteringSensor says, for a blow-through fan, whether the entering
	// temperature sensor sits before the fan (a mixed-air sensor: the
	// fan's heat is added to the coil's entering air) or after it
	// (after_fan, the default: its reading holds the fan's heat).
	EnteringSensor string `yaml:"entering_sensor"`
}

// Target is the humidity the air handler must hold; give exactly one form.
type Target struct {
	MaxSupplyDewPoint string `yaml:"max_supply_dewpoint"` // e.g. 52F
	MaxSpaceDewPoint  string `yaml:"max_space_dewpoint"`  // e.g. 55F
	MaxSpaceRH        string `yaml:"max_space_rh"`        // e.g. 55%, at the space temperature
	SpaceTemp         string `yaml:"space_temp"`          // with max_space_rh when no space_temp point is trended
}

// Defaults applied before validation.
const (
	DefaultStep       = time.Minute
	DefaultStorePath  = "dewline.db"
	DefaultLeavingRH  = "95%"
	DefaultInfluxWait = 30 * time.Second
)

// requiredRoles must be mapped for every air handler; entering humidity may
// be RH or dew point.
var requiredRoles = []metrics.Role{metrics.RoleEnteringTemp, metrics.RoleLeavingTemp, metrics.RoleSupplyTemp, metrics.RoleSupplyFlow}

// Load reads and parses a configuration file. Relative paths in it
// are resolved against the file's folder.
func Load(path string) (*Config, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("read config: %w", err)
	}
	cfg, err := parse(bytes.NewReader(b), path)
	if err != nil {
		return nil, err
	}
	cfg.setBase(filepath.Dir(path))
	return cfg, nil
}

// Parse decodes, fills defaults into and validates a configuration.
// name is used in error messages only.
func Parse(r io.Reader, name string) (*Config, error) { return parse(r, name) }

func parse(r io.Reader, name string) (*Config, error) {
	cfg, ce, _, err := parseAll(r, name)
	if err != nil {
		return nil, err
	}
	if len(ce.Problems) > 0 {
		return nil, ce
	}
	return cfg, nil
}

// LoadPartial reads a configuration like Load, but problems
// confined to single air handlers do not fail it: those air handlers are
// left out and returned with their problems (keyed by id, or by position
// when the id itself is the problem), so an agent keeps running the
// others. Problems outside the air handlers still fail it.
func LoadPartial(path string) (*Config, map[string]*Error, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, nil, fmt.Errorf("read config: %w", err)
	}
	cfg, ce, root, err := parseAll(bytes.NewReader(b), path)
	if err != nil {
		return nil, nil, err
	}
	if len(ce.Problems) == 0 {
		cfg.setBase(filepath.Dir(path))
		return cfg, nil, nil
	}
	// Which air handler does each problem belong to? By the line ranges of
	// the air_handlers items.
	items := ahuLineRanges(root)
	broken := map[int]*Error{}
	global := &Error{File: ce.File}
	for _, p := range ce.Problems {
		i := -1
		for k, r := range items {
			if p.Line >= r[0] && p.Line <= r[1] {
				i = k
			}
		}
		if i < 0 || i >= len(cfg.AirHandlers) {
			global.Problems = append(global.Problems, p)
			continue
		}
		if broken[i] == nil {
			broken[i] = &Error{File: ce.File}
		}
		broken[i].Problems = append(broken[i].Problems, p)
	}
	if len(global.Problems) > 0 {
		return nil, nil, ce
	}
	out := map[string]*Error{}
	var keep []AirHandler
	ids := map[string]int{}
	for i, a := range cfg.AirHandlers {
		ids[a.ID]++
		if e, bad := broken[i]; bad {
			key := a.ID
			if key == "" || ids[a.ID] > 1 {
				key = fmt.Sprintf("air_handlers[%d]", i)
			}
			out[key] = e
			continue
		}
		keep = append(keep, a)
	}
	if len(keep) == 0 {
		return nil, nil, ce
	}
	cfg.AirHandlers = keep
	cfg.setBase(filepath.Dir(path))
	return cfg, out, nil
}

// ahuLineRanges returns the first and last line of each air_handlers item.
func ahuLineRanges(root *yaml.Node) [][2]int {
	n := root
	if n.Kind == yaml.DocumentNode && len(n.Content) > 0 {
		n = n.Content[0]
	}
	if n.Kind != yaml.MappingNode {
		return nil
	}
	var seq *yaml.Node
	end := math.MaxInt
	for i := 0; i+1 < len(n.Content); i += 2 {
		if n.Content[i].Value == "air_handlers" {
			seq = n.Content[i+1]
			if i+2 < len(n.Content) {
				end = n.Content[i+2].Line - 1
			}
		}
	}
	if seq == nil || seq.Kind != yaml.SequenceNode {
		return nil
	}
	out := make([][2]int, len(seq.Content))
	for k, item := range seq.Content {
		last := end
		if k+1 < len(seq.Content) {
			last = seq.Content[k+1].Line - 1
		}
		out[k] = [2]int{item.Line, last}
	}
	return out
}

// parseAll decodes and validates, returning the configuration, every
// problem found and the YAML tree; err is set only when nothing could be read.
func parseAll(r io.Reader, name string) (*Config, *Error, *yaml.Node, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, nil, nil, fmt.Errorf("read config %s: %w", name, err)
	}
	ce := &Error{File: name}
	var root yaml.Node
	if err := yaml.Unmarshal(data, &root); err != nil {
		ce.add(yamlLine(err.Error()), "", strings.TrimPrefix(err.Error(), "yaml: "), "fix the YAML syntax (indentation uses spaces; quote values that contain ':' or '#')")
		return nil, nil, nil, ce
	}
	if len(root.Content) == 0 {
		ce.add(0, "", "the file is empty", "start from deploy/examples/dewline.yaml")
		return nil, nil, nil, ce
	}
	cfg := &Config{}
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	var meant []string
	if err := dec.Decode(cfg); err != nil {
		meant = ce.addDecodeErrors(err, &root)
	}
	cfg.applyDefaults(&root)
	// A misspelt key is reported once: not again as the key it meant
	// being missing.
	vce := &Error{File: name}
	cfg.validate(vce, &root)
	for _, p := range vce.Problems {
		if !underAny(p.Path, meant) {
			ce.Problems = append(ce.Problems, p)
		}
	}
	sort.SliceStable(ce.Problems, func(i, j int) bool { return ce.Problems[i].Line < ce.Problems[j].Line })
	return cfg, ce, &root, nil
}

// applyDefaults fills in the keys the file leaves out. A key the file
// sets to zero keeps its zero, for validation to refuse where it means
// nothing (grid.step: 0s).
func (c *Config) applyDefaults(root *yaml.Node) {
	if c.Store.Kind == "" {
		c.Store.Kind = "embedded"
	}
	if c.Store.Kind == "embedded" && c.Store.Path == "" {
		c.Store.Path = DefaultStorePath
	}
	if c.Store.InfluxDB != nil && c.Store.InfluxDB.Timeout == 0 && !given(root, "store", "influxdb", "timeout") {
		c.Store.InfluxDB.Timeout = DefaultInfluxWait
	}
	if c.Grid.Step == 0 && !given(root, "grid", "step") {
		c.Grid.Step = DefaultStep
	}
	if c.Site.Units == "" {
		c.Site.Units = "si"
	}
	if c.Prices.Currency == "" {
		c.Prices.Currency = "USD"
	}
	if c.Schedule.Cron == "" {
		c.Schedule.Cron = "7 * * * *"
	}
	// lookback: 0 is meaningful (re-compute no hour already done).
	if c.Schedule.Lookback == 0 && !given(root, "schedule", "lookback") {
		c.Schedule.Lookback = 3 * time.Hour
	}
	if c.Schedule.Backfill == 0 && !given(root, "schedule", "backfill") {
		c.Schedule.Backfill = 7 * 24 * time.Hour
	}
	if c.Schedule.Timeout == 0 && !given(root, "schedule", "timeout") {
		c.Schedule.Timeout = 45 * time.Minute
	}
	if c.HTTP.Listen == "" {
		c.HTTP.Listen = "127.0.0.1:9470"
	}
	if c.Webhook != nil {
		if c.Webhook.Timeout == 0 && !given(root, "webhook", "timeout") {
			c.Webhook.Timeout = 10 * time.Second
		}
		if c.Webhook.MaxAge == 0 && !given(root, "webhook", "max_age") {
			c.Webhook.MaxAge = 24 * time.Hour
		}
		// update_every: 0 is meaningful (no while-open updates).
		if c.Webhook.UpdateEvery == 0 && !given(root, "webhook", "update_every") {
			c.Webhook.UpdateEvery = time.Hour
		}
	}
	if c.Site.ID == "" {
		c.Site.ID = c.Site.Name
	}
	for i := range c.AirHandlers {
		a := &c.AirHandlers[i]
		if a.LeavingRH == "" {
			a.LeavingRH = DefaultLeavingRH
		}
		if a.Cooling.RatedOutdoor == "" {
			a.Cooling.RatedOutdoor = "95F"
		}
		// 0 is meaningful here: an EER that does not change outdoors.
		if a.Cooling.EERPerKelvin == 0 && !given(root, "air_handlers", i, "cooling", "eer_per_kelvin") {
			a.Cooling.EERPerKelvin = -0.1
		}
		// 0 is meaningful here too: a unit without cycling loss.
		if a.Cooling.RatedCapacity != "" && a.Cooling.DegradationCoefficient == 0 && !given(root, "air_handlers", i, "cooling", "degradation_coefficient") {
			a.Cooling.DegradationCoefficient = metrics.DefaultDegradationCd
		}
	}
}

// setBase records the configuration file's folder, against which the
// store path, the state path and the token file are resolved.
func (c *Config) setBase(dir string) {
	c.baseDir = dir
	if c.Store.InfluxDB != nil {
		c.Store.InfluxDB.baseDir = dir
	}
}

// TokenFilePath returns store.influxdb.token_file resolved against the
// configuration file's folder, as the store path is; empty when none.
func (ic *InfluxConfig) TokenFilePath() string {
	if ic.TokenFile == "" || filepath.IsAbs(ic.TokenFile) || ic.baseDir == "" {
		return ic.TokenFile
	}
	return filepath.Join(ic.baseDir, ic.TokenFile)
}

// StorePath returns the embedded store's file, resolved against the
// configuration file's folder.
func (c *Config) StorePath() string {
	if filepath.IsAbs(c.Store.Path) || c.baseDir == "" {
		return c.Store.Path
	}
	return filepath.Join(c.baseDir, c.Store.Path)
}

// DefaultStatePath is the agent's local state file (its webhook queue) when
// the store is InfluxDB, beside the configuration unless store.state_path
// says otherwise.
const DefaultStatePath = "dewline-state.db"

// StatePath returns the agent's local state file, resolved against the
// configuration file's folder.
func (c *Config) StatePath() string {
	p := c.Store.StatePath
	if p == "" {
		p = DefaultStatePath
	}
	if filepath.IsAbs(p) || c.baseDir == "" {
		return p
	}
	return filepath.Join(c.baseDir, p)
}

// StaleLimit returns how long a value of role may hold on this site's grid.
func (c *Config) StaleLimit(role metrics.Role) time.Duration {
	if d, ok := c.Grid.Stale[string(role)]; ok {
		return d
	}
	if s, ok := metrics.LookupRole(string(role)); ok {
		return s.Stale
	}
	return 15 * time.Minute
}

// Token returns the InfluxDB token from the environment variable or file
// the configuration names; empty when it names neither (InfluxDB 1.8 without
// authentication). The token is a secret: never log it.
func (ic *InfluxConfig) Token() (string, error) {
	switch {
	case ic.TokenEnv != "":
		v, ok := os.LookupEnv(ic.TokenEnv)
		if !ok {
			return "", fmt.Errorf("store.influxdb.token_env: environment variable %s is not set; export it with the InfluxDB token", ic.TokenEnv)
		}
		return strings.TrimSpace(v), nil
	case ic.TokenFile != "":
		b, err := os.ReadFile(ic.TokenFilePath())
		if err != nil {
			return "", fmt.Errorf("store.influxdb.token_file: %w", err)
		}
		return strings.TrimSpace(string(b)), nil
	}
	return "", nil
}

// SecretFromEnv reads a secret from the environment variable name; empty
// name gives an empty secret. Never log the result.
func SecretFromEnv(key, name string) (string, error) {
	if name == "" {
		return "", nil
	}
	v, ok := os.LookupEnv(name)
	if !ok || strings.TrimSpace(v) == "" {
		return "", fmt.Errorf("%s: environment variable %s is not set; export it in the environment dewline runs in, or remove %s", key, name, key)
	}
	return strings.TrimSpace(v), nil
}

// CheckSecrets looks up every environment variable and file the
// configuration names for a secret (store.influxdb.token_env or
// token_file, http.token_env, webhook.secret_env), all of them whatever
// the command, so that "dewline check" and "dewline run --once" report a
// missing one before the long-running agent trips over it. It returns every
// one missing at once and never the values.
func (c *Config) CheckSecrets() error {
	var errs []error
	if ic := c.Store.InfluxDB; c.Store.Kind == "influxdb" && ic != nil {
		if _, err := ic.Token(); err != nil {
			errs = append(errs, err)
		}
	}
	if _, err := SecretFromEnv("http.token_env", c.HTTP.TokenEnv); err != nil {
		errs = append(errs, err)
	}
	if w := c.Webhook; w != nil {
		if _, err := SecretFromEnv("webhook.secret_env", w.SecretEnv); err != nil {
			errs = append(errs, err)
		}
	}
	return errors.Join(errs...)
}

// AirHandler returns the air handler with the given id.
func (c *Config) AirHandler(id string) (*AirHandler, bool) {
	for i := range c.AirHandlers {
		if c.AirHandlers[i].ID == id {
			return &c.AirHandlers[i], true
		}
	}
	return nil, false
}

// Roles returns the air handler's mapped roles with their specs, in the
// stable order of metrics.Roles.
func (a *AirHandler) Roles() []metrics.RoleSpec {
	var out []metrics.RoleSpec
	for _, s := range metrics.Roles() {
		if _, ok := a.Points[string(s.Role)]; ok {
			out = append(out, s)
		}
	}
	return out
}

// Point returns the point mapped to role.
func (a *AirHandler) Point(role metrics.Role) (metrics.PointRef, bool) {
	p, ok := a.Points[string(role)]
	return p, ok
}

// Unit returns the psychro unit a point is logged in; Parse has checked it.
func Unit(role metrics.Role, p metrics.PointRef) psychro.Unit {
	spec, _ := metrics.LookupRole(string(role))
	u, _ := psychro.LookupUnit(spec.Kind, p.Unit)
	return u
}
