package demo

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest/outfile"
)

// Invented prices and emission factors of the scenario (USD).
const (
	priceElectricity = 0.124 // per kWh
	priceFuel        = 0.033 // per kWh of natural gas (about 0.97 USD/therm)
	co2Electricity   = 0.41  // kg/kWh
	co2Fuel          = 0.181 // kg/kWh of natural gas
)

// writeConfig writes the configuration that reads the scenario's exports.
func writeConfig(path string, g *generator, sc *Scenario) error {
	var b strings.Builder
	p := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }
	local := func(t time.Time) string { return t.In(g.loc).Format("Mon 2 Jan 15:04 MST") }
	p("# dewline configuration for the demo scenario (seed %d, %d days from %s).\n",
		sc.Seed, sc.Days, sc.From.In(g.loc).Format("2006-01-02"))
	p("#\n")
	p("# INVENTED: %s, in the town of Port Ardent\n", SiteName)
	p("# on a humid, Gulf-coast-like shore, is not a real building; every reading\n")
	p("# in the trend exports beside this file is synthetic, and so are the prices.\n")
	p("#\n")
	p("# Put in on purpose:\n")
	p("#   %s's space RH sensor (%q) sticks from %s to %s;\n", sc.Stuck.AirHandler, sc.Stuck.Point, local(sc.Stuck.From), local(sc.Stuck.To))
	p("#   %s's controller logs nothing from %s to %s;\n", sc.Gap.AirHandler, local(sc.Gap.From), local(sc.Gap.To))
	if !sc.FallBack.IsZero() {
		before, after := sc.FallBack.Add(-time.Second).In(g.loc), sc.FallBack.In(g.loc)
		bz, _ := before.Zone()
		p("#   the clocks go back from %02d:00 %s to %s on %s: the wall times\n", before.Hour()+1, bz,
			after.Format("15:04 MST"), after.Format("Mon 2 Jan"))
		p("#   %s-%s appear twice in the exports.\n", after.Format("15:04"), after.Add(time.Hour-time.Minute).Format("15:04"))
	}
	p("#\n")
	p("# Analyse the exports, from this folder, with:\n")
	p("#   dewline analyze --config %s", ConfigFile)
	for _, e := range sc.Exports {
		p(" \\\n#     --input %s", baseName(e))
	}
	p("\n\n")
	p("version: 1\n\n")
	p("site:\n")
	p("  name: %s\n", q(SiteName))
	p("  timezone: %s\n", ZoneName)
	p("  altitude: %s\n", q(strconv.FormatFloat(siteAltitudeFt, 'f', -1, 64)+"ft"))
	p("  units: ip\n\n")
	p("store:\n  kind: embedded\n  path: %s\n\n", q(StoreFile))
	p("grid:\n  step: 1m\n\n")
	p("prices:\n  currency: USD\n")
	p("  electricity_per_kwh: %g\n  fuel_per_kwh: %g\n", priceElectricity, priceFuel)
	p("  electricity_co2_kg_per_kwh: %g\n  fuel_co2_kg_per_kwh: %g\n\n", co2Electricity, co2Fuel)
	p("sensors:                 # 95 %% accuracies of the site's sensors\n")
	p("  temperature: 0.5F\n  rh: \"3%%\"\n  dewpoint: 0.9F\n  airflow: \"8%%\"\n  power: \"2%%\"\n\n")
	p("alerts:\n  coil_min_leaving: 48F  # the coldest these coils reach\n\n")
	p("exports:\n  day_first: \"no\"        # the rooftop unit's export writes dates month first (10/27/2026)\n\n")
	p("air_handlers:\n")
	for k := range g.airHandlers {
		d := &g.airHandlers[k]
		c := d.cfg
		p("  - id: %s\n", d.ID)
		p("    name: %s\n", q(d.Name))
		p("    # %s\n", d.Behaviour)
		p("    cooling:\n      kind: %s\n", d.Cooling)
		if c.ratedEER > 0 {
			p("      rated_eer: %g\n      eer_per_kelvin: %g\n", c.ratedEER, c.eerPerK)
		}
		if c.plantKWPerTon > 0 {
			p("      plant_kw_per_ton: %g\n", c.plantKWPerTon)
		}
		p("    reheat:\n      kind: %s\n", d.Reheat)
		if c.boilerEff > 0 {
			p("      boiler_efficiency: %g\n", c.boilerEff)
		}
		p("    airflow:\n      basis: %s\n", c.basis)
		p("    fan:\n      position: %s\n", c.fan)
		if c.heatRise != "" {
			p("      heat_rise: %s\n", c.heatRise)
		}
		if c.spaceGain != "" {
			p("    space_moisture_gain: %s   # a lab at 100 %% outdoor air: many air changes carry its moisture away\n", c.spaceGain)
		}
		p("    target:\n      %s: %s\n", c.target[0], q(c.target[1]))
		p("    points:\n")
		key := "point"
		if d.wide {
			key = "column"
		}
		for _, pt := range d.points {
			if pt.role == "" {
				continue
			}
			p("      %-18s {%s: %s, unit: %s}\n", pt.role+":", key, q(pt.name), q(pt.cfgUnit))
		}
		for _, role := range outdoorRoles[d.ID] {
			for _, pt := range weatherPoints {
				if pt.role == role {
					p("      %-18s {point: %s, unit: %s}\n", role+":", q(pt.name), q(pt.cfgUnit))
				}
			}
		}
	}
	if err := outfile.WriteBytes(path, []byte(b.String())); err != nil {
		return fmt.Errorf("demo: write configuration: %w", err)
	}
	return nil
}

// q quotes a YAML string.
func q(s string) string {
	return `"` + strings.NewReplacer(`\`, `\\`, `"`, `\"`).Replace(s) + `"`
}

func baseName(path string) string {
	if i := strings.LastIndexAny(path, `/\`); i >= 0 {
		return path[i+1:]
	}
	return path
}
