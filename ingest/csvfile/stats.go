package csvfile

import (
	"fmt"
	"maps"
)

// Reason says why a row or a cell was rejected.
type Reason string

// Row reasons reject the whole row; cell reasons reject one value and keep
// the others of the row.
const (
	// Row reasons.
	ReasonFieldCount Reason = "wrong field count"
	ReasonTruncated  Reason = "truncated last line"
	ReasonQuotes     Reason = "malformed quotes"
	ReasonOpenQuote  Reason = "quote not closed (reading resumed on the next line)"
	ReasonTooLong    Reason = "line too long"
	ReasonBadTime    Reason = "unparseable time"
	ReasonNoOffset   Reason = "time without UTC offset"
	ReasonDSTGap     Reason = "time in skipped daylight-saving hour"
	ReasonNoPoint    Reason = "empty point name"

	// Cell reasons.
	ReasonNotNumeric Reason = "non-numeric value"
	ReasonDecimalSep Reason = "wrong decimal separator"
	ReasonNotFinite  Reason = "number out of range"
)

// MaxExamples is how many rejections Stats keeps with their line numbers.
const MaxExamples = 10

// Rejection is one rejected row or cell.
type Rejection struct {
	File   string
	Line   int
	Column string // the column (wide) or point (long) of a cell, "" for a row
	Reason Reason
	Text   string // the offending text, shortened
}

func (r Rejection) String() string {
	if r.Column != "" {
		return fmt.Sprintf("%s line %d, %s: %s: %q", r.File, r.Line, r.Column, r.Reason, r.Text)
	}
	return fmt.Sprintf("%s line %d: %s: %q", r.File, r.Line, r.Reason, r.Text)
}

// DST counts the rows whose local wall time met a daylight-saving change.
type DST struct {
	// Repeated rows fell in the repeated hour after clocks went back. The
	// first pass through that hour takes the earlier (summer) offset; once
	// wall time steps backwards inside it, the later (winter) offset.
	Repeated        int
	RepeatedEarlier int // resolved to the earlier offset (first pass)
	RepeatedLater   int // resolved to the later offset (second pass)
	// Skipped rows name a wall time that did not exist because clocks went
	// forward; they are rejected (ReasonDSTGap).
	Skipped int
}

// Stats counts what a Reader did with its file.
//
// Every physical line of a file is accounted for:
//
//	HeaderLines + Blank + Rows + Continued = lines of the file
//
// and every data row is either rejected whole (RowsRejected, with its line
// among Examples while they last) or kept, its cells turned into records,
// missing values or rejected cells.
type Stats struct {
	HeaderLines  int // lines before the first data row: preamble, header, unit row
	Rows         int // data rows read (header, unit row, preamble and blank lines excluded), each counted at its first line
	RowsRejected int // data rows rejected whole (row reasons)
	Continued    int // lines after the first of kept rows whose quoted fields hold line breaks
	Records      int // records returned
	Missing      int // empty cells and missing-value markers ("NaN", "null", "---", ...): no record, no error
	Booleans     int // cells read as 1 or 0 from On/Off, True/False, Active/Inactive, Yes/No
	Blank        int // blank lines skipped
	// Rejected counts rejections by reason: rows for row reasons, cells for
	// cell reasons.
	Rejected map[Reason]int
	Examples []Rejection // the first MaxExamples rejections
	DST      DST
}

// RejectedTotal is the number of rejected rows and cells.
func (s Stats) RejectedTotal() int {
	n := 0
	for _, c := range s.Rejected {
		n += c
	}
	return n
}

func (s Stats) clone() Stats {
	s.Rejected = maps.Clone(s.Rejected)
	s.Examples = append([]Rejection(nil), s.Examples...)
	return s
}
