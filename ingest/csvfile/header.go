package csvfile

import (
	"strings"
	"sync"
	"unicode/utf8"

	"github.com/dewline/dewline/psychro"
)

// Column is a value column of a wide file, or a point met in a long file.
type Column struct {
	Index  int    // field index in the row (wide); -1 for long-file points
	Header string // the header cell as written (wide) or the point name as written (long)
	Name   string // the series name records carry: the header without its unit
	Unit   string // the unit as the file writes it, "" when the file states none
	// UnitLine is the line that states Unit in a wide export (the header
	// or the unit row under it); 0 when no unit is stated or when each
	// row states its own (long).
	UnitLine int
}

// psychroKinds are the kinds of quantity psychro names units for.
var psychroKinds = []psychro.Kind{
	psychro.KindTemperature, psychro.KindPressure, psychro.KindLength, psychro.KindRH,
	psychro.KindFlow, psychro.KindPower, psychro.KindEnergy, psychro.KindMass,
	psychro.KindHumRatio, psychro.KindFraction,
}

// unitCache remembers knownUnit's answers: psychro.LookupUnit builds its
// error message, a sorted list of units, on every miss, and a header may
// ask about thousands of cells. Bounded, since the names come from files.
var unitCache = struct {
	sync.Mutex
	m map[string]string // name -> canonical name, "" when unknown
}{m: map[string]string{}}

const maxUnitCache = 4096

// knownUnit reports whether psychro knows s as a unit of any kind, and
// returns its canonical name.
func knownUnit(s string) (string, bool) {
	if s == "" || len(s) > 32 {
		return "", false
	}
	unitCache.Lock()
	c, hit := unitCache.m[s]
	unitCache.Unlock()
	if hit {
		return c, c != ""
	}
	for _, k := range psychroKinds {
		if u, err := psychro.LookupUnit(k, s); err == nil {
			c = u.Name
			break
		}
	}
	unitCache.Lock()
	if len(unitCache.m) < maxUnitCache {
		unitCache.m[s] = c
	}
	unitCache.Unlock()
	return c, c != ""
}

// splitNameUnit separates a unit written inside a header or point name:
//
//	"Supply Temp (°F)", "SAT [degC]", "SAT {%}"  bracketed at the end: any unit psychro knows
//	"Flow, CFM"                                 after the last comma: a known unit of two or more characters
//	"SAT °F", "Valve %", "Flow m3/h"            after the last space: a known unit containing °, %, / or ℃ ℉
//
// Anything else stays whole with no unit: "AHU-1 (North)" is a name, and so
// is "Zone, C" or "Snack Bar", where a one-letter unit or an English word
// might be meant but need not be.
func splitNameUnit(h string) (name, unit string) {
	h = strings.TrimSpace(h)
	if n := len(h); n >= 3 {
		var open byte
		switch h[n-1] {
		case ')':
			open = '('
		case ']':
			open = '['
		case '}':
			open = '{'
		}
		if open != 0 {
			if i := strings.LastIndexByte(h, open); i >= 0 {
				u := strings.TrimSpace(h[i+1 : n-1])
				if _, ok := knownUnit(u); ok {
					if name := strings.TrimSpace(h[:i]); name != "" {
						return name, u
					}
				}
			}
			return h, ""
		}
	}
	if i := strings.LastIndexByte(h, ','); i > 0 {
		u := strings.TrimSpace(h[i+1:])
		if _, ok := knownUnit(u); ok && utf8.RuneCountInString(u) >= 2 {
			if name := strings.TrimSpace(h[:i]); name != "" {
				return name, u
			}
		}
	}
	if i := strings.LastIndexByte(h, ' '); i > 0 {
		u := h[i+1:]
		if strings.ContainsAny(u, "°%/℃℉") {
			if _, ok := knownUnit(u); ok {
				return strings.TrimSpace(h[:i]), u
			}
		}
	}
	return h, ""
}

// sameUnit reports whether two unit spellings name the same unit.
func sameUnit(a, b string) bool {
	if strings.EqualFold(strings.TrimSpace(a), strings.TrimSpace(b)) {
		return true
	}
	ca, oka := knownUnit(a)
	cb, okb := knownUnit(b)
	return oka && okb && ca == cb
}

// normName lower-cases a header for matching against role names, turns
// '_' and '-' into spaces and drops a trailing bracketed part
// ("Timestamp (UTC)" -> "timestamp").
func normName(h string) string {
	h = strings.ToLower(strings.TrimSpace(h))
	if n := len(h); n > 0 && (h[n-1] == ')' || h[n-1] == ']') {
		if i := strings.LastIndexAny(h, "(["); i > 0 {
			h = h[:i]
		}
	}
	h = strings.NewReplacer("_", " ", "-", " ").Replace(h)
	return strings.Join(strings.Fields(h), " ")
}

// Header names of the columns that have a role, after normName.
var (
	timeNames = []string{"time", "timestamp", "time stamp", "datetime", "date time", "date/time",
		"date and time", "ts", "local time", "utc time", "time utc", "trend time", "sample time",
		"date"}
	pointNames = []string{"point", "point name", "name", "series", "series name", "tag", "tag name",
		"trend", "trend name", "sensor", "object", "object name", "channel"}
	valueNames = []string{"value", "val", "reading", "present value", "point value"}
	unitNames  = []string{"unit", "units", "uom", "eng units", "engineering units", "unit of measure"}
)

// findRole returns the index of the first header whose name is in names,
// trying the names in order of preference, or -1.
func findRole(headers []string, names []string) int {
	for _, n := range names {
		for i, h := range headers {
			if normName(h) == n {
				return i
			}
		}
	}
	return -1
}

// text turns header or name bytes into a string: valid UTF-8 stays as it is,
// anything else is read as ISO 8859-1 (Latin-1), the encoding of many
// exports from Windows controllers, where "°" is the single byte 0xB0.
func text(b []byte) string {
	if utf8.Valid(b) {
		return string(b)
	}
	var sb strings.Builder
	sb.Grow(len(b) + 8)
	for _, c := range b {
		sb.WriteRune(rune(c))
	}
	return sb.String()
}
