package influx

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"time"
)

// fluxCSV reads a Flux result in annotated CSV as it streams in, one row
// at a time, without building a map per row: reading one air handler's
// week is about 100,000 rows, and the client library's per-row maps cost
// more CPU than the server spends producing them.
//
// The format (Flux SPEC.md, "Encoding: annotated CSV"): each table starts
// with annotation rows (#datatype, #group, #default) and a header row; the
// first column is the annotation column, empty on header and data rows;
// "result" and "table" columns name the yield and the table; an empty field
// takes the #default value; a table whose header is "error","reference" is
// the server reporting a query error.
type fluxCSV struct {
	r *csv.Reader

	cols     map[string]int // column name -> index in row (annotation column included)
	names    []string       // column names in header order
	types    []string       // #datatype per row index
	defaults []string       // #default per row index
	row      []string       // current data row, defaults applied
	annotate bool           // reading annotation rows; the next plain row is the header

	result, table string // of the current row
	newTable      bool
	iTime, iValue int
}

func newFluxCSV(r io.Reader) *fluxCSV {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	return &fluxCSV{r: cr, iTime: -1, iValue: -1}
}

// next reads the next data row. It returns io.EOF at the end, and the
// server's message when the result holds an error table.
func (f *fluxCSV) next() error {
	f.newTable = false
	for {
		rec, err := f.r.Read()
		if err != nil {
			return err
		}
		if len(rec) == 0 || len(rec) == 1 && rec[0] == "" {
			continue
		}
		if strings.HasPrefix(rec[0], "#") {
			if !f.annotate {
				f.annotate = true
				f.types, f.defaults = nil, nil
			}
			switch rec[0] {
			case "#datatype":
				f.types = append(f.types[:0], rec...)
			case "#default":
				f.defaults = append(f.defaults[:0], rec...)
			}
			continue
		}
		if f.annotate || f.cols == nil {
			if err := f.header(rec); err != nil {
				return err
			}
			continue
		}
		if len(rec) != len(f.types) && f.types != nil {
			return fmt.Errorf("flux result: row has %d columns, table has %d", len(rec), len(f.types))
		}
		f.row = append(f.row[:0], rec...)
		for i, v := range f.row {
			if v == "" && i < len(f.defaults) {
				f.row[i] = f.defaults[i]
			}
		}
		result, table := f.get("result"), f.get("table")
		if result != f.result || table != f.table {
			f.newTable = true
			f.result, f.table = result, table
		}
		return nil
	}
}

// header takes the header row of a new table.
func (f *fluxCSV) header(rec []string) error {
	f.annotate = false
	f.newTable = true
	f.cols = make(map[string]int, len(rec))
	f.names = f.names[:0]
	for i, name := range rec {
		if i > 0 {
			f.cols[name] = i
			f.names = append(f.names, name)
		}
	}
	if _, ok := f.cols["error"]; ok && len(rec) <= 3 {
		// An error table: its one data row is the message.
		msg, err := f.r.Read()
		if err != nil {
			return fmt.Errorf("flux result: error table without a message: %w", err)
		}
		text := "unknown query error"
		if i := f.cols["error"]; i < len(msg) && msg[i] != "" {
			text = msg[i]
		}
		if i, ok := f.cols["reference"]; ok && i < len(msg) && msg[i] != "" {
			text += " (reference " + msg[i] + ")"
		}
		return &queryError{msg: text}
	}
	f.iTime, f.iValue = -1, -1
	if i, ok := f.cols[colTime]; ok {
		f.iTime = i
	}
	if i, ok := f.cols[colValue]; ok {
		f.iValue = i
	}
	f.result, f.table = "\x00", "\x00" // force newTable on the first row
	return nil
}

// get returns the current row's value of column name, "" when absent.
func (f *fluxCSV) get(name string) string {
	if i, ok := f.cols[name]; ok && i < len(f.row) {
		return f.row[i]
	}
	return ""
}

// has reports whether the current table has column name.
func (f *fluxCSV) has(name string) bool {
	_, ok := f.cols[name]
	return ok
}

// tags describes the current row's tags, "{k=v, ...}" sorted by key: every
// column but the result, table, time, value, measurement and field.
func (f *fluxCSV) tags() string {
	var kv []string
	for _, n := range f.names {
		switch n {
		case "result", "table", colTime, colValue, colMeasurement, colField, colStart, colStop:
			continue
		}
		kv = append(kv, n+"="+f.get(n))
	}
	slices.Sort(kv)
	return "{" + strings.Join(kv, ", ") + "}"
}

// time returns the current row's _time.
func (f *fluxCSV) time() (time.Time, error) {
	if f.iTime < 0 || f.row[f.iTime] == "" {
		return time.Time{}, errors.New("row has no _time")
	}
	return time.Parse(time.RFC3339Nano, f.row[f.iTime])
}

// value returns the current row's _value as a number: doubles as they are,
// integers converted, booleans as 1 and 0 (on/off states are common in
// building automation trends).
func (f *fluxCSV) value() (float64, error) {
	if f.iValue < 0 {
		return 0, errors.New("row has no _value")
	}
	s := f.row[f.iValue]
	if s == "" {
		return 0, errors.New("value is null")
	}
	typ := ""
	if f.iValue < len(f.types) {
		typ = f.types[f.iValue]
	}
	switch typ {
	case "double", "":
		return strconv.ParseFloat(s, 64)
	case "long":
		n, err := strconv.ParseInt(s, 10, 64)
		return float64(n), err
	case "unsignedLong":
		n, err := strconv.ParseUint(s, 10, 64)
		return float64(n), err
	case "boolean":
		if s == "true" {
			return 1, nil
		}
		return 0, nil
	}
	return 0, fmt.Errorf("value %q is a %s, not a number", s, typ)
}

// queryError is an error the server reported inside a query result.
type queryError struct{ msg string }

func (e *queryError) Error() string { return e.msg }
