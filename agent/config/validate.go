package config

import (
	"errors"
	"fmt"
	"math"
	"net"
	"net/url"
	"sort"
	"strconv"
	"strings"
	"time"

	"go.yaml.in/yaml/v3"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// validator collects problems with their lines.
type validator struct {
	ce   *Error
	root *yaml.Node
}

func (v *validator) bad(path []any, msg, fix string) {
	v.ce.add(lineOf(v.root, path...), pathString(path), msg, fix)
}

func pathString(path []any) string {
	var b strings.Builder
	for _, p := range path {
		switch k := p.(type) {
		case string:
			if b.Len() > 0 {
				b.WriteByte('.')
			}
			b.WriteString(k)
		case int:
			fmt.Fprintf(&b, "[%d]", k)
		}
	}
	return b.String()
}

func at(path []any, more ...any) []any {
	return append(append([]any(nil), path...), more...)
}

// quantity parses a configured value with its unit; bare numbers are
// refused so that 55 is never read in the wrong scale.
func (v *validator) quantity(path []any, s string, kind psychro.Kind) (float64, bool) {
	x, _, err := psychro.ParseQuantity(s, kind, "")
	if err != nil {
		v.bad(path, err.Error(), "")
		return 0, false
	}
	return x, true
}

// number refuses a configured number that is not finite (YAML .nan,
// .inf) or lies outside lo..hi; unit follows the range in the message.
func (v *validator) number(path []any, x, lo, hi float64, unit, fix string) bool {
	if math.IsNaN(x) || math.IsInf(x, 0) || x < lo || x > hi {
		v.bad(path, fmt.Sprintf("%s is outside %s..%s%s", fmtNumber(x), fmtNumber(lo), fmtNumber(hi), unit), fix)
		return false
	}
	return true
}

// given reports whether the file sets the key at path.
func (v *validator) given(path []any) bool { return given(v.root, path...) }

// positive refuses a configured number that is not finite or lies outside
// 0 < x <= hi: a zero that would divide, or that the code would read as
// the key left out.
func (v *validator) positive(path []any, x, hi float64, unit, fix string) bool {
	if math.IsNaN(x) || math.IsInf(x, 0) || x <= 0 || x > hi {
		v.bad(path, fmt.Sprintf("%s is outside 0 < x <= %s%s", fmtNumber(x), fmtNumber(hi), unit), fix)
		return false
	}
	return true
}

// fmtNumber writes NaN and infinities as Go does and other numbers
// without an exponent where they have none.
func fmtNumber(x float64) string {
	switch {
	case math.IsInf(x, 1):
		return "+Inf"
	case math.Abs(x) < 1e15:
		return strconv.FormatFloat(x, 'f', -1, 64)
	}
	return fmt.Sprintf("%g", x)
}

// temperatureIn parses a temperature (with its unit) and refuses it
// outside loC..hiC, stating the range in °C and °F.
func (v *validator) temperatureIn(path []any, s string, loC, hiC float64, fix string) (float64, bool) {
	x, ok := v.quantity(path, s, psychro.KindTemperature)
	if !ok {
		return 0, false
	}
	if x < loC || x > hiC {
		v.bad(path, fmt.Sprintf("%s is outside %g..%g °C (%g..%g °F)", s, loC, hiC,
			psychro.CToF(loC), psychro.CToF(hiC)), fix)
		return 0, false
	}
	return x, true
}

// quantityIn parses a quantity of kind (with its unit) and refuses it
// outside lo..hi (SI), stating the range as rng in the configured form.
func (v *validator) quantityIn(path []any, s string, kind psychro.Kind, lo, hi float64, rng, fix string) (float64, bool) {
	x, ok := v.quantity(path, s, kind)
	if !ok {
		return 0, false
	}
	if x < lo || x > hi {
		v.bad(path, fmt.Sprintf("%s is outside %s", s, rng), fix)
		return 0, false
	}
	return x, true
}

func (c *Config) validate(ce *Error, root *yaml.Node) {
	v := &validator{ce: ce, root: root}
	if c.Version != Version {
		v.bad([]any{"version"}, fmt.Sprintf("version %d is not supported", c.Version), fmt.Sprintf("set version: %d", Version))
	}
	c.validateSite(v)
	c.validateStore(v)
	c.validateGrid(v)
	c.validatePrices(v)
	c.validateSensors(v)
	c.validateAlerts(v)
	c.validateSchedule(v)
	c.validateExports(v)
	if len(c.AirHandlers) == 0 {
		v.bad([]any{"air_handlers"}, "no air handlers are configured", "add at least one under air_handlers")
	}
	ids := map[string]int{}
	units := map[string]string{} // point name -> unit, across air handlers
	for i := range c.AirHandlers {
		a := &c.AirHandlers[i]
		p := []any{"air_handlers", i}
		if strings.TrimSpace(a.ID) == "" {
			v.bad(at(p, "id"), "missing id", "give each air handler a short unique id such as AHU-1")
		} else if dotSegment(a.ID) {
			v.bad(at(p, "id"), fmt.Sprintf("id %q cannot name the air handler's pages: a web address resolves %q away", a.ID, a.ID), "give the air handler an id such as AHU-1")
		} else if j, dup := ids[a.ID]; dup {
			v.bad(at(p, "id"), fmt.Sprintf("id %q is also used by air_handlers[%d]", a.ID, j), "ids must be unique")
		} else {
			ids[a.ID] = i
		}
		a.validate(v, p, c, units)
	}
	if c.Store.Kind == "influxdb" {
		c.validateLineNames(v)
	}
}

// validateLineNames refuses, for an InfluxDB store, the names its writes
// would refuse (metrics.LineNameProblem, the writer's own rule): the site
// id and the air handler ids tag every result, and a point without a
// measurement of its own is stored under its name. The embedded store and
// exports carry any name, so they are left alone there.
func (c *Config) validateLineNames(v *validator) {
	if why := metrics.LineNameProblem(c.Site.ID); why != "" && c.Site.ID != "" {
		if v.given([]any{"site", "id"}) {
			v.bad([]any{"site", "id"}, fmt.Sprintf("site id %q %s; it tags every result written to InfluxDB", c.Site.ID, why),
				"choose an id line protocol can carry, e.g. without the backslash")
		} else {
			v.bad([]any{"site", "name"}, fmt.Sprintf("site name %q, the site's id when site.id is left out, %s; the id tags every result written to InfluxDB", c.Site.ID, why),
				"set site.id to an id line protocol can carry (the name stays as it is)")
		}
	}
	for i := range c.AirHandlers {
		a := &c.AirHandlers[i]
		p := []any{"air_handlers", i}
		if why := metrics.LineNameProblem(a.ID); why != "" && strings.TrimSpace(a.ID) != "" {
			v.bad(at(p, "id"), fmt.Sprintf("air handler id %q %s; it tags every result written to InfluxDB", a.ID, why),
				"choose an id line protocol can carry, e.g. without the backslash")
		}
		roles := make([]string, 0, len(a.Points))
		for r := range a.Points {
			roles = append(roles, r)
		}
		sort.Strings(roles)
		for _, r := range roles {
			ref := a.Points[r]
			if (ref.Measurement == "") != (ref.Field == "") {
				continue // refused above: measurement and field go together
			}
			problems := ref.InfluxProblems()
			if len(problems) == 0 {
				continue
			}
			rp := at(p, "points", r)
			if ref.Measurement != "" {
				v.bad(rp, fmt.Sprintf("%s; every write of the point to InfluxDB would be refused", strings.Join(problems, "; ")),
					"give a measurement, field and tags line protocol can carry")
				continue
			}
			key := "point"
			if ref.Column != "" {
				key = "column"
			}
			v.bad(at(rp, key), fmt.Sprintf("the point %q is stored in InfluxDB under its name (tag %s), but the name %s; every write of it would be refused", ref.Name(), metrics.DefaultPointTag, metrics.LineNameProblem(ref.Name())),
				fmt.Sprintf("keep %s: as the export names it and add measurement: and field: (e.g. measurement: trends, field: %s) to store it under", key, r))
		}
	}
}

// dotSegment reports whether id is "." or "..": the one id a web address
// cannot carry as a path segment, percent-encoded or not (clients and
// servers resolve it, also written %2E). Any other id is encoded.
func dotSegment(id string) bool { return id == "." || id == ".." }

// The altitudes of a building site: the shore of the Dead Sea (about
// -430 m) to the highest towns (about 5100 m), with a margin (common
// knowledge, no source). The standard atmosphere (psychro) holds further.
const (
	minSiteAltitudeM = -500.0
	maxSiteAltitudeM = 5500.0
)

func (c *Config) validateSite(v *validator) {
	p := []any{"site"}
	if c.Site.TimeZone == "" {
		v.bad(at(p, "timezone"), "missing time zone", "set site.timezone to an IANA zone such as America/New_York; local times in exports are read in it")
	} else if loc, err := time.LoadLocation(c.Site.TimeZone); err != nil {
		v.bad(at(p, "timezone"), fmt.Sprintf("unknown time zone %q", c.Site.TimeZone), "use an IANA zone name such as America/Chicago or Europe/Berlin")
	} else {
		c.Location = loc
	}
	switch {
	case c.Site.Altitude != "" && c.Site.Pressure != "":
		v.bad(at(p, "pressure"), "both altitude and pressure are given", "keep one: altitude sets the standard-atmosphere pressure")
	case c.Site.Pressure != "":
		if x, ok := v.quantity(at(p, "pressure"), c.Site.Pressure, psychro.KindPressure); ok {
			if x < 50000 || x > 110000 {
				v.bad(at(p, "pressure"), fmt.Sprintf("%s is not a barometric pressure at a building site", c.Site.Pressure), "give the site's mean barometric pressure, e.g. 101.1kPa or 29.85inHg")
			} else {
				c.PressurePa = x
			}
		}
	case c.Site.Altitude != "":
		if z, ok := v.quantity(at(p, "altitude"), c.Site.Altitude, psychro.KindLength); ok {
			// z is in metres whatever unit the file used, so one test
			// holds both bounds for m and ft alike.
			if pa, err := psychro.PressureFromAltitude(z); err != nil || z < minSiteAltitudeM || z > maxSiteAltitudeM {
				v.bad(at(p, "altitude"), fmt.Sprintf("%s is outside -500..5500 m (-1640..18044 ft)", c.Site.Altitude), "give the site's elevation, e.g. 15m or 850ft")
			} else {
				c.PressurePa = pa
			}
		}
	default:
		v.bad(p, "neither altitude nor pressure is given", "set site.altitude (e.g. 15m) or site.pressure (e.g. 101.1kPa); at altitude air is thinner and every mass flow depends on it")
	}
	if dotSegment(c.Site.ID) {
		// site.id defaults to site.name: name the key the file gave.
		key := "id"
		if !v.given(at(p, "id")) {
			key = "name"
		}
		v.bad(at(p, key), fmt.Sprintf("%q cannot name the site's pages (/sites/ID/ in a portfolio): a web address resolves %q away", c.Site.ID, c.Site.ID),
			"set site.id to a name of the site, e.g. north-campus")
	}
	if c.Site.Units != "si" && c.Site.Units != "ip" {
		v.bad(at(p, "units"), fmt.Sprintf("unknown display units %q", c.Site.Units), "use si or ip")
	}
}

func (c *Config) validateStore(v *validator) {
	p := []any{"store"}
	switch c.Store.Kind {
	case "embedded":
		if c.Store.InfluxDB != nil {
			v.bad(at(p, "influxdb"), "influxdb settings given for the embedded store", "set store.kind: influxdb, or remove store.influxdb")
		}
		if c.Store.StatePath != "" {
			v.bad(at(p, "state_path"), "state_path is for the InfluxDB store (the embedded store keeps the agent's state itself)", "remove store.state_path")
		}
	case "influxdb":
		ic := c.Store.InfluxDB
		if ic == nil {
			v.bad(p, "store.kind is influxdb but store.influxdb is missing", "add store.influxdb with url and bucket")
			return
		}
		ip := at(p, "influxdb")
		if ic.URL == "" {
			v.bad(at(ip, "url"), "missing url", "e.g. http://127.0.0.1:8086")
		} else if u, err := url.Parse(ic.URL); err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
			v.bad(at(ip, "url"), fmt.Sprintf("%q is not an http(s) URL", ic.URL), "e.g. http://127.0.0.1:8086")
		} else if u.User != nil {
			v.bad(at(ip, "url"), "the URL carries credentials", "remove them; use token_env or token_file")
		}
		if ic.Bucket == "" {
			v.bad(at(ip, "bucket"), "missing bucket", "give the 2.x bucket, or database/retention_policy for 1.8 (e.g. bms/autogen)")
		}
		if ic.Timeout <= 0 {
			v.bad(at(ip, "timeout"), fmt.Sprintf("%v is outside 0 < x: a request needs time", ic.Timeout), fmt.Sprintf("give the time one request may take, e.g. 30s, or leave it out for %v", DefaultInfluxWait))
		}
		if ic.TokenEnv != "" && ic.TokenFile != "" {
			v.bad(at(ip, "token_file"), "both token_env and token_file are given", "keep one")
		}
		if c.Store.Path != "" {
			v.bad(at(p, "path"), "path is for the embedded store", "remove store.path or set store.kind: embedded")
		}
	default:
		v.bad(at(p, "kind"), fmt.Sprintf("unknown store kind %q", c.Store.Kind), "use embedded (one local file, the default) or influxdb")
	}
}

