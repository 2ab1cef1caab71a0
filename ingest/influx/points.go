package influx

import (
	"fmt"
	"slices"
	"strings"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// location is where one point's values live, ready for a query.
type location struct {
	name        string // metrics.PointRef.Name(), for messages
	measurement string
	field       string
	tags        map[string]string
	keys        []string // tag keys, sorted
	own         bool     // the point's own location, logged in its unit; else the default location, in SI
}

// locate works out where ref lives and checks that it can be queried.
//
// A point with both Measurement and Field set lives there, with its Tags,
// and is logged in ref.Unit. A point with neither lives at dewline's default
// location (metrics.DefaultMeasurement, tag point=Name(), field "value"),
// where "dewline import" writes it in SI. Anything in between is an error
// rather than a silent fall back to the default location.
func locate(ref metrics.PointRef) (location, error) {
	name := ref.Name()
	fail := func(format string, args ...any) (location, error) {
		return location{}, fmt.Errorf("point %q: %s: %w", name, fmt.Sprintf(format, args...), ErrInvalidPoint)
	}
	switch {
	case ref.Column == "" && ref.Point == "" && ref.Measurement == "" && ref.Field == "":
		return fail("it has no column, point name, or measurement and field; give one")
	case ref.Measurement != "" && ref.Field == "":
		return fail("measurement %q is set but field is not; an InfluxDB point needs both", ref.Measurement)
	case ref.Measurement == "" && ref.Field != "":
		return fail("field %q is set but measurement is not; an InfluxDB point needs both", ref.Field)
	case ref.Measurement == "" && len(ref.Tags) > 0:
		return fail("tags are set but measurement and field are not; give all three or none")
	}
	m, f, tags := ref.InfluxLocation()
	loc := location{name: name, measurement: m, field: f, tags: tags, own: ref.Measurement != ""}
	for k, v := range tags {
		switch {
		case k == "":
			return fail("a tag has an empty key")
		case metrics.ReservedInfluxKey(k):
			return fail("tag key %q is reserved by Flux; it cannot name a tag", k)
		case v == "":
			return fail("tag %q has an empty value; InfluxDB never stores empty tag values, so it would match nothing", k)
		}
		loc.keys = append(loc.keys, k)
	}
	slices.Sort(loc.keys)
	return loc, nil
}

// predicate is the Flux condition selecting the location's series.
func (l location) predicate() string {
	var b strings.Builder
	b.WriteString("r._measurement == ")
	b.WriteString(fluxString(l.measurement))
	b.WriteString(" and r._field == ")
	b.WriteString(fluxString(l.field))
	for _, k := range l.keys {
		b.WriteString(" and ")
		b.WriteString(fluxColumn(k))
		b.WriteString(" == ")
		b.WriteString(fluxString(l.tags[k]))
	}
	return b.String()
}

// describe names the location for messages.
func (l location) describe() string {
	var b strings.Builder
	fmt.Fprintf(&b, "measurement %q, field %q", l.measurement, l.field)
	if len(l.keys) > 0 {
		b.WriteString(", tags ")
		for i, k := range l.keys {
			if i > 0 {
				b.WriteString(", ")
			}
			fmt.Fprintf(&b, "%q=%q", k, l.tags[k])
		}
	}
	return b.String()
}

// unitFor returns the conversion of a point's logged values to SI, checked
// before any query: the unit must be known for the kind.
func unitFor(ref metrics.PointRef, kind psychro.Kind) (psychro.Unit, error) {
	u, err := psychro.LookupUnit(kind, ref.Unit)
	if err != nil {
		return psychro.Unit{}, fmt.Errorf("point %q: %w: %w", ref.Name(), err, ErrInvalidPoint)
	}
	return u, nil
}

// siUnit is the name of the SI unit dewline uses for kind, e.g. "°C".
func siUnit(kind psychro.Kind) (string, error) {
	for _, n := range psychro.UnitNames(kind) {
		u, err := psychro.LookupUnit(kind, n)
		if err == nil && u.ToSI(0) == 0 && u.ToSI(1) == 1 {
			return u.Name, nil
		}
	}
	return "", fmt.Errorf("no SI unit for %s: %w", kind, ErrInvalidPoint)
}
