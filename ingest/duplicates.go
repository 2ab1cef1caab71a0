package ingest

import (
	"fmt"
	"strconv"
	"strings"
	"time"
)

// Duplicates counts records that give a series a second, different value
// at the time of its previous record: two rows of an export that disagree
// about one reading (an export written twice with a correction, a
// controller that logged a change within its own timestamp). Every path
// keeps the later row, as a re-import replaces a stored value; the count
// says that a choice was made, and the examples where. Only a repeat of
// the series' previous record is seen (memory stays flat): rows of the
// same time far apart in a file, as in two overlapping exports pasted
// together, are resolved the same way without being counted. The zero
// value is ready to use.
type Duplicates struct {
	Conflicting int
	Examples    []Duplicate // the first MaxDuplicateExamples
}

// MaxDuplicateExamples bounds the examples Duplicates keeps.
const MaxDuplicateExamples = 5

// Duplicate is one pair of rows that disagree.
type Duplicate struct {
	File          string
	Series        string
	Time          time.Time
	Line, Later   int // the file lines of the earlier and the later row
	Value, LaterV float64
}

func (d Duplicate) String() string {
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	return fmt.Sprintf("%s lines %d and %d: %s at %s is %s, then %s (kept)",
		d.File, d.Line, d.Later, d.Series, d.Time.UTC().Format(time.RFC3339), f(d.Value), f(d.LaterV))
}

// LastRecord is what Duplicates needs of a series' previous record; keep
// one per series beside the series' other state.
type LastRecord struct {
	t    time.Time
	v    float64
	unit string
	line int
	set  bool
}

// See compares rec with the previous record of its series, l, counts a
// conflict, and makes rec the previous record. Values stated in different
// units are not compared.
func (d *Duplicates) See(l *LastRecord, rec *Record) {
	if l.set && rec.Value != l.v && rec.Unit == l.unit && rec.Time.Equal(l.t) && rec.Value == rec.Value {
		d.Conflicting++
		if len(d.Examples) < MaxDuplicateExamples {
			d.Examples = append(d.Examples, Duplicate{File: rec.File, Series: rec.Series, Time: rec.Time,
				Line: l.line, Later: rec.Line, Value: l.v, LaterV: rec.Value})
		}
	}
	*l = LastRecord{t: rec.Time, v: rec.Value, unit: rec.Unit, line: rec.Line, set: true}
}

// Summary says how many values were replaced by a later row of the same
// time, then fix, then the examples each on a line of its own; "" when
// none was.
func (d *Duplicates) Summary(fix string) string {
	if d.Conflicting == 0 {
		return ""
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%d values repeat their series' previous time with another value; the later row is kept%s", d.Conflicting, fix)
	for _, ex := range d.Examples {
		b.WriteString("\n    e.g. " + ex.String())
	}
	return b.String()
}