func (c *Config) validateGrid(v *validator) {
	p := []any{"grid"}
	if c.Grid.Step < time.Second || c.Grid.Step > 15*time.Minute || time.Hour%c.Grid.Step != 0 {
		v.bad(at(p, "step"), fmt.Sprintf("step %v must divide an hour and lie between 1s and 15m", c.Grid.Step), "use 1m (the default), 5m or 15m")
	}
	roles := make([]string, 0, len(c.Grid.Stale))
	for r := range c.Grid.Stale {
		roles = append(roles, r)
	}
	sort.Strings(roles)
	for _, r := range roles {
		if _, ok := metrics.LookupRole(r); !ok {
			v.bad(at(p, "stale", r), fmt.Sprintf("unknown role %q", r), roleFix(r))
		} else if d := c.Grid.Stale[r]; d < c.Grid.Step || d > 24*time.Hour {
			v.bad(at(p, "stale", r), fmt.Sprintf("stale limit %v must lie between the grid step and 24h", d), "a change-of-value point typically holds 15m to 1h")
		}
	}
}

func (c *Config) validatePrices(v *validator) {
	p := []any{"prices"}
	// Ranges (common practice, no source): a price per kWh below 100,000
	// in any currency's unit; an emission factor up to 3 kg CO2 per kWh,
	// above coal-fired generation.
	const priceFix = "give the price of one kWh in the currency's unit (e.g. 0.12 for USD)"
	v.number(at(p, "electricity_per_kwh"), c.Prices.ElectricityPerKWh, 0, 1e5, "", priceFix)
	v.number(at(p, "fuel_per_kwh"), c.Prices.FuelPerKWh, 0, 1e5, "", priceFix)
	const co2Fix = "give kg of CO2 per kWh, e.g. 0.4 for grid electricity or 0.2 for natural gas"
	v.number(at(p, "electricity_co2_kg_per_kwh"), c.Prices.ElectricityCO2KgPerKWh, 0, 3, " kg/kWh", co2Fix)
	v.number(at(p, "fuel_co2_kg_per_kwh"), c.Prices.FuelCO2KgPerKWh, 0, 3, " kg/kWh", co2Fix)
	if len(c.Prices.Currency) != 3 {
		v.bad(at(p, "currency"), fmt.Sprintf("%q is not a currency code", c.Prices.Currency), "use an ISO 4217 code such as USD or EUR")
	}
}

