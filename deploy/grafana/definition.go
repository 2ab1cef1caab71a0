package grafana

import (
	"fmt"
	"strings"

	"github.com/grafana/grafana-foundation-sdk/go/cog"
	"github.com/grafana/grafana-foundation-sdk/go/cog/variants"
	"github.com/grafana/grafana-foundation-sdk/go/common"

	"github.com/dewline/dewline/psychro"
)

// Flavour is the query language of the InfluxDB data source.
type Flavour string

// The two flavours.
const (
	InfluxQL Flavour = "influxql" // InfluxDB 1.x
	Flux     Flavour = "flux"     // InfluxDB 2.x, Cloud, or 1.8 with Flux enabled
)

// Flavours lists both, in file order.
var Flavours = []Flavour{InfluxQL, Flux}

// Names dewline writes (README, "Hourly output" and "Alerts").
const (
	measHourly = "dewline_hourly"
	measAlert  = "dewline_alert"
	tagAHU     = "ahu"
	tagSite    = "site"
)

// scopeTag is a tag every query filters on through a dashboard variable
// of the same name.
type scopeTag struct{ Tag, Label string }

// scopeTags are the tags that select whose results a dashboard shows,
// besides the air handler: the site (results of several sites share one
// bucket, and air-handler ids repeat across sites). Each gives every
// dashboard a variable (its values read from dewline_hourly) and every
// query, InfluxQL and Flux, its condition.
var scopeTags = []scopeTag{{tagSite, "Site"}}

// eerPerCOP turns a ratio of energies into an EER in Btu/Wh, as dewline
// does (psychro.COPToEER).
var eerPerCOP = strconvG(psychro.BtuPerHourPerKW / 1000)

func strconvG(x float64) string { return fmt.Sprintf("%.6g", x) }

// q is one panel query in both languages.
type q struct {
	influxQL string
	table    bool // InfluxQL result format table (else time series)
	flux     string
}

func (x q) target(f Flavour, ref string) cog.Builder[variants.Dataquery] {
	b := &queryBuilder{Query{RefID: ref, Datasource: dsRef()}}
	if f == InfluxQL {
		b.q.Query, b.q.RawQuery, b.q.ResultFormat = x.influxQL, true, "time_series"
		if x.table {
			b.q.ResultFormat = "table"
		}
	} else {
		b.q.Query = x.flux
	}
	return b
}

// dsRef is the data source every panel uses: the dashboard's ds variable.
func dsRef() *common.DataSourceRef {
	t, uid := DatasourceType, "${ds}"
	return &common.DataSourceRef{Type: &t, Uid: &uid}
}

// where is an InfluxQL condition on the scope tags (and the air handler),
// ending with the time filter given.
func where(ahu bool, timeCond string) string {
	var c []string
	for _, s := range scopeTags {
		c = append(c, fmt.Sprintf(`%q =~ /^${%s:regex}$/`, s.Tag, s.Tag))
	}
	if ahu {
		c = append(c, fmt.Sprintf(`%q =~ /^${%s:regex}$/`, tagAHU, tagAHU))
	}
	return strings.Join(append(c, timeCond), " AND ")
}

// fluxFrom opens a Flux query on measurement, filtered by the scope tags
// (and the air handler) over the range start..v.timeRangeStop.
func fluxFrom(measurement string, ahu bool, start string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "from(bucket: \"${bucket}\")\n  |> range(start: %s, stop: v.timeRangeStop)\n", start)
	fmt.Fprintf(&b, "  |> filter(fn: (r) => r._measurement == %q", measurement)
	for _, s := range scopeTags {
		fmt.Fprintf(&b, " and r.%s =~ /^${%s:regex}$/", s.Tag, s.Tag)
	}
	if ahu {
		fmt.Fprintf(&b, " and r.%s =~ /^${%s:regex}$/", tagAHU, tagAHU)
	}
	b.WriteString(")\n")
	return b.String()
}

// fieldFilter is a Flux filter keeping the named fields.
func fieldFilter(fields ...string) string {
	var c []string
	for _, f := range fields {
		c = append(c, fmt.Sprintf("r._field == %q", f))
	}
	return "  |> filter(fn: (r) => " + strings.Join(c, " or ") + ")\n"
}

// sums is an InfluxQL select list of sums, each named after its field.
func sums(fields ...string) string {
	var c []string
	for _, f := range fields {
		c = append(c, fmt.Sprintf("sum(%q) AS %q", f, f))
	}
	return strings.Join(c, ", ")
}

// fields is an InfluxQL select list of raw fields.
func fields(names ...string) string {
	var c []string
	for _, f := range names {
		c = append(c, fmt.Sprintf("%q", f))
	}
	return strings.Join(c, ", ")
}

const hourly = "FROM \"" + measHourly + "\" WHERE "

// The fields of the overview's table, in column order.
var overviewFields = []string{"cost_avoidable", "cost", "reheat_avoidable_kwh", "reheat_needed_kwh", "reheat_kwh", "cooling_input_kwh", "water_removed_kg"}

