package csvfile

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/dewline/dewline/ingest"
)

// FuzzReader: whatever the bytes and options, the reader returns an error
// or records, never panics or loops, and every record has a finite value,
// a set time, a line number and valid UTF-8 names. Seeds: the fixtures of
// testdata/csv and testdata/fuzz/FuzzReader.
//
//	go test -run '^$' -fuzz '^FuzzReader$' -fuzztime 30s ./ingest/csvfile
func FuzzReader(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join(fixtures, "*"))
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(data, uint8(0x02))
		}
	}
	ny, err := time.LoadLocation("America/New_York")
	if err != nil {
		f.Fatal(err)
	}
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, data []byte, flags uint8) {
		opt := Options{
			Location:     []*time.Location{nil, time.UTC, ny, berlin}[flags&3],
			Layout:       []Layout{LayoutAuto, LayoutWide, LayoutLong, LayoutAuto}[flags>>2&3],
			DayFirst:     []Tri{Auto, Yes, No, Auto}[flags>>4&3],
			DecimalComma: []Tri{Auto, Yes}[flags>>6&1],
		}
		r, err := NewReader(bytes.NewReader(data), "fuzz.csv", opt)
		if err != nil {
			if r != nil {
				t.Fatal("reader and error")
			}
			return
		}
		n := 0
		check := func(rec ingest.Record) {
			n++
			if n > len(data)+1 {
				t.Fatalf("%d records from %d bytes", n, len(data))
			}
			if math.IsNaN(rec.Value) || math.IsInf(rec.Value, 0) {
				t.Fatalf("line %d: value %v", rec.Line, rec.Value)
			}
			if rec.Time.IsZero() || rec.Line < 1 || rec.File != "fuzz.csv" || rec.Series == "" {
				t.Fatalf("bad record %+v", rec)
			}
			if !utf8.ValidString(rec.Series) || !utf8.ValidString(rec.Unit) {
				t.Fatalf("invalid UTF-8 in %+v", rec)
			}
		}
		if flags&0x80 != 0 {
			buf := make([]ingest.Record, 3)
			for {
				k, err := r.Read(buf)
				for _, rec := range buf[:k] {
					check(rec)
				}
				if err != nil {
					if !errors.Is(err, io.EOF) && !errors.Is(err, ErrRead) {
						t.Fatalf("unexpected error %v", err)
					}
					break
				}
			}
		} else {
			for {
				rec, err := r.Next()
				if err != nil {
					if !errors.Is(err, io.EOF) && !errors.Is(err, ErrRead) {
						t.Fatalf("unexpected error %v", err)
					}
					break
				}
				check(rec)
			}
		}
		if s := r.Stats(); s.Records != n {
			t.Fatalf("stats count %d records, returned %d", s.Records, n)
		}
	})
}

// FuzzReaderLines: whatever the quotes, every physical line of a UTF-8
// file is accounted for once, as a line before the data, a blank line, a
// data row (kept or rejected) or a line inside a kept row's quoted field:
//
//	HeaderLines + Blank + Rows + Continued = physical lines
//
// and rows rejected whole never outnumber the rows, records come in line
// order within the file and name a line that exists. The line count is
// taken from the bytes, independently of the reader. Seeds: quoted and
// stray-quote exports below and the fixtures of testdata/csv.
//
//	go test -run '^$' -fuzz '^FuzzReaderLines$' -fuzztime 30s ./ingest/csvfile
func FuzzReaderLines(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join(fixtures, "*.csv"))
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil && len(data) < 1<<16 {
			f.Add(data, uint8(0x01))
		}
	}
	var b bytes.Buffer
	b.WriteString("Time,SAT,Note\n")
	for m := 0; m < 60; m++ {
		fmt.Fprintf(&b, "2026-07-14T13:%02d:00Z,55.%d,ok\n", m, m%10)
	}
	plain := b.Bytes()
	for _, stray := range []string{`"`, `,"`, `55"1`, "\"a\nb\"", `""`, "\"\r\n"} {
		data := bytes.Replace(append([]byte(nil), plain...), []byte("55.3,ok"), []byte("55.3,"+stray+"ok"), 1)
		f.Add(data, uint8(0x00))
		f.Add(data, uint8(0x04))
	}
	f.Fuzz(func(t *testing.T, data []byte, flags uint8) {
		opt := Options{
			Location:     []*time.Location{nil, time.UTC}[flags&1],
			Layout:       []Layout{LayoutAuto, LayoutWide, LayoutLong, LayoutAuto}[flags>>1&3],
			DecimalComma: []Tri{Auto, Yes}[flags>>3&1],
		}
		r, err := NewReader(bytes.NewReader(data), "fuzz.csv", opt)
		if err != nil {
			return
		}
		if enc := r.Detected().Encoding; !strings.HasPrefix(enc, "UTF-8") || strings.Contains(enc, "gzip") {
			return // decoded bytes differ from the file's: no line count to compare
		}
		lines := bytes.Count(data, []byte{'\n'})
		if len(data) > 0 && data[len(data)-1] != '\n' {
			lines++
		}
		last := 0
		for {
			rec, err := r.Next()
			if err != nil {
				if !errors.Is(err, io.EOF) {
					t.Fatalf("unexpected error %v", err)
				}
				break
			}
			if rec.Line < last || rec.Line > lines {
				t.Fatalf("record at line %d after line %d, file of %d lines", rec.Line, last, lines)
			}
			last = rec.Line
		}
		s := r.Stats()
		if got := s.HeaderLines + s.Blank + s.Rows + s.Continued; got != lines {
			t.Fatalf("%d lines accounted for (header %d, blank %d, rows %d, continued %d), the file has %d",
				got, s.HeaderLines, s.Blank, s.Rows, s.Continued, lines)
		}
		if s.RowsRejected > s.Rows {
			t.Fatalf("%d rows rejected of %d", s.RowsRejected, s.Rows)
		}
	})
}
