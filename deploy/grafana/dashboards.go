//lint:file-ignore SA1019 the v1 dashboard model (dashboard.Dashboard) is the JSON that Grafana's file provisioning loads in every release in use; the v2 model the SDK prefers needs Grafana 12's new dashboard API.

package grafana

import (
	"bytes"
	"encoding/json"
	"fmt"
	"path"
	"strings"

	"github.com/grafana/grafana-foundation-sdk/go/bargauge"
	"github.com/grafana/grafana-foundation-sdk/go/cog"
	"github.com/grafana/grafana-foundation-sdk/go/common"
	"github.com/grafana/grafana-foundation-sdk/go/dashboard"
	"github.com/grafana/grafana-foundation-sdk/go/stat"
	"github.com/grafana/grafana-foundation-sdk/go/table"
	"github.com/grafana/grafana-foundation-sdk/go/timeseries"
)

// DatasourceUID is the uid the provisioning file gives each flavour's data
// source; the dashboards' ds variable starts on it.
func DatasourceUID(f Flavour) string { return "dewline-" + string(f) }

// Dashboard names, used in uids and file names.
const (
	Overview   = "overview"
	AirHandler = "unit"
	Alerts     = "alerts"
)

// Names lists the dashboards in file order.
var Names = []string{Overview, AirHandler, Alerts}

// UID is a dashboard's uid.
func UID(name string, f Flavour) string { return "dewline-" + name + "-" + string(f) }