func roleFix(name string) string {
	fix := "roles: " + strings.Join(metrics.RoleNames(), ", ")
	if near := nearest(name, metrics.RoleNames()); near != "" {
		fix = fmt.Sprintf("did you mean %q? %s", near, fix)
	}
	return fix
}

func (a *AirHandler) validate(v *validator, p []any, c *Config, units map[string]string) {
	// Point map: known roles, a location, a unit of the right kind, no duplicates.
	pp := at(p, "points")
	roles := make([]string, 0, len(a.Points))
	for r := range a.Points {
		roles = append(roles, r)
	}
	sort.Strings(roles)
	seen := map[string]string{}
	for _, r := range roles {
		ref := a.Points[r]
		rp := at(pp, r)
		spec, ok := metrics.LookupRole(r)
		if !ok {
			v.bad(rp, fmt.Sprintf("unknown role %q", r), roleFix(r))
			continue
		}
		hasCSV := ref.Column != "" || ref.Point != ""
		hasInflux := ref.Measurement != "" || ref.Field != ""
		switch {
		case ref.Column != "" && ref.Point != "":
			v.bad(rp, "both column and point are given", "column is for wide exports, point for long exports and the embedded store; keep one")
		case !hasCSV && !hasInflux:
			v.bad(rp, "no location", "give column (wide CSV), point (long CSV / embedded store) or measurement and field (InfluxDB)")
		case hasInflux && (ref.Measurement == "" || ref.Field == ""):
			v.bad(rp, "measurement and field go together", "give both")
		case c.Store.Kind == "influxdb" && !hasInflux && !hasCSV:
			v.bad(rp, "no InfluxDB location", "give measurement and field")
		}
		if ref.Unit == "" {
			v.bad(at(rp, "unit"), "missing unit", fmt.Sprintf("give the unit the point is logged in: %s", strings.Join(psychro.UnitNames(spec.Kind), ", ")))
		} else if _, err := psychro.LookupUnit(spec.Kind, ref.Unit); err != nil {
			v.bad(at(rp, "unit"), fmt.Sprintf("%q is not a unit of %s", ref.Unit, spec.Kind), "use one of "+strings.Join(psychro.UnitNames(spec.Kind), ", "))
		}
		key := ref.Name()
		if other, dup := seen[key]; dup && !sameSensorAllowed(other, r) {
			v.bad(rp, fmt.Sprintf("the point %q is also mapped to %s", key, other), "each role needs its own point; remove one mapping")
		} else {
			seen[key] = r
		}
		if u, ok := units[key]; ok && validUnit(spec.Kind, u) && validUnit(spec.Kind, ref.Unit) && !sameUnit(spec.Kind, u, ref.Unit) {
			v.bad(at(rp, "unit"), fmt.Sprintf("the point %q is declared in %s elsewhere and %s here", key, u, ref.Unit), "a shared point has one unit; correct one of them")
		} else if ref.Unit != "" {
			units[key] = ref.Unit
		}
	}
	for _, r := range requiredRoles {
		if _, ok := a.Points[string(r)]; !ok {
			v.bad(pp, fmt.Sprintf("required role %s is not mapped", r), "map it to the trend point that measures it")
		}
	}
	a.validateEntering(v, p)

	// Cooling source.
	cp := at(p, "cooling")
	_, metered := a.Points[string(metrics.RoleCoolingPower)]
	switch a.Cooling.Kind {
	case "dx":
		// The modelled input divides the coil load by the COP from it.
		if v.given(at(cp, "rated_eer")) {
			v.positive(at(cp, "rated_eer"), a.Cooling.RatedEER, 40, " Btu/Wh", "give the rated EER in Btu/Wh, typically 8-16")
		} else if !metered {
			v.bad(at(cp, "rated_eer"), "a DX unit needs a cooling_kw point or a rated EER", "map cooling_kw, or set rated_eer (Btu/Wh) from the nameplate")
		}
		v.temperatureIn(at(cp, "rated_outdoor"), a.Cooling.RatedOutdoor, 15, 55, "give the outdoor temperature of the rating, typically 95F (35C)")
	case "chilled_water":
		// A plant of 0 kW per ton would make the coil's cooling free.
		if v.given(at(cp, "plant_kw_per_ton")) {
			v.positive(at(cp, "plant_kw_per_ton"), a.Cooling.PlantKWPerTon, 3, " kW/ton", "set plant_kw_per_ton, typically 0.6-1.2")
		} else if !metered {
			v.bad(at(cp, "plant_kw_per_ton"), "chilled water needs the plant's kW per ton (0 < x <= 3)", "set plant_kw_per_ton, typically 0.6-1.2")
		}
	case "":
		v.bad(at(cp, "kind"), "missing cooling kind", "use dx or chilled_water")
	default:
		v.bad(at(cp, "kind"), fmt.Sprintf("unknown cooling kind %q", a.Cooling.Kind), "use dx or chilled_water")
	}

	// Part-load cycling of a DX unit whose input is modelled.
	if a.Cooling.RatedCapacity != "" {
		if a.Cooling.Kind != "dx" {
			v.bad(at(cp, "rated_capacity"), "the rated capacity is for the part-load cycling of a DX unit", "remove it, or set kind: dx")
		} else if x, ok := v.quantity(at(cp, "rated_capacity"), a.Cooling.RatedCapacity, psychro.KindPower); ok && !(x > 0 && x <= 5000) {
			v.bad(at(cp, "rated_capacity"), fmt.Sprintf("%s is outside 0 < x <= 5000 kW", a.Cooling.RatedCapacity), "give the nameplate's total cooling capacity, e.g. 40ton or 140kW")
		}
	}
	if v.given(at(cp, "degradation_coefficient")) {
		if a.Cooling.RatedCapacity == "" {
			v.bad(at(cp, "degradation_coefficient"), "the degradation coefficient needs the rated capacity to tell the part load", "set rated_capacity, or remove degradation_coefficient")
		}
		v.number(at(cp, "degradation_coefficient"), a.Cooling.DegradationCoefficient, 0, 0.5, "", "give Cd from the unit's rating, typically 0.1-0.25")
	}

	// Capacity falls with outdoor temperature: about -0.1 to -0.3 Btu/Wh
	// per K for air-cooled units (common practice, no source).
	v.number(at(cp, "eer_per_kelvin"), a.Cooling.EERPerKelvin, -2, 0, " Btu/Wh per K", "give the change of EER per K above the rating, negative, e.g. -0.1")

	// Reheat source.
	hp := at(p, "reheat")
	switch a.Reheat.Kind {
	case "electric", "recovered", "none":
		if a.Reheat.BoilerEfficiency != 0 {
			v.bad(at(hp, "boiler_efficiency"), "boiler efficiency is for hot_water reheat", "remove it or set kind: hot_water")
		}
	case "hot_water":
		// The fuel is the reheat divided by the efficiency.
		if v.given(at(hp, "boiler_efficiency")) {
			v.positive(at(hp, "boiler_efficiency"), a.Reheat.BoilerEfficiency, 1, "", "set boiler_efficiency as a fraction, e.g. 0.82")
		} else {
			v.bad(at(hp, "boiler_efficiency"), "hot-water reheat needs the boiler efficiency (0 < x <= 1)", "set boiler_efficiency, e.g. 0.82; the fuel is priced with prices.fuel_per_kwh")
		}
	case "":
		v.bad(at(hp, "kind"), "missing reheat kind", "use electric, hot_water, recovered or none")
	default:
		v.bad(at(hp, "kind"), fmt.Sprintf("unknown reheat kind %q", a.Reheat.Kind), "use electric, hot_water, recovered or none")
	}

	// Airflow basis: made explicit because the two differ by 10-20 % at altitude.
	switch a.Airflow.Location {
	case "", "supply", "entering", "leaving":
		if a.Airflow.Location != "" && a.Airflow.Basis == "standard" {
			v.bad(at(p, "airflow", "location"), "location matters only for the actual basis", "remove it, or set basis: actual")
		}
	default:
		v.bad(at(p, "airflow", "location"), fmt.Sprintf("unknown location %q", a.Airflow.Location), "use supply, entering or leaving")
	}
	switch a.Airflow.Basis {
	case "standard", "actual":
	case "":
		v.bad(at(p, "airflow", "basis"), "missing airflow basis", "say whether the airflow station reports standard air (standard) or volume at the supply state (actual)")
	default:
		v.bad(at(p, "airflow", "basis"), fmt.Sprintf("unknown basis %q", a.Airflow.Basis), "use standard or actual")
	}

	// Supply fan heat.
	fp := at(p, "fan")
	_, fanKW := a.Points[string(metrics.RoleFanPower)]
	switch a.Fan.Position {
	case "draw_through":
		if !fanKW && a.Fan.HeatRise == "" && a.Fan.RatedPower == "" {
			v.bad(at(fp, "heat_rise"), "a draw-through fan heats the air between coil and supply sensor", "map fan_kw, or set rated_power (the fan's kW) or heat_rise (typically 0.3-0.8K)")
		}
	case "blow_through":
		switch a.Fan.EnteringSensor {
		case "", "after_fan":
		case "before_fan":
			if !fanKW && a.Fan.HeatRise == "" && a.Fan.RatedPower == "" {
				v.bad(at(fp, "heat_rise"), "a blow-through fan after the entering sensor heats the air the coil then cools", "map fan_kw, or set rated_power (the fan's kW) or heat_rise (typically 0.3-0.8K)")
			}
		default:
			v.bad(at(fp, "entering_sensor"), fmt.Sprintf("unknown entering sensor place %q", a.Fan.EnteringSensor), "use before_fan (a mixed-air sensor ahead of the fan) or after_fan (between fan and coil)")
		}
	case "none":
	case "":
		v.bad(at(fp, "position"), "missing fan position", "use draw_through (fan between coil and supply sensor), blow_through or none")
	default:
		v.bad(at(fp, "position"), fmt.Sprintf("unknown fan position %q", a.Fan.Position), "use draw_through, blow_through or none")
	}
	if a.Fan.EnteringSensor != "" && a.Fan.Position != "blow_through" {
		v.bad(at(fp, "entering_sensor"), "the entering sensor's place matters only for a blow-through fan", "remove it, or set position: blow_through")
	}
	if a.Fan.RatedPower != "" {
		if a.Fan.HeatRise != "" {
			v.bad(at(fp, "rated_power"), "rated_power and heat_rise both give the fan's heat", "keep one")
		}
		if x, ok := v.quantity(at(fp, "rated_power"), a.Fan.RatedPower, psychro.KindPower); ok && !(x > 0 && x <= 500) {
			v.bad(at(fp, "rated_power"), fmt.Sprintf("%s is outside 0 < x <= 500 kW", a.Fan.RatedPower), "give the fan motor's rated input, e.g. 7.5kW or 10hp as 7.5kW")
		}
	}
	if a.Fan.HeatRise != "" {
		if u, ok := temperatureDelta(a.Fan.HeatRise); !ok || u < 0 || u > 5 {
			v.bad(at(fp, "heat_rise"), fmt.Sprintf("%q is not a temperature rise of 0-5 K", a.Fan.HeatRise), "write it as 0.6K or 1F")
		}
	}

	// Space moisture gain.
	a.SpaceGainKgKg = metrics.DefaultSpaceGain
	if a.SpaceMoistureGain != "" {
		if x, ok := v.quantityIn(at(p, "space_moisture_gain"), a.SpaceMoistureGain, psychro.KindHumRatio, 0, 0.005, "0-5 g/kg",
			"an office adds about 0.5-1.5 g/kg to its supply air"); ok {
			a.SpaceGainKgKg = x
		}
	}

	// Uncertainty of the assumed leaving RH.
	a.LeavingRHUFrac = metrics.DefaultLeavingRHU
	if a.LeavingRHUncertainty != "" {
		if x, ok := v.quantityIn(at(p, "leaving_rh_uncertainty"), a.LeavingRHUncertainty, psychro.KindRH, 0, 0.3, "0-30 %",
			"give the 95 % half-width of leaving_rh, e.g. 5% (2% after a commissioning measurement)"); ok {
			a.LeavingRHUFrac = x
		}
	}

	// Assumed leaving RH.
	if x, ok := v.quantityIn(at(p, "leaving_rh"), a.LeavingRH, psychro.KindRH, 0.5, 1, "50-100 %", "air leaving a wet coil is typically 90-95 %"); ok {
		a.LeavingRHFrac = x
	}

	// Humidity target: exactly one form.
	tp := at(p, "target")
	forms := 0
	// Ranges (common practice, no source): dew point targets of occupied
	// buildings lie near 10-15 °C, space humidity limits near 50-65 %.
	const dpFix = "give the dew point limit, e.g. 52F or 11C"
	if a.Target.MaxSupplyDewPoint != "" {
		forms++
		v.temperatureIn(at(tp, "max_supply_dewpoint"), a.Target.MaxSupplyDewPoint, 0, 25, dpFix)
	}
	if a.Target.MaxSpaceDewPoint != "" {
		forms++
		v.temperatureIn(at(tp, "max_space_dewpoint"), a.Target.MaxSpaceDewPoint, 0, 25, dpFix)
	}
	if a.Target.MaxSpaceRH != "" {
		forms++
		v.quantityIn(at(tp, "max_space_rh"), a.Target.MaxSpaceRH, psychro.KindRH, 0.2, 0.9, "20..90 %", "give the space humidity limit, e.g. 55%")
		_, spaceT := a.Points[string(metrics.RoleSpaceTemp)]
		if !spaceT && a.Target.SpaceTemp == "" {
			v.bad(at(tp, "space_temp"), "max_space_rh needs the space temperature", "map space_temp or set target.space_temp (e.g. 74F)")
		}
	}
	if a.Target.SpaceTemp != "" {
		v.temperatureIn(at(tp, "space_temp"), a.Target.SpaceTemp, 10, 35, "give the space temperature, e.g. 74F or 23C")
	}
	if forms != 1 {
		v.bad(tp, fmt.Sprintf("%d humidity targets given", forms), "give exactly one of max_supply_dewpoint, max_space_dewpoint or max_space_rh")
	}
}

