package grafana

import (
	"fmt"
	"slices"
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
// dewline's own totals do; the effective EER is that of the sums over the
// hours with a cooling input (byAHU).
func newQueries() *queries {
	x := &queries{}

	x.qMoney = q{
		influxQL: "SELECT " + sums("cost_avoidable", "cost", "reheat_avoidable_kwh") + " " + hourly + where(false, "$timeFilter"),
		table:    true,
		flux: fluxFrom(measHourly, false, "v.timeRangeStart") + fieldFilter("cost_avoidable", "cost", "reheat_avoidable_kwh") +
			"  |> group(columns: [\"_field\"])\n  |> sum()\n",
	}
	x.qByAHU = byAHU()
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

// The fields of the effective EER, 3.412 × (coil total − reheat) /
// (cooling input + reheat input).
const (
	fCoil, fReheat, fCoolingInput, fReheatInput = "coil_total_kwh", "reheat_kwh", "cooling_input_kwh", "reheat_input_kwh"
	fMissing                                    = "missing" // the fields without a value, space-separated
)

// coolingInputListed matches a missing field that names cooling_input_kwh:
// InfluxDB merges the fields of a re-written point with the old ones, so
// an hour that had a cooling input and is written again without one keeps
// the old value, and dewline's writer lists it in "missing"
// (influx.HourlyPoints), as its own reads honour.
var coolingInputListed = "/(^| )" + fCoolingInput + "( |$)/"

// byAHU sums each air handler's fields over the range and takes the
// effective EER of the sums over the hours with a cooling input only, as
// dewline's totals do (metrics.CoolingGap): an hour whose meter was silent
// with no rated fallback has no cooling_input_kwh, and its coil and reheat
// counted over the other hours' input would raise the EER. The other sums,
// and the all-hours coil and reheat input, keep every hour with a value.
//
// InfluxQL: two subqueries, one of the fields over every hour, one of the
// EER's terms over the hours with an input ("x + 0 * cooling_input_kwh" is
// empty where the input is empty, and the condition on "missing" drops an
// hour whose input is stale; it drops an hour without "missing" too, and
// dewline writes that field in every hour), summed per air handler by the
// outer query.
// Flux: the hours with an input (pivoted by time, the same two tests),
// joined with the EER's terms, summed by reduce in long form (a pivoted
// table lacks the columns of an air handler without them, and a record
// type cannot name an absent column), then put beside the other sums.
func byAHU() q {
	all := append(slices.DeleteFunc(slices.Clone(overviewFields), func(f string) bool { return f == fCoolingInput }), fCoil, fReheatInput)
	withInput := func(f string) string { return f + "_with_input" }
	ahu := "\"" + tagAHU + "\""
	// The join matches an hour of one series: its time, air handler and
	// scope tags.
	key := []string{"_time", tagAHU}
	for _, t := range scopeTags {
		key = append(key, t.Tag)
	}
	cols := func(c []string) string { return "[\"" + strings.Join(c, "\", \"") + "\"]" }

	var in []string
	for _, f := range []string{fCoil, fReheat, fReheatInput} {
		in = append(in, fmt.Sprintf("%q + 0 * %q AS %q", f, fCoolingInput, withInput(f)))
	}
	influxQL := "SELECT " + sums(slices.Concat(overviewFields, []string{fCoil, fReheatInput})...) +
		", " + eerPerCOP + " * (sum(\"" + withInput(fCoil) + "\") - sum(\"" + withInput(fReheat) + "\")) / (sum(\"" + fCoolingInput + "\") + sum(\"" + withInput(fReheatInput) + "\")) AS \"effective_eer\"" +
		" FROM (SELECT " + fields(all...) + " " + hourly + where(false, "$timeFilter") + " GROUP BY " + ahu + ")" +
		", (SELECT " + fields(fCoolingInput) + ", " + strings.Join(in, ", ") + " " + hourly +
		where(false, fmt.Sprintf("%q !~ %s AND $timeFilter", fMissing, coolingInputListed)) + " GROUP BY " + ahu + ")" +
		" WHERE $timeFilter GROUP BY " + ahu

	flux := "hours = " + fluxFrom(measHourly, false, "v.timeRangeStart") +
		"sums = hours\n" + fieldFilter(all...) +
		"  |> group(columns: [\"" + tagAHU + "\", \"_field\"])\n  |> sum()\n" +
		"withInput = hours\n" + fieldFilter(fCoolingInput, fMissing) +
		"  |> pivot(rowKey: [\"_time\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n" +
		"  |> filter(fn: (r) => exists r." + fCoolingInput + " and not (exists r." + fMissing + " and r." + fMissing + " =~ " + coolingInputListed + "))\n" +
		"  |> keep(columns: " + cols(key) + ")\n  |> group(columns: [\"" + tagAHU + "\"])\n" +
		"terms = hours\n" + fieldFilter(fCoil, fReheat, fCoolingInput, fReheatInput) +
		"  |> keep(columns: " + cols(slices.Concat(key, []string{"_field", "_value"})) + ")\n  |> group(columns: [\"" + tagAHU + "\"])\n" +
		"input = join(tables: {t: terms, h: withInput}, on: " + cols(key) + ")\n" +
		"cooling = input\n" + fieldFilter(fCoolingInput) +
		"  |> group(columns: [\"" + tagAHU + "\", \"_field\"])\n  |> sum()\n" +
		"eer = input\n" +
		"  |> reduce(identity: {coil: 0.0, reheat: 0.0, input: 0.0, coil_hours: 0, reheat_hours: 0}, fn: (r, accumulator) => ({\n" +
		"      coil: accumulator.coil + (if r._field == \"" + fCoil + "\" then r._value else 0.0),\n" +
		"      reheat: accumulator.reheat + (if r._field == \"" + fReheat + "\" then r._value else 0.0),\n" +
		"      input: accumulator.input + (if r._field == \"" + fCoolingInput + "\" or r._field == \"" + fReheatInput + "\" then r._value else 0.0),\n" +
		"      coil_hours: accumulator.coil_hours + (if r._field == \"" + fCoil + "\" then 1 else 0),\n" +
		"      reheat_hours: accumulator.reheat_hours + (if r._field == \"" + fReheat + "\" then 1 else 0)}))\n" +
		"  |> filter(fn: (r) => r.coil_hours > 0 and r.reheat_hours > 0 and r.input != 0.0)\n" +
		"  |> map(fn: (r) => ({" + tagAHU + ": r." + tagAHU + ", _field: \"effective_eer\", _value: " + eerPerCOP + " * (r.coil - r.reheat) / r.input}))\n" +
		"  |> group(columns: [\"" + tagAHU + "\", \"_field\"])\n" +
		"union(tables: [sums, cooling, eer])\n" +
		"  |> pivot(rowKey: [\"" + tagAHU + "\"], columnKey: [\"_field\"], valueColumn: \"_value\")\n" +
		"  |> group()\n  |> sort(columns: [\"cost_avoidable\"], desc: true)\n"
	return q{influxQL: influxQL, table: true, flux: flux}
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
