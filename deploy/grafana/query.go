package grafana

import (
	"encoding/json"
	"fmt"

	"github.com/grafana/grafana-foundation-sdk/go/cog"
	"github.com/grafana/grafana-foundation-sdk/go/cog/variants"
	"github.com/grafana/grafana-foundation-sdk/go/common"
)

// DatasourceType is Grafana's plugin id of the InfluxDB data source.
const DatasourceType = "influxdb"

// Query is a target of Grafana's InfluxDB data source, in raw mode: an
// InfluxQL statement (RawQuery true, with ResultFormat) or a Flux script.
// The SDK has no InfluxDB query type, so this one is registered with it
// as a data-query variant.
type Query struct {
	RefID        string                `json:"refId"`
	Hide         *bool                 `json:"hide,omitempty"`
	Datasource   *common.DataSourceRef `json:"datasource,omitempty"`
	Query        string                `json:"query"`
	RawQuery     bool                  `json:"rawQuery,omitempty"`
	ResultFormat string                `json:"resultFormat,omitempty"` // InfluxQL: time_series or table
}

// ImplementsDataqueryVariant marks Query as an SDK data query.
func (Query) ImplementsDataqueryVariant() {}

// DataqueryType is the data source plugin the query is for.
func (Query) DataqueryType() string { return DatasourceType }

// Validate checks that the query has a reference id and a text.
func (q Query) Validate() error {
	if q.RefID == "" || q.Query == "" {
		return fmt.Errorf("influxdb query %q: refId and query are required", q.RefID)
	}
	return nil
}

// Equals compares two queries.
func (q Query) Equals(other variants.Dataquery) bool {
	o, ok := other.(Query)
	if !ok {
		return false
	}
	a, _ := json.Marshal(q)
	b, _ := json.Marshal(o)
	return string(a) == string(b)
}

// QueryVariant tells the SDK how to read Query back from JSON.
func QueryVariant() variants.DataqueryConfig {
	return variants.DataqueryConfig{
		Identifier: DatasourceType,
		DataqueryUnmarshaler: func(raw []byte) (variants.Dataquery, error) {
			q := Query{}
			if err := json.Unmarshal(raw, &q); err != nil {
				return nil, err
			}
			return q, nil
		},
	}
}

// queryBuilder builds a Query for the SDK's panel builders.
type queryBuilder struct{ q Query }

var _ cog.Builder[variants.Dataquery] = (*queryBuilder)(nil)

func (b *queryBuilder) Build() (variants.Dataquery, error) {
	if err := b.q.Validate(); err != nil {
		return nil, err
	}
	return b.q, nil
}