// temperatureDelta parses a temperature difference such as 0.6K, 0.6C or
// 1F into kelvin: the offset of the scale does not apply to a difference.
func temperatureDelta(s string) (float64, bool) {
	x, u, err := psychro.ParseQuantity(s, psychro.KindTemperature, "")
	if err != nil {
		return 0, false
	}
	return u.DeltaToSI(u.FromSI(x)), true
}

// FanHeatRiseK returns the configured supply-fan temperature rise in kelvin
// (0 when none is configured).
func (a *AirHandler) FanHeatRiseK() float64 {
	d, _ := temperatureDelta(a.Fan.HeatRise)
	return d
}

func validUnit(kind psychro.Kind, name string) bool {
	_, err := psychro.LookupUnit(kind, name)
	return err == nil
}

func sameUnit(kind psychro.Kind, a, b string) bool {
	ua, e1 := psychro.LookupUnit(kind, a)
	ub, e2 := psychro.LookupUnit(kind, b)
	return e1 == nil && e2 == nil && ua.Name == ub.Name
}

// accuracy parses a sensor accuracy: a temperature difference for
// temperature kinds, a share (e.g. 3%) otherwise.
func (v *validator) accuracy(path []any, s string, temp bool, max float64) (float64, bool) {
	if s == "" {
		return 0, false
	}
	var x float64
	var ok bool
	if temp {
		x, ok = temperatureDelta(s)
		if !ok {
			v.bad(path, fmt.Sprintf("%q is not a temperature difference", s), "write it as 0.3K or 0.5F")
			return 0, false
		}
	} else {
		var err error
		x, _, err = psychro.ParseQuantity(s, psychro.KindFraction, "")
		if err != nil {
			v.bad(path, err.Error(), "write it as a percentage such as 3%")
			return 0, false
		}
	}
	if !(x > 0 && x <= max) {
		v.bad(path, fmt.Sprintf("%s is not a plausible sensor accuracy", s), "give the 95 % accuracy from the sensor's data sheet")
		return 0, false
	}
	return x, true
}

