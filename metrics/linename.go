package metrics

import (
	"fmt"
	"slices"
	"strings"
	"unicode/utf8"
)

// reservedInfluxKeys are column names a tag or field key must not take:
// Flux's own columns, the annotated CSV's result and table, and line
// protocol's time.
var reservedInfluxKeys = map[string]bool{
	"_measurement": true, "_field": true, "_time": true, "_value": true, "_start": true, "_stop": true,
	"result": true, "table": true, "time": true,
}

// ReservedInfluxKey reports whether k is a name a tag or field key must
// not take in InfluxDB (Flux's columns, the annotated CSV's, line
// protocol's time).
func ReservedInfluxKey(k string) bool { return reservedInfluxKeys[k] }

// LineNameProblem reports why name cannot be written through InfluxDB line
// protocol unchanged, or "" when it can. The client library escapes commas,
// spaces and equals signs but leaves a backslash alone, and InfluxDB stores
// a tab or line break as the two characters of its escape; so those names
// would be refused or silently renamed. It is the rule of every InfluxDB
// write and of the configuration's check of the names it would write.
func LineNameProblem(name string) string {
	switch {
	case name == "":
		return "is empty"
	case !utf8.ValidString(name):
		return "is not valid UTF-8"
	case strings.ContainsAny(name, "\n\r\t\f"):
		return "contains a tab or line break, which line protocol cannot carry"
	case strings.HasSuffix(name, `\`):
		return "ends with a backslash, which line protocol cannot carry"
	}
	for i := 0; i+1 < len(name); i++ {
		if name[i] == '\\' && strings.IndexByte(`, ="`, name[i+1]) >= 0 {
			return fmt.Sprintf("has a backslash before %q, which InfluxDB would read as an escape", name[i+1])
		}
	}
	return ""
}

// LineProblems says what keeps a measurement, its tags and field keys from
// being written to InfluxDB and read back unchanged, one text per problem
// (tags in key order); none when they can be.
func LineProblems(measurement string, tags map[string]string, fields []string) []string {
	var errs []string
	add := func(format string, args ...any) { errs = append(errs, fmt.Sprintf(format, args...)) }
	if why := LineNameProblem(measurement); why != "" {
		add("measurement %q %s", measurement, why)
	} else if measurement[0] == '#' {
		add("measurement %q starts with #, which makes the line a comment that InfluxDB skips", measurement)
	}
	keys := make([]string, 0, len(tags))
	for k := range tags {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		v := tags[k]
		if why := LineNameProblem(k); why != "" {
			add("tag key %q %s", k, why)
		} else if reservedInfluxKeys[k] {
			add("tag key %q is reserved by Flux or line protocol", k)
		}
		if why := LineNameProblem(v); why != "" {
			add("tag %q value %q %s", k, v, why)
		}
	}
	for _, f := range fields {
		if why := LineNameProblem(f); why != "" {
			add("field %q %s", f, why)
		} else if reservedInfluxKeys[f] {
			add("field %q is reserved by Flux or line protocol", f)
		} else if _, clash := tags[f]; clash {
			add("field %q has the name of a tag", f)
		}
	}
	return errs
}

// InfluxProblems says what keeps the point from being written to its
// InfluxLocation unchanged (LineProblems), none when it can be.
func (p PointRef) InfluxProblems() []string {
	m, f, tags := p.InfluxLocation()
	return LineProblems(m, tags, []string{f})
}
