package csvfile

import (
	"fmt"
	"time"
)

// Layout is how a trend export arranges its values.
type Layout int8

// Layouts. LayoutAuto asks NewReader to tell them apart by the header.
const (
	LayoutAuto Layout = iota // detect from the header
	LayoutWide               // a time column and one column per point
	LayoutLong               // time, point and value columns (unit optional), one value per row
)

func (l Layout) String() string {
	switch l {
	case LayoutAuto:
		return "auto"
	case LayoutWide:
		return "wide"
	case LayoutLong:
		return "long"
	}
	return fmt.Sprintf("Layout(%d)", int(l))
}

// Tri is a yes/no setting that is detected from the file while it is Auto.
type Tri int8

// Tri values.
const (
	Auto Tri = iota // detect from the file
	Yes
	No
)

func (t Tri) String() string {
	switch t {
	case Auto:
		return "auto"
	case Yes:
		return "yes"
	case No:
		return "no"
	}
	return fmt.Sprintf("Tri(%d)", int(t))
}

// Options tell NewReader what it cannot or should not detect. The zero value
// detects everything and accepts only timestamps that carry their UTC offset
// (or Unix times).
type Options struct {
	// Location interprets wall-clock timestamps written without a UTC offset
	// ("2026-07-14 13:05"). A file that has them and no Location is refused:
	// the zone of a trend log is never guessed. Use time.UTC for an export in
	// UTC. Returned Record times are in Location, or in UTC when it is nil.
	Location *time.Location

	// Layout forces the wide or the long layout.
	Layout Layout

	// Delimiter forces the field separator; 0 detects comma, semicolon, tab
	// or pipe. It must be a single-byte character other than a quote,
	// a line break, a digit, a letter, '.', '-', '+' or ':'.
	Delimiter rune

	// DecimalComma: Yes reads "21,5" as 21.5, No reads only "21.5".
	DecimalComma Tri

	// DayFirst: Yes reads "04/07/2026" as 4 July, No as April 7. Only dates
	// written with the year last need it.
	DayFirst Tri

	// TimeColumn names the time column (case-insensitive), when its name is
	// not one of the usual ones or a file has several.
	TimeColumn string
	// Year supplies the year of dates written without one ("08/26 14:05",
	// month and day in the order DayFirst or the data decides), as some
	// laboratory and controller exports do. 0 reads no such dates.
	Year int

	// Settings names, for messages, where the user sets each option: a
	// configuration key or a command-line flag. Empty names read
	// "Options.X".
	Settings Settings
}

// Settings names the setting behind each option, e.g. "exports.day_first"
// or "--day-first".
type Settings struct {
	Delimiter, DecimalComma, DayFirst, TimeColumn, Location string
}

// setting returns the name of the setting behind option, for messages.
func (o Options) setting(option string) string {
	var n string
	switch option {
	case "Delimiter":
		n = o.Settings.Delimiter
	case "DecimalComma":
		n = o.Settings.DecimalComma
	case "DayFirst":
		n = o.Settings.DayFirst
	case "TimeColumn":
		n = o.Settings.TimeColumn
	case "Location":
		n = o.Settings.Location
	}
	if n == "" {
		return "Options." + option
	}
	return n
}

func (o Options) validate() error {
	var bad []string
	switch o.Layout {
	case LayoutAuto, LayoutWide, LayoutLong:
	default:
		bad = append(bad, fmt.Sprintf("Layout %d is not LayoutAuto, LayoutWide or LayoutLong", int(o.Layout)))
	}
	if o.Delimiter != 0 {
		d := o.Delimiter
		if d >= 0x80 || d == '"' || d == '\r' || d == '\n' || d == '.' || d == '-' || d == '+' || d == ':' ||
			(d >= '0' && d <= '9') || (d|0x20 >= 'a' && d|0x20 <= 'z') {
			bad = append(bad, fmt.Sprintf("Delimiter %q cannot separate fields; use ',', ';', '\\t' or '|'", d))
		}
	}
	if o.Year != 0 && (o.Year < minYear || o.Year > maxYear) {
		bad = append(bad, fmt.Sprintf("Year %d is outside %d..%d", o.Year, minYear, maxYear))
	}
	for _, f := range []struct {
		name string
		v    Tri
	}{{"DecimalComma", o.DecimalComma}, {"DayFirst", o.DayFirst}} {
		if f.v < Auto || f.v > No {
			bad = append(bad, fmt.Sprintf("%s %d is not Auto, Yes or No", f.name, int(f.v)))
		}
	}
	if len(bad) == 0 {
		return nil
	}
	return &OptionsError{Problems: bad}
}

// OptionsError lists every problem with an Options value.
type OptionsError struct {
	Problems []string
}

func (e *OptionsError) Error() string {
	s := "csvfile options:"
	for i, p := range e.Problems {
		if i > 0 {
			s += ";"
		}
		s += " " + p
	}
	return s
}
