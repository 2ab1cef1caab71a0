//lint:file-ignore SA1019 the v1 dashboard model (dashboard.Dashboard) is the JSON that Grafana's file provisioning loads in every release in use; the v2 model the SDK prefers needs Grafana 12's new dashboard API.

package grafana

import (
	"encoding/json"
	"fmt"
	"sync"

	"github.com/grafana/grafana-foundation-sdk/go/cog"
	"github.com/grafana/grafana-foundation-sdk/go/cog/plugins"
	"github.com/grafana/grafana-foundation-sdk/go/dashboard"
)

var register sync.Once

// Load reads a dashboard's JSON with the SDK's types, its InfluxDB queries
// as Query values.
func Load(b []byte) (dashboard.Dashboard, error) {
	register.Do(func() {
		plugins.RegisterDefaultPlugins()
		cog.NewRuntime().RegisterDataqueryVariant(QueryVariant())
	})
	var d dashboard.Dashboard
	if err := json.Unmarshal(b, &d); err != nil {
		return d, fmt.Errorf("read dashboard: %w", err)
	}
	return d, nil
}

// PanelQuery is one query of one panel.
type PanelQuery struct {
	Panel string
	Query Query
}

// Queries lists the InfluxDB queries of a dashboard's panels, in order. A
// target of another kind is an error.
func Queries(d dashboard.Dashboard) ([]PanelQuery, error) {
	var out []PanelQuery
	for _, p := range d.Panels {
		if p.Panel == nil {
			continue
		}
		title := ""
		if p.Panel.Title != nil {
			title = *p.Panel.Title
		}
		for _, t := range p.Panel.Targets {
			q, ok := t.(Query)
			if !ok {
				return nil, fmt.Errorf("panel %q: a target of type %T, not an InfluxDB query", title, t)
			}
			out = append(out, PanelQuery{Panel: title, Query: q})
		}
	}
	return out, nil
}

// VariableQuery returns the query of the dashboard's variable name ("" when
// it has none).
func VariableQuery(d dashboard.Dashboard, name string) string {
	for _, v := range d.Templating.List {
		if v.Name == name && v.Query != nil && v.Query.String != nil {
			return *v.Query.String
		}
	}
	return ""
}
