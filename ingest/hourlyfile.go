package ingest

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/dewline/dewline/metrics"
)

// HourlyWriter writes hourly records as CSV or JSON, streaming: one row or
// object per air handler-hour, SI values with the unit in each name (see
// metrics.Record.Fields). Missing values (NaN) are empty in CSV and null in
// JSON. Close must be called to finish the file.
//
// Each row is appended to one buffer reused from row to row (strconv's
// Append functions), so writing allocates nothing per value; the CSV text
// is the one encoding/csv writes (comma, "\n", its quoting rule).
type HourlyWriter struct {
	w     *bufio.Writer
	json  bool
	n     int
	names []string
	buf   []byte
	// The values are read through pointers into probe, a copy of the
	// record being written (metrics.Record.FieldPtrs, in the order of
	// names), so a row does not allocate Fields' slice.
	probe metrics.Record
	vals  []*float64
}

// NewHourlyWriter writes CSV, or a JSON array when format is "json".
func NewHourlyWriter(w io.Writer, format string) (*HourlyWriter, error) {
	hw := &HourlyWriter{w: bufio.NewWriterSize(w, 64<<10), names: metrics.FieldNames()}
	ptrs := hw.probe.FieldPtrs()
	hw.vals = make([]*float64, len(hw.names))
	for i, name := range hw.names {
		p, ok := ptrs[name]
		if !ok {
			return nil, fmt.Errorf("hourly output: no value for field %q", name) // a bug of metrics' field lists
		}
		hw.vals[i] = p
	}
	switch format {
	case "csv":
		b := hw.buf[:0]
		b = appendCSVField(b, "hour_start")
		b = append(b, ',')
		b = appendCSVField(b, "ahu")
		for _, name := range hw.names {
			b = append(b, ',')
			b = appendCSVField(b, name)
		}
		b = append(b, ',')
		b = appendCSVField(b, "flags")
		b = append(b, '\n')
		hw.buf = b
		if _, err := hw.w.Write(b); err != nil {
			return nil, err
		}
	case "json":
		hw.json = true
		if _, err := hw.w.WriteString("["); err != nil {
			return nil, err
		}
	default:
		return nil, fmt.Errorf("unknown output format %q: use csv or json", format)
	}
	return hw, nil
}

// FormatFor returns the output format a file name implies.
func FormatFor(path string) (string, error) {
	switch {
	case strings.HasSuffix(strings.ToLower(path), ".csv"):
		return "csv", nil
	case strings.HasSuffix(strings.ToLower(path), ".json"):
		return "json", nil
	}
	return "", fmt.Errorf("output %q: name it .csv or .json", path)
}

// finite reports whether v is written as a number (NaN and infinities are
// written as missing).
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// appendNum appends v with eight significant digits.
func appendNum(b []byte, v float64) []byte { return strconv.AppendFloat(b, v, 'g', 8, 64) }

// Write adds one record.
func (hw *HourlyWriter) Write(r *metrics.Record) error {
	hw.probe = *r
	b := hw.buf[:0]
	if !hw.json {
		b = r.HourStart.UTC().AppendFormat(b, time.RFC3339)
		b = append(b, ',')
		b = appendCSVField(b, r.AHU)
		for _, p := range hw.vals {
			b = append(b, ',')
			if v := *p; finite(v) {
				b = appendNum(b, v) // digits, sign, point, exponent: never quoted
			}
		}
		b = append(b, ',')
		b = appendCSVField(b, strings.Join(r.Flags, " "))
		b = append(b, '\n')
	} else {
		if hw.n > 0 {
			b = append(b, ',')
		}
		b = append(b, "\n  {\"hour_start\": "...)
		b = append(b, '"')
		b = r.HourStart.UTC().AppendFormat(b, time.RFC3339) // nothing in it to escape
		b = append(b, '"')
		b = append(b, ", \"ahu\": "...)
		b = strconv.AppendQuote(b, r.AHU)
		for i, p := range hw.vals {
			b = append(b, ", \""...)
			b = append(b, hw.names[i]...)
			b = append(b, "\": "...)
			if v := *p; finite(v) {
				b = appendNum(b, v)
			} else {
				b = append(b, "null"...)
			}
		}
		b = append(b, ", \"flags\": ["...)
		for i, f := range r.Flags {
			if i > 0 {
				b = append(b, ", "...)
			}
			b = strconv.AppendQuote(b, f)
		}
		b = append(b, "]}"...)
	}
	hw.buf = b
	hw.n++
	_, err := hw.w.Write(b)
	return err
}

// Close finishes the file and flushes it.
func (hw *HourlyWriter) Close() error {
	if hw.json {
		end := "\n]\n"
		if hw.n == 0 {
			end = "]\n"
		}
		if _, err := hw.w.WriteString(end); err != nil {
			return err
		}
	}
	return hw.w.Flush()
}

// appendCSVField appends s as encoding/csv's Writer writes a field with
// the comma as separator and "\n" line ends: quoted when it holds a comma,
// a quote, a CR or an LF, begins with a space (unicode.IsSpace) or is
// exactly `\.`, with each quote doubled inside.
func appendCSVField(b []byte, s string) []byte {
	if !csvNeedsQuotes(s) {
		return append(b, s...)
	}
	b = append(b, '"')
	for i := 0; i < len(s); i++ {
		if s[i] == '"' {
			b = append(b, '"')
		}
		b = append(b, s[i])
	}
	return append(b, '"')
}

func csvNeedsQuotes(s string) bool {
	if s == "" {
		return false
	}
	if s == `\.` || strings.ContainsAny(s, ",\"\r\n") {
		return true
	}
	r, _ := utf8.DecodeRuneInString(s)
	return unicode.IsSpace(r)
}
