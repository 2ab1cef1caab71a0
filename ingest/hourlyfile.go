package ingest

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
)

// HourlyWriter writes hourly records as CSV or JSON, streaming: one row or
// object per air handler-hour, SI values with the unit in each name (see
// metrics.Record.Fields). Missing values (NaN) are empty in CSV and null in
// JSON. Close must be called to finish the file.
type HourlyWriter struct {
	w     *bufio.Writer
	csv   *csv.Writer
	json  bool
	n     int
	names []string
}

// NewHourlyWriter writes CSV, or a JSON array when format is "json".
func NewHourlyWriter(w io.Writer, format string) (*HourlyWriter, error) {
	hw := &HourlyWriter{w: bufio.NewWriterSize(w, 64<<10), names: metrics.FieldNames()}
	switch format {
	case "csv":
		hw.csv = csv.NewWriter(hw.w)
		header := append([]string{"hour_start", "ahu"}, hw.names...)
		header = append(header, "flags")
		if err := hw.csv.Write(header); err != nil {
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

func num(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 8, 64)
}

// Write adds one record.
func (hw *HourlyWriter) Write(r *metrics.Record) error {
	fields := r.Fields()
	if hw.csv != nil {
		row := make([]string, 0, len(fields)+3)
		row = append(row, r.HourStart.UTC().Format(time.RFC3339), r.AHU)
		for _, f := range fields {
			row = append(row, num(f.Value))
		}
		row = append(row, strings.Join(r.Flags, " "))
		hw.n++
		return hw.csv.Write(row)
	}
	var b strings.Builder
	if hw.n > 0 {
		b.WriteString(",")
	}
	b.WriteString("\n  {\"hour_start\": ")
	b.WriteString(strconv.Quote(r.HourStart.UTC().Format(time.RFC3339)))
	b.WriteString(", \"ahu\": ")
	b.WriteString(strconv.Quote(r.AHU))
	for _, f := range fields {
		b.WriteString(", \"" + f.Name + "\": ")
		if s := num(f.Value); s != "" {
			b.WriteString(s)
		} else {
			b.WriteString("null")
		}
	}
	b.WriteString(", \"flags\": [")
	for i, f := range r.Flags {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.Quote(f))
	}
	b.WriteString("]}")
	hw.n++
	_, err := hw.w.WriteString(b.String())
	return err
}

// Close finishes the file and flushes it.
func (hw *HourlyWriter) Close() error {
	if hw.csv != nil {
		hw.csv.Flush()
		if err := hw.csv.Error(); err != nil {
			return err
		}
	} else {
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