func (c *Config) validateSensors(v *validator) {
	p := []any{"sensors"}
	v.accuracy(at(p, "temperature"), c.Sensors.Temperature, true, 5)
	v.accuracy(at(p, "rh"), c.Sensors.RH, false, 0.2)
	v.accuracy(at(p, "dewpoint"), c.Sensors.DewPoint, true, 5)
	v.accuracy(at(p, "airflow"), c.Sensors.Airflow, false, 0.5)
	v.accuracy(at(p, "power"), c.Sensors.Power, false, 0.5)
}

func (c *Config) validateAlerts(v *validator) {
	p := []any{"alerts"}
	// A zero of these two is read as the key left out (RuleParams): the
	// default would apply instead of the zero written.
	if v.given(at(p, "min_avoidable_kwh")) {
		v.positive(at(p, "min_avoidable_kwh"), c.Alerts.MinAvoidableKWh, 1e6, " kWh", "give the smallest avoidable energy worth an alert, e.g. 5, or leave it out for 1")
	}
	if v.given(at(p, "min_effective_eer")) {
		v.positive(at(p, "min_effective_eer"), c.Alerts.MinEffectiveEER, 40, " Btu/Wh", "give the effective EER below which an alert opens, e.g. 6, or leave it out for 5")
	}
	v.accuracy(at(p, "overcooling"), c.Alerts.Overcooling, true, 20)
	if c.Alerts.CoilMinLeaving != "" {
		v.temperatureIn(at(p, "coil_min_leaving"), c.Alerts.CoilMinLeaving, 0, 25, "give the coldest air the coils can deliver, e.g. 50F or 10C")
	}
	v.accuracy(at(p, "min_coverage"), c.Alerts.MinCoverage, false, 1)
}