// Build builds one dashboard in one flavour.
func Build(name string, f Flavour) (dashboard.Dashboard, error) {
	qs := newQueries()
	lang := map[Flavour]string{InfluxQL: "InfluxQL", Flux: "Flux"}[f]
	var d *dashboard.DashboardBuilder
	switch name {
	case Overview:
		d = dashboard.NewDashboardBuilder("dewline: air handlers by money at stake (" + lang + ")").
			Description("Avoidable cost, reheat and effective EER per air handler over the time range, from the hourly results dewline writes to InfluxDB.")
		d.WithPanel(statPanel("Money at stake", "Avoidable cost, cost, and avoidable reheat (kWh) of every air handler over the range, in the site's currency.", qs.qMoney, f).Span(24).Height(5))
		d.WithPanel(tablePanel("Air handlers by money at stake", "Sums over the range; effective EER = 3.412 × (coil total − reheat) / (cooling input + reheat input), of the sums over the hours with a cooling input. An air handler's name opens its hours.", qs.qByAHU, f).
			SortBy([]cog.Builder[common.TableSortByFieldState]{common.NewTableSortByFieldStateBuilder().DisplayName("cost_avoidable").Desc(true)}).
			OverrideByName(tagAHU, []dashboard.DynamicConfigValue{{Id: "links", Value: []map[string]any{{
				"title": "Hours of ${__value.text}",
				"url":   airHandlerLink(f),
			}}}}).
			Span(24).Height(9))
		d.WithPanel(bargauge.NewPanelBuilder().Title("Avoidable cost by air handler").
			Description("The money each air handler's avoidable reheat and cooling cost over the range.").
			Datasource(*dsRef()).WithTarget(qs.qAvoidByAHU.target(f, "A")).
			Orientation(common.VizOrientationHorizontal).DisplayMode(common.BarGaugeDisplayModeGradient).
			ReduceOptions(common.NewReduceDataOptionsBuilder().Calcs([]string{"sum"})).
			Span(12).Height(9))
		d.WithPanel(timeseries.NewPanelBuilder().Title("Avoidable cost per day").
			Description("Per air handler and UTC day.").
			Datasource(*dsRef()).WithTarget(qs.qDaily.target(f, "A")).
			DrawStyle(common.GraphDrawStyleBars).FillOpacity(60).
			Stacking(common.NewStackingConfigBuilder().Mode(common.StackingModeNormal)).
			Span(12).Height(9))
	case AirHandler:
		d = dashboard.NewDashboardBuilder("dewline: one air handler's hours (" + lang + ")").
			Description("One air handler hour by hour: energy, coil leaving against required temperature, water removed with its 95 % band, effective EER, data-quality flags.")
		d.WithPanel(statPanel("Totals over the range", "Avoidable cost, avoidable reheat (kWh), reheat (kWh) and water removed (kg).", qs.qAirHandlerTotals, f).Span(24).Height(5))
		d.WithPanel(seriesPanel("Energy per hour", "Cooling input, reheat the humidity target needed and reheat it did not need (kWh per hour).", qs.qEnergy, f).
			Unit("kwatth").Stacking(common.NewStackingConfigBuilder().Mode(common.StackingModeNormal)).FillOpacity(40).Span(24).Height(9))
		d.WithPanel(seriesPanel("Coil leaving against required", "Coil leaving temperature, the leaving temperature the humidity target required, supply temperature and entering dew point (°C).", qs.qTemps, f).
			Unit("celsius").Span(12).Height(9))
		d.WithPanel(seriesPanel("Water removed, with its 95 % band", "kg per hour; the band is the 95 % half-width of sensor calibration bias.", qs.qWater, f).
			Unit("masskg").Span(12).Height(9))
		d.WithPanel(seriesPanel("Effective EER and coverage", "Effective EER (Btu/Wh) and the share of the hour with every required reading (0..1).", qs.qEERCoverage, f).
			Span(12).Height(8))
		d.WithPanel(tablePanel("Hours with data-quality flags", "Flags such as low_coverage, flat:<role> or coil_adds_moisture; see the README's hourly output.", qs.qFlags, f).
			Span(12).Height(8))
	case Alerts:
		d = dashboard.NewDashboardBuilder("dewline: alerts (" + lang + ")").
			Description("Alerts dewline raised, with the money at stake and the reason; and those open at the end of the range.")
		title := "Alerts in the range"
		if f == InfluxQL {
			title = "Alert transitions in the range"
		}
		d.WithPanel(tablePanel(title, alertsDescription(f), qs.qAlerts, f).
			SortBy([]cog.Builder[common.TableSortByFieldState]{common.NewTableSortByFieldStateBuilder().DisplayName("money").Desc(true)}).
			Span(24).Height(12))
		d.WithPanel(tablePanel("Open now", "The alerts open now (each air handler's alert kinds at their latest transition), whatever the range.", qs.qOpen, f).
			WithTransformation(dashboard.DataTransformerConfig{Id: "filterByValue", Options: map[string]any{
				"type": "include", "match": "any",
				"filters": []any{map[string]any{"fieldName": "open", "config": map[string]any{"id": "equal", "options": map[string]any{"value": 1}}}},
			}}).Span(24).Height(8))
	default:
		return dashboard.Dashboard{}, fmt.Errorf("unknown dashboard %q", name)
	}
	d.Uid(UID(name, f)).Tags([]string{"dewline"}).Time("now-7d", "now").Refresh("1h").Editable().
		Link(dashboard.NewDashboardLinkBuilder("dewline").Type(dashboard.DashboardLinkTypeDashboards).Tags([]string{"dewline"}).
			AsDropdown(true).IncludeVars(true).KeepTime(true))
	for _, v := range variables(name, f) {
		d.WithVariable(v)
	}
	return d.Build()
}

// airHandlerLink opens the unit dashboard of the flavour on the air handler of
// the clicked cell, keeping the time range and the data source.
func airHandlerLink(f Flavour) string {
	u := "/d/" + UID(AirHandler, f) + "?var-" + tagAHU + "=${__value.raw}&var-ds=${ds}&${__url_time_range}"
	if f == Flux {
		u += "&var-bucket=${bucket}"
	}
	for _, s := range scopeTags {
		u += "&var-" + s.Tag + "=${" + s.Tag + "}"
	}
	return u
}

func alertsDescription(f Flavour) string {
	if f == InfluxQL {
		return "Each transition (opened, closed) of an alert in the range, with the energy and money at stake then and the reason."
	}
	return "Each alert that overlaps the range (as dewline's own alert page), at its latest state, with the energy and money at stake and the reason."
}

