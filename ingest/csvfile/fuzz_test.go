package csvfile

import (
	"bytes"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
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