func (c *Config) validateSchedule(v *validator) {
	p := []any{"schedule"}
	if _, err := ParseCron(c.Schedule.Cron); err != nil {
		var ce *CronError
		if errors.As(err, &ce) {
			v.bad(at(p, "cron"), fmt.Sprintf("%q: %s", ce.Spec, ce.Msg), ce.Fix)
		} else {
			v.bad(at(p, "cron"), err.Error(), cronExample)
		}
	}
	if c.Schedule.Lookback < 0 || c.Schedule.Lookback > 7*24*time.Hour {
		v.bad(at(p, "lookback"), fmt.Sprintf("lookback %v must lie between 0 and 168h", c.Schedule.Lookback), "late trend data rarely arrives after a few hours; 3h is typical")
	}
	if c.Schedule.Backfill < time.Hour || c.Schedule.Backfill > 3*366*24*time.Hour {
		v.bad(at(p, "backfill"), fmt.Sprintf("backfill %v must lie between 1h and 3 years", c.Schedule.Backfill), "e.g. 168h (a week) or 720h (a month)")
	}
	if c.Schedule.Timeout < time.Minute {
		v.bad(at(p, "timeout"), fmt.Sprintf("timeout %v is too short: a run needs at least 1m", c.Schedule.Timeout), "give a run at least a few minutes, less than the time between runs, or leave it out for 45m")
	}
	if host, port, err := net.SplitHostPort(c.HTTP.Listen); err != nil || port == "" {
		v.bad([]any{"http", "listen"}, fmt.Sprintf("%q is not host:port", c.HTTP.Listen), "e.g. 127.0.0.1:9470 (loopback) or 0.0.0.0:9470 with a token")
	} else if !IsLoopback(host) && c.HTTP.TokenEnv == "" {
		v.bad([]any{"http", "listen"}, fmt.Sprintf("%q listens beyond loopback without a token", c.HTTP.Listen),
			fmt.Sprintf("set http.token_env to an environment variable holding a token of at least %d characters (e.g. from openssl rand -hex 32), or listen on 127.0.0.1", MinTokenLength))
	}
	if w := c.Webhook; w != nil {
		wp := []any{"webhook"}
		if u, err := url.Parse(w.URL); err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
			v.bad(at(wp, "url"), fmt.Sprintf("%q is not an http(s) URL", w.URL), "give the receiver's URL, e.g. https://alerts.example.org/dewline")
		}
		// A request without time, or an event too old to send as soon as
		// it is queued, means nothing: 0 is refused, not taken for the
		// key left out.
		if w.Timeout <= 0 {
			v.bad(at(wp, "timeout"), fmt.Sprintf("%v is outside 0 < x: a request needs time", w.Timeout), "give the time one post may take, e.g. 10s, or leave it out for 10s")
		}
		if w.MaxAge <= 0 {
			v.bad(at(wp, "max_age"), fmt.Sprintf("%v is outside 0 < x: every event would be too old to send", w.MaxAge), "give how long an undelivered event stays worth sending, e.g. 24h, or leave it out for 24h")
		}
		if w.UpdateEvery < 0 || w.UpdateEvery%time.Hour != 0 {
			v.bad(at(wp, "update_every"), fmt.Sprintf("%s is not a whole number of hours (0 or more)", w.UpdateEvery),
				"give the cadence of an open alert's updates in whole hours, e.g. 1h (the default) or 6h, or 0 for none")
		}
	}
}

