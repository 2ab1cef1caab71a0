package draft

import (
	"bufio"
	"fmt"
	"io"
	"sort"
	"strings"
	"unicode"

	"github.com/dewline/dewline/ingest/outfile"
	"github.com/dewline/dewline/metrics"
)

// Site is what the written configuration says outside the air handlers.
type Site struct {
	Name     string
	TimeZone string // IANA zone
	Altitude string // with its unit; "" writes 0 marked as assumed
	Sources  []string

	// Store: embedded (Path) or InfluxDB (URL, Bucket, Org, TokenEnv).
	InfluxURL, InfluxBucket, InfluxOrg, InfluxTokenEnv string
	StorePath                                          string

	// Exports settings the CSV reader needed (written when set).
	DayFirst, DecimalComma string // "yes" or "no"
	Year                   int
}

// Write writes the proposal as a configuration file in dewline's own
// format. Complete air handlers are written as configuration; those
// missing a required role are written commented out, with what to look
// for, so that "dewline check" accepts the file as it is once any air
// handler is complete. Points no role took are listed at the end.
func (p *Proposal) Write(w io.Writer, site Site) error {
	b := &strings.Builder{}
	line := func(format string, a ...any) { fmt.Fprintf(b, format+"\n", a...) }
	line("# dewline configuration drafted by \"dewline draft\" from:")
	for _, s := range site.Sources {
		line("#   %s", oneLine(s))
	}
	line("#")
	line("# Every point mapping has a comment above it: its confidence (high, medium,")
	line("# or LOW for a guess to check), the evidence it rests on, its unit and how it")
	line("# is logged. Lines marked ASSUMED are equipment facts that trend names cannot")
	line("# tell: confirm each (nameplate, drawings, tariff) before trusting figures.")
	line("# Air handlers missing a required role are commented out with what to look")
	line("# for; points no role took are listed at the end with the reason.")
	line("#")
	line("# Check it with:  dewline check --config FILE [--input EXPORT ...]")
	line("#")
	line("# Caution: the figures are estimates from building sensors. Raising coil")
	line("# leaving temperatures or cutting reheat can let space humidity rise, with")
	line("# mould and comfort consequences; have changes to a control sequence reviewed")
	line("# by the engineer of record and follow local codes and licensed practice.")
	line("version: 1")
	line("")
	line("site:")
	line("  name: %s", quote(orDefault(site.Name, "Drafted site")))
	tz := orDefault(site.TimeZone, "UTC")
	if site.TimeZone == "" {
		line("  timezone: UTC                  # ASSUMED: set the site's IANA zone, e.g. America/Chicago")
	} else {
		line("  timezone: %s", quote(tz))
	}
	switch {
	case site.Altitude != "":
		line("  altitude: %s", quote(site.Altitude))
	case p.IP:
		line("  altitude: 0ft                  # ASSUMED: set the site's elevation (or pressure: 29.9inHg)")
	default:
		line("  altitude: 0m                   # ASSUMED: set the site's elevation (or pressure: 101.3kPa)")
	}
	line(ipOrSI(p.IP, "  units: ip                      # most temperatures are logged in °F", "  units: si"))
	line("")
	line("store:")
	if site.InfluxURL != "" {
		line("  kind: influxdb")
		line("  influxdb:")
		line("    url: %s", quote(site.InfluxURL))
		if site.InfluxOrg != "" {
			line("    org: %s", quote(site.InfluxOrg))
		}
		line("    bucket: %s", quote(site.InfluxBucket))
		if site.InfluxTokenEnv != "" {
			line("    token_env: %s", site.InfluxTokenEnv)
		}
	} else {
		line("  kind: embedded")
		line("  path: %s", quote(orDefault(site.StorePath, "dewline.db")))
	}
	line("")
	line("prices:")
	line("  currency: USD")
	line("  electricity_per_kwh: 0.12        # ASSUMED: your electricity tariff, per kWh")
	line("  fuel_per_kwh: 0.035              # ASSUMED: your fuel price, per kWh of fuel (hot-water reheat)")
	if site.DayFirst != "" || site.DecimalComma != "" || site.Year != 0 {
		line("")
		line("exports:                         # as the exports were read")
		if site.DayFirst != "" {
			line("  day_first: %q", site.DayFirst)
		}
		if site.DecimalComma != "" {
			line("  decimal_comma: %q", site.DecimalComma)
		}
		if site.Year != 0 {
			line("  year: %d", site.Year)
		}
	}
	line("")
	complete := 0
	for _, a := range p.AirHandlers {
		if a.Complete() {
			complete++
		}
	}
	if complete == 0 {
		line("# No air handler has every required role yet: complete one below and")
		line("# uncomment it (\"dewline check\" needs at least one).")
		line("air_handlers: []")
	} else {
		line("air_handlers:")
	}
	for _, a := range p.AirHandlers {
		if a.Complete() {
			p.writeAHU(b, a, "")
		}
	}
	for _, a := range p.AirHandlers {
		if a.Complete() {
			continue
		}
		line("")
		line("# %s is incomplete and left out until its missing roles are mapped:", a.ID)
		for _, m := range a.Missing {
			line("#   missing %s: look for %s", m.Role, m.LookFor)
		}
		p.writeAHU(b, a, "# ")
	}
	if len(p.Unassigned) > 0 {
		line("")
		line("# Points no role took (%d):", len(p.Unassigned))
		for _, u := range p.Unassigned {
			who := ""
			if u.AHU != "" {
				who = " [" + u.AHU + "]"
			}
			line("#   %s%s: %s", oneLine(u.Point.Ref.Name()), who, oneLine(u.Note))
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func (p *Proposal) writeAHU(b *strings.Builder, a *AirHandler, pre string) {
	line := func(format string, args ...any) { fmt.Fprintf(b, pre+format+"\n", args...) }
	line("  - id: %s", quote(a.ID))
	f := a.facts
	cool := a.Mapping(metrics.RoleCoolingPower) != nil
	line("    cooling:")
	switch {
	case f&fChw != 0:
		line("      kind: chilled_water          # a chilled-water point was found")
		if !cool {
			line("      plant_kw_per_ton: 0.85       # ASSUMED: the chiller plant's kW per ton (typically 0.6-1.2)")
		}
	case cool:
		line("      kind: dx                     # a metered compressor or cooling kW was found; ASSUMED DX")
	default:
		line("      kind: dx                     # ASSUMED: no chilled-water point was found")
		line("      rated_eer: 10                # ASSUMED: the nameplate EER in Btu/Wh; or map cooling_kw")
	}
	line("    reheat:")
	switch {
	case f&fHotGas != 0:
		line("      kind: recovered              # a hot-gas or recovered-heat reheat point was found")
	case a.Mapping(metrics.RoleReheatPower) != nil:
		line("      kind: electric               # a reheat kW point was found")
	case f&fHotWat != 0:
		line("      kind: hot_water              # a hot-water point was found")
		line("      boiler_efficiency: 0.8       # ASSUMED: the boiler's fuel-to-heat efficiency")
	case a.sameLvSu:
		line("      kind: none                   # one sensor serves as coil leaving and supply temperature")
	default:
		line("      kind: electric               # ASSUMED: no point says how the air is reheated (electric, hot_water, recovered or none)")
	}
	line("    airflow:")
	line("      basis: standard              # ASSUMED: most airflow stations report standard air; else actual")
	line("    fan:")
	if a.Mapping(metrics.RoleFanPower) != nil {
		line("      position: draw_through       # ASSUMED: the fan sits between coil and supply sensor; its heat comes from fan_kw")
	} else if a.sameLvSu {
		line("      position: none               # one sensor after the fan serves as leaving and supply")
	} else {
		line("      position: draw_through       # ASSUMED: the fan sits between coil and supply sensor")
		line(ipOrSI(p.IP, "      heat_rise: 1F                # ASSUMED: the fan's temperature rise (typically 0.5-1.5F)",
			"      heat_rise: 0.6K              # ASSUMED: the fan's temperature rise (typically 0.3-0.8K)"))
	}
	line("    target:")
	line(ipOrSI(p.IP, "      max_space_dewpoint: 55F      # ASSUMED: a common comfort limit (common practice, no source); set the owner's",
		"      max_space_dewpoint: 13C      # ASSUMED: a common comfort limit (common practice, no source); set the owner's"))
	if a.Mixes() && a.Mapping(metrics.RoleOutdoorFlow) == nil {
		line("    outdoor_air:                   # the entering air is return and outdoor air mixed (no mixed-air humidity sensor)")
		line("      min_fraction: 20%%           # ASSUMED: the outdoor-air share at minimum position, used when outdoor and return temperatures are too close to tell it")
	}
	line("    points:")
	for _, m := range a.Mappings {
		conf := m.Conf.String()
		if m.Conf == Low {
			conf = "LOW, CHECK"
		}
		line("      # %s: %s", conf, oneLine(strings.Join(m.Evidence, "; ")))
		line("      %s %s", padRole(string(m.Role)+":"), flowRef(m.Point.Ref, m.Unit))
	}
}

func padRole(s string) string {
	const w = 19
	if len(s) >= w {
		return s
	}
	return s + strings.Repeat(" ", w-len(s))
}

// flowRef writes a point reference as a YAML flow mapping.
func flowRef(r metrics.PointRef, unit string) string {
	var parts []string
	if r.Column != "" {
		parts = append(parts, "column: "+quote(r.Column))
	}
	if r.Point != "" {
		parts = append(parts, "point: "+quote(r.Point))
	}
	if r.Measurement != "" {
		parts = append(parts, "measurement: "+quote(r.Measurement), "field: "+quote(r.Field))
		if len(r.Tags) > 0 {
			keys := make([]string, 0, len(r.Tags))
			for k := range r.Tags {
				keys = append(keys, k)
			}
			sort.Strings(keys)
			var kv []string
			for _, k := range keys {
				kv = append(kv, quote(k)+": "+quote(r.Tags[k]))
			}
			parts = append(parts, "tags: {"+strings.Join(kv, ", ")+"}")
		}
	}
	parts = append(parts, "unit: "+quote(unit))
	return "{" + strings.Join(parts, ", ") + "}"
}

// quote writes s as a YAML double-quoted scalar.
func quote(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch {
		case r == '"' || r == '\\':
			b.WriteByte('\\')
			b.WriteRune(r)
		case r == '\n':
			b.WriteString(`\n`)
		case r == '\t':
			b.WriteString(`\t`)
		case r < 0x20 || r == 0x7f || !unicode.IsPrint(r) && r != ' ':
			fmt.Fprintf(&b, `\u%04X`, r)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('"')
	return b.String()
}

// oneLine keeps a comment on one line.
func oneLine(s string) string {
	return strings.Map(func(r rune) rune {
		if r == '\n' || r == '\r' || unicode.IsControl(r) {
			return ' '
		}
		return r
	}, s)
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

// WriteFile writes the configuration (Write) to the file at path, or to w
// when path is empty.
func (p *Proposal) WriteFile(path string, w io.Writer, site Site) error {
	if path == "" {
		if err := p.Write(w, site); err != nil {
			return fmt.Errorf("write the draft: %w", err)
		}
		return nil
	}
	// Whole or not at all: an interrupted draft leaves what was there.
	_, err := outfile.Write(path, func(bw *bufio.Writer) error { return p.Write(bw, site) })
	if err != nil {
		return fmt.Errorf("write the draft: %w", err)
	}
	return nil
}

// ipOrSI is the draft's line for a site in IP units (ip true) or in SI.
func ipOrSI(ip bool, ipLine, siLine string) string {
	if ip {
		return ipLine
	}
	return siLine
}
