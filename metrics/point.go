package metrics

import (
	"sort"
	"strings"
)

// PointRef says where a role's values live and in what unit they are logged.
// A CSV export names a Column (wide layout) or a Point (long layout, also
// the name the embedded store keeps the series under); InfluxDB names a
// Measurement, a Field and optional Tags. One reference may carry both, so
// the same configuration serves CSV exports and a live store.
type PointRef struct {
	Column      string            `yaml:"column,omitempty" json:"column,omitempty"`
	Point       string            `yaml:"point,omitempty" json:"point,omitempty"`
	Measurement string            `yaml:"measurement,omitempty" json:"measurement,omitempty"`
	Field       string            `yaml:"field,omitempty" json:"field,omitempty"`
	Tags        map[string]string `yaml:"tags,omitempty" json:"tags,omitempty"`
	Unit        string            `yaml:"unit,omitempty" json:"unit,omitempty"`
}

// DefaultMeasurement and DefaultField are where a point without an InfluxDB
// location is written by "dewline import" and read back: measurement
// "dewline_trend", tag "point" = the point's name, field "value".
const (
	DefaultMeasurement = "dewline_trend"
	DefaultField       = "value"
	DefaultPointTag    = "point"
)

// Name is the series name of a point in CSV exports and the embedded store:
// the Column, else the Point, else "measurement.field{k=v,...}".
func (p PointRef) Name() string {
	switch {
	case p.Column != "":
		return p.Column
	case p.Point != "":
		return p.Point
	}
	var b strings.Builder
	b.WriteString(p.Measurement)
	b.WriteByte('.')
	b.WriteString(p.Field)
	if len(p.Tags) > 0 {
		keys := make([]string, 0, len(p.Tags))
		for k := range p.Tags {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		b.WriteByte('{')
		for i, k := range keys {
			if i > 0 {
				b.WriteByte(',')
			}
			b.WriteString(k + "=" + p.Tags[k])
		}
		b.WriteByte('}')
	}
	return b.String()
}

// InfluxLocation returns where the point lives in InfluxDB: its own
// measurement, field and tags, or the defaults with tag point=Name().
func (p PointRef) InfluxLocation() (measurement, field string, tags map[string]string) {
	if p.Measurement != "" && p.Field != "" {
		return p.Measurement, p.Field, p.Tags
	}
	return DefaultMeasurement, DefaultField, map[string]string{DefaultPointTag: p.Name()}
}