// sameSensorAllowed: a unit without reheat often has one discharge sensor,
// which is both the coil leaving and the supply temperature.
// validateEntering checks that the air entering the coil is one state: a
// humidity measured in the mixed air, or return and outdoor air that
// dewline mixes. An RH from one place paired with a temperature from
// another is refused.
func (a *AirHandler) validateEntering(v *validator, p []any) {
	pp := at(p, "points")
	has := func(r metrics.Role) bool { _, ok := a.Points[string(r)]; return ok }
	rh, dp := has(metrics.RoleEnteringRH), has(metrics.RoleEnteringDewPoint)
	mix := has(metrics.RoleReturnTemp) && (has(metrics.RoleReturnRH) || has(metrics.RoleReturnDewPoint)) &&
		has(metrics.RoleOutdoorTemp) && has(metrics.RoleOutdoorRH)
	const mixFix = "map return_temp with return_rh (or return_dewpoint) and outdoor_temp with outdoor_rh, and dewline mixes them with the outdoor-air share from the mixed-air temperature"
	switch {
	case !rh && !dp && !mix:
		v.bad(pp, "entering humidity is not mapped", "map entering_rh or entering_dewpoint if a sensor measures the mixed air; otherwise "+mixFix)
	case !rh && !dp:
		if x := a.OutdoorAir.MinFraction; x != "" {
			if f, ok := v.quantity(at(p, "outdoor_air", "min_fraction"), x, psychro.KindFraction); ok {
				if !(f > 0 && f <= 1) {
					v.bad(at(p, "outdoor_air", "min_fraction"), fmt.Sprintf("%s is outside 0 < x <= 100 %%", x), "give the outdoor-air share at minimum position, e.g. 20%")
				} else {
					a.MinOutdoorFrac = f
				}
			}
		} else if !has(metrics.RoleOutdoorFlow) {
			v.bad(pp, "mixing return and outdoor air needs the outdoor-air share for hours when their temperatures are too close to tell it",
				"set outdoor_air.min_fraction (e.g. 20%) or map outdoor_flow")
		}
	}
	if rh {
		ref := a.Points[string(metrics.RoleEnteringRH)]
		for _, other := range []metrics.Role{metrics.RoleReturnRH, metrics.RoleSpaceRH} {
			if o, ok := a.Points[string(other)]; ok && o.Name() == ref.Name() {
				v.bad(at(pp, string(metrics.RoleEnteringRH)), fmt.Sprintf("entering_rh is the %s point %q: an RH belongs to the temperature of its own air, and the entering air is the mixed air", other, ref.Name()),
					"remove entering_rh and "+mixFix)
			}
		}
		if t, ok := a.Points[string(metrics.RoleEnteringTemp)]; ok {
			if w := placeWord(ref.Name()); w != "" && placeWord(t.Name()) != w {
				v.bad(at(pp, string(metrics.RoleEnteringRH)), fmt.Sprintf("entering_rh %q reads like a %s RH, but entering_temp %q is the mixed air: the two are not one state (in humid weather that is wrong by about a third)", ref.Name(), w, t.Name()),
					"map it as return_rh (or space_rh) instead and "+mixFix)
			}
		}
	}
}