// queries are the queries of every panel, built from scopeTags by newQueries.
type queries struct {
	qMoney, qByAHU, qAvoidByAHU, qDaily, qAirHandlerTotals, qEnergy, qTemps, qEERCoverage, qWater, qFlags, qAlerts, qOpen q
}

// Queries of every panel. Sums skip hours where a field has no value, as
// dewline's own totals do; the effective EER is that of the sums.
func newQueries() *queries {
	x := &queries{}

	x.qMoney = q{
		influxQL: "SELECT " + sums("cost_avoidable", "cost", "reheat_avoidable_kwh") + " " + hourly + where(false, "$timeFilter"),
		table:    true,
		flux: fluxFrom(measHourly, false, "v.timeRangeStart") + fieldFilter("cost_avoidable", "cost", "reheat_avoidable_kwh") +
			"  |> group(columns: [\"_field\"])\n  |> sum()\n",
	}
	x.qByAHU = q{
		influxQL: "SELECT " + sums(append(overviewFields, "coil_total_kwh", "reheat_input_kwh")...) +
			", " + eerPerCOP + " * (sum(\"coil_total_kwh\") - sum(\"reheat_kwh\")) / (sum(\"cooling_input_kwh\") + sum(\"reheat_input_kwh\")) AS \"effective_eer\" " +
			hourly + where(false, "$timeFilter") + " GROUP BY \"" + tagAHU + "\"",
		table: true,
		flux: fluxFrom(measHourly, false, "v.timeRangeStart") + fieldFilter(append(overviewFields, "coil_total_kwh", "reheat_input_kwh")...) +
			"  |> group(columns: [\"" + tagAHU + "\", \"_field\"])\n  |> sum()\n" +
			"  |> pivot(rowKey: [\"" + tagAHU + "\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n" +
			"  |> map(fn: (r) => ({r with effective_eer: " + eerPerCOP + " * (r.coil_total_kwh - r.reheat_kwh) / (r.cooling_input_kwh + r.reheat_input_kwh)}))\n" +
			"  |> group()\n  |> sort(columns: [\"cost_avoidable\"], desc: true)\n",
	}
	x.qAvoidByAHU = q{
		influxQL: "SELECT sum(\"cost_avoidable\") AS \"cost_avoidable\" " + hourly + where(false, "$timeFilter") + " GROUP BY \"" + tagAHU + "\"",
		flux: fluxFrom(measHourly, false, "v.timeRangeStart") + fieldFilter("cost_avoidable") +
			"  |> group(columns: [\"" + tagAHU + "\"])\n  |> sum()\n",
	}
	x.qDaily = q{
		influxQL: "SELECT sum(\"cost_avoidable\") AS \"cost_avoidable\" " + hourly + where(false, "$timeFilter") + " GROUP BY time(1d), \"" + tagAHU + "\" fill(none)",
		flux: fluxFrom(measHourly, false, "v.timeRangeStart") + fieldFilter("cost_avoidable") +
			"  |> aggregateWindow(every: 1d, fn: sum, createEmpty: false, timeSrc: \"_start\")\n",
	}
	x.qAirHandlerTotals = q{
		influxQL: "SELECT " + sums("cost_avoidable", "reheat_avoidable_kwh", "reheat_kwh", "water_removed_kg") + " " + hourly + where(true, "$timeFilter"),
		table:    true,
		flux: fluxFrom(measHourly, true, "v.timeRangeStart") + fieldFilter("cost_avoidable", "reheat_avoidable_kwh", "reheat_kwh", "water_removed_kg") +
			"  |> group(columns: [\"_field\"])\n  |> sum()\n",
	}
	x.qEnergy = rawFields("cooling_input_kwh", "reheat_needed_kwh", "reheat_avoidable_kwh")
	x.qTemps = rawFields("leaving_temp_c", "required_leaving_temp_c", "supply_temp_c", "entering_dewpoint_c")
	x.qEERCoverage = rawFields("effective_eer", "coverage")
	x.qWater = q{
		influxQL: "SELECT \"water_removed_kg\", \"water_removed_kg\" - \"water_removed_kg_u95\" AS \"water_removed_kg_low\", \"water_removed_kg\" + \"water_removed_kg_u95\" AS \"water_removed_kg_high\" " +
			hourly + where(true, "$timeFilter"),
		flux: fluxFrom(measHourly, true, "v.timeRangeStart") + fieldFilter("water_removed_kg", "water_removed_kg_u95") +
			"  |> pivot(rowKey: [\"_time\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n" +
			"  |> map(fn: (r) => ({_time: r._time, water_removed_kg: r.water_removed_kg, water_removed_kg_low: r.water_removed_kg - r.water_removed_kg_u95, water_removed_kg_high: r.water_removed_kg + r.water_removed_kg_u95}))\n",
	}
	x.qFlags = q{
		influxQL: "SELECT \"flags\" " + hourly + where(true, "\"flags\" != '' AND $timeFilter"),
		table:    true,
		flux: fluxFrom(measHourly, true, "v.timeRangeStart") + fieldFilter("flags") +
			"  |> filter(fn: (r) => r._value != \"\")\n  |> keep(columns: [\"_time\", \"_value\"])\n  |> rename(columns: {_value: \"flags\"})\n",
	}
	// Alerts: each transition (opened, closed) is a point carrying the
	// alert's id, money, reason, start and end; an alert's latest
	// transition is its state. InfluxQL cannot group by a string field, so
	// its table lists the transitions in the range; Flux groups them by id
	// and lists, like dewline's alert page, every alert whose start..end
	// overlaps the range, at its latest state.
	x.qAlerts = q{
		influxQL: "SELECT \"" + tagAHU + "\", \"kind\", \"severity\", \"status\", \"id\", \"money\", \"energy_kwh\", \"start\", \"end\", \"reason\" FROM \"" + measAlert + "\" WHERE " + where(true, "$timeFilter"),
		table:    true,
		flux: strings.Replace(fluxFrom(measAlert, true, "1970-01-01T00:00:00Z"), "stop: v.timeRangeStop", "stop: now()", 1) +
			"  |> pivot(rowKey: [\"_time\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n" +
			"  |> group(columns: [\"id\"])\n  |> sort(columns: [\"_time\"])\n  |> tail(n: 1)\n" +
			"  |> filter(fn: (r) => time(v: r.start) < v.timeRangeStop and (r.status == \"open\" or (if r.end == \"\" then r._time else time(v: r.end)) > v.timeRangeStart))\n" +
			"  |> group()\n" +
			"  |> keep(columns: [\"_time\", \"" + tagAHU + "\", \"kind\", \"severity\", \"status\", \"id\", \"money\", \"energy_kwh\", \"start\", \"end\", \"reason\"])\n" +
			"  |> sort(columns: [\"money\"], desc: true)\n",
	}
	// Open now: the latest transition of each air handler's alert kind
	// (a kind has one alert open at a time), where it is open.
	x.qOpen = q{
		influxQL: "SELECT last(\"open\") AS \"open\", last(\"id\") AS \"id\", last(\"money\") AS \"money\", last(\"start\") AS \"start\", last(\"reason\") AS \"reason\" FROM \"" + measAlert + "\" WHERE " +
			strings.TrimSuffix(where(true, ""), " AND ") + " GROUP BY \"" + tagAHU + "\", \"kind\", \"severity\"",
		table: true,
		flux: strings.Replace(fluxFrom(measAlert, true, "1970-01-01T00:00:00Z"), "stop: v.timeRangeStop", "stop: now()", 1) +
			"  |> pivot(rowKey: [\"_time\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n" +
			"  |> group(columns: [\"" + tagAHU + "\", \"kind\"])\n  |> sort(columns: [\"_time\"])\n  |> tail(n: 1)\n" +
			"  |> filter(fn: (r) => r.open == 1.0)\n  |> group()\n" +
			"  |> keep(columns: [\"" + tagAHU + "\", \"kind\", \"severity\", \"id\", \"money\", \"start\", \"reason\"])\n",
	}
	return x
}