func variables(name string, f Flavour) []cog.Builder[dashboard.VariableModel] {
	uid := DatasourceUID(f)
	sel := true
	vs := []cog.Builder[dashboard.VariableModel]{
		dashboard.NewDatasourceVariableBuilder("ds").Label("Data source").Type(DatasourceType).
			Current(dashboard.VariableOption{Selected: &sel, Text: dashboard.StringOrArrayOfString{String: &uid}, Value: dashboard.StringOrArrayOfString{String: &uid}}),
	}
	if f == Flux {
		def := "dewline/autogen"
		vs = append(vs, dashboard.NewTextBoxVariableBuilder("bucket").Label("Bucket").
			Description("The bucket dewline writes its results to (2.x), or database/retention_policy (1.8).").
			DefaultValue(dashboard.StringOrMap{String: &def}).
			Current(dashboard.VariableOption{Text: dashboard.StringOrArrayOfString{String: &def}, Value: dashboard.StringOrArrayOfString{String: &def}}))
	}
	for _, s := range scopeTags {
		query := scopeValues(f, s.Tag)
		vs = append(vs, dashboard.NewQueryVariableBuilder(s.Tag).Label(s.Label).Datasource(*dsRef()).
			Query(dashboard.StringOrMap{String: &query}).Definition(query).
			Refresh(dashboard.VariableRefreshOnTimeRangeChanged).Sort(dashboard.VariableSortAlphabeticalAsc))
	}
	if name == Overview {
		return vs
	}
	query := ahuValues(f)
	ahu := dashboard.NewQueryVariableBuilder(tagAHU).Label("Air handler").Datasource(*dsRef()).
		Query(dashboard.StringOrMap{String: &query}).Definition(query).
		Refresh(dashboard.VariableRefreshOnTimeRangeChanged).Sort(dashboard.VariableSortAlphabeticalAsc)
	if name == Alerts {
		ahu.Multi(true).IncludeAll(true)
	}
	return append(vs, ahu)
}

func statPanel(title, desc string, x q, f Flavour) *stat.PanelBuilder {
	return stat.NewPanelBuilder().Title(title).Description(desc).Datasource(*dsRef()).WithTarget(x.target(f, "A")).
		GraphMode(common.BigValueGraphModeNone).ReduceOptions(common.NewReduceDataOptionsBuilder().Calcs([]string{"lastNotNull"}).Fields("/.*/")).
		Decimals(0)
}

func tablePanel(title, desc string, x q, f Flavour) *table.PanelBuilder {
	return table.NewPanelBuilder().Title(title).Description(desc).Datasource(*dsRef()).WithTarget(x.target(f, "A"))
}

func seriesPanel(title, desc string, x q, f Flavour) *timeseries.PanelBuilder {
	return timeseries.NewPanelBuilder().Title(title).Description(desc).Datasource(*dsRef()).WithTarget(x.target(f, "A"))
}

var htmlUnescaper = strings.NewReplacer(`\u003c`, "<", `\u003e`, ">", `\u0026`, "&")

// Files renders every dashboard: the path under deploy/grafana and its JSON.
func Files() (map[string][]byte, error) {
	out := map[string][]byte{}
	for _, f := range Flavours {
		for _, n := range Names {
			d, err := Build(n, f)
			if err != nil {
				return nil, fmt.Errorf("build %s (%s): %w", n, f, err)
			}
			b, err := json.MarshalIndent(d, "", "  ")
			if err != nil {
				return nil, fmt.Errorf("encode %s (%s): %w", n, f, err)
			}
			b = append(b, '\n')
			if bytes.Contains(b, []byte(`\\u00`)) {
				return nil, fmt.Errorf("encode %s (%s): a value holds a backslash before u00", n, f)
			}
			// The SDK's own marshalling escapes <, > and & inside the
			// values ("|>" of every Flux query); none of the definition's
			// strings holds a backslash, so the plain characters can
			// come back.
			out[path.Join("dashboards", string(f), "dewline-"+n+".json")] = []byte(htmlUnescaper.Replace(string(b)))
		}
	}
	return out, nil
}