// placeWord returns the place a point name says it measures ("return",
// "space") when it names one other than the mixed air.
func placeWord(name string) string {
	for _, f := range strings.FieldsFunc(strings.ToLower(name), func(r rune) bool {
		return (r < 'a' || r > 'z') && (r < '0' || r > '9')
	}) {
		switch f {
		case "return", "ra", "rat", "rarh", "retrh":
			return "return"
		case "space", "zone", "room", "stack":
			return "space"
		}
	}
	return ""
}

func sameSensorAllowed(a, b string) bool {
	pair := map[string]bool{a: true, b: true}
	return pair[string(metrics.RoleLeavingTemp)] && pair[string(metrics.RoleSupplyTemp)] ||
		pair[string(metrics.RoleReturnTemp)] && pair[string(metrics.RoleSpaceTemp)] ||
		pair[string(metrics.RoleReturnRH)] && pair[string(metrics.RoleSpaceRH)]
}

func (c *Config) validateExports(v *validator) {
	p := []any{"exports"}
	e := c.Exports
	oneOf := func(key, val string, allowed ...string) {
		if val == "" {
			return
		}
		for _, a := range allowed {
			if val == a {
				return
			}
		}
		v.bad(at(p, key), fmt.Sprintf("%q is not allowed", val), "use "+strings.Join(allowed, ", ")+" or leave it out to detect it")
	}
	oneOf("layout", e.Layout, "wide", "long")
	oneOf("delimiter", e.Delimiter, ",", ";", "tab", "|")
	oneOf("decimal_comma", e.DecimalComma, "yes", "no")
	oneOf("day_first", e.DayFirst, "yes", "no")
	if e.Year != 0 && (e.Year < 1900 || e.Year > 2199) {
		v.bad(at(p, "year"), fmt.Sprintf("year %d is not plausible", e.Year), "give the year the export was logged in, e.g. 2026")
	}
}

// MinTokenLength is the shortest bearer token accepted for an address
// other than loopback: 16 characters, e.g. 8 random bytes in hex (common
// practice, no source; "openssl rand -hex 32" gives 64).
const MinTokenLength = 16

// IsLoopback reports whether host names only loopback interfaces. An empty
// host or a wildcard (0.0.0.0, ::) listens on every interface; other names
// are not resolved, because what they resolve to can change.
func IsLoopback(host string) bool {
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}