// rawFields reads fields of one air handler hour by hour.
func rawFields(names ...string) q {
	return q{
		influxQL: "SELECT " + fields(names...) + " " + hourly + where(true, "$timeFilter"),
		flux:     fluxFrom(measHourly, true, "v.timeRangeStart") + fieldFilter(names...),
	}
}

// ahuValues lists the air handlers with results, for the ahu variable.
func ahuValues(f Flavour) string {
	if f == InfluxQL {
		w := ""
		if len(scopeTags) > 0 {
			w = " WHERE " + strings.TrimSuffix(where(false, ""), " AND ")
		}
		return "SHOW TAG VALUES FROM \"" + measHourly + "\" WITH KEY = \"" + tagAHU + "\"" + w
	}
	pred := "r._measurement == \"" + measHourly + "\""
	for _, s := range scopeTags {
		pred += fmt.Sprintf(" and r.%s =~ /^${%s:regex}$/", s.Tag, s.Tag)
	}
	return "import \"influxdata/influxdb/v1\"\nv1.tagValues(bucket: \"${bucket}\", tag: \"" + tagAHU + "\", predicate: (r) => " + pred + ", start: -5y)\n"
}

// scopeValues lists the values of a scope tag, for its variable.
func scopeValues(f Flavour, tag string) string {
	if f == InfluxQL {
		return "SHOW TAG VALUES FROM \"" + measHourly + "\" WITH KEY = \"" + tag + "\""
	}
	return "import \"influxdata/influxdb/v1\"\nv1.tagValues(bucket: \"${bucket}\", tag: \"" + tag + "\", predicate: (r) => r._measurement == \"" + measHourly + "\", start: -5y)\n"
}
