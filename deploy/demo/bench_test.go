package demo_test

import (
	"bufio"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/dewline/dewline/deploy/demo"
)

// BenchmarkWrite times the whole scenario (three weeks of one-minute
// physics for five air handlers, the loggers, six exports of which one is
// gzip-compressed, the configuration) against a reference in the same run:
// writing the same number of long-format rows (local timestamp, point,
// value, unit) to plain files with encoding/csv and strconv alone, with
// no physics at all.
//
//	go test -run '^$' -bench Write ./deploy/demo/
func BenchmarkWrite(b *testing.B) {
	probe, err := demo.Write(b.TempDir(), demo.Options{})
	if err != nil {
		b.Fatal(err)
	}
	rows := probe.Rows
	files := len(probe.Exports)

	b.Run("demo.Write", func(b *testing.B) {
		dir := b.TempDir()
		b.ReportAllocs()
		for b.Loop() {
			if _, err := demo.Write(dir, demo.Options{}); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(rows), "rows/op")
	})

	b.Run("encoding-csv-same-rows", func(b *testing.B) {
		dir := b.TempDir()
		loc, err := time.LoadLocation(demo.ZoneName)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportAllocs()
		for b.Loop() {
			per := rows / files
			t0 := probe.From
			for f := range files {
				fh, err := os.Create(filepath.Join(dir, "ref-"+strconv.Itoa(f)+".csv"))
				if err != nil {
					b.Fatal(err)
				}
				bw := bufio.NewWriterSize(fh, 256<<10)
				w := csv.NewWriter(bw)
				_ = w.Write([]string{"Timestamp", "Point Name", "Value", "Units"})
				for i := range per {
					ts := t0.Add(time.Duration(i) * 20 * time.Second).In(loc).Format("2006-01-02 15:04:05")
					v := strconv.FormatFloat(55+float64(i%97)/10, 'f', 1, 64)
					_ = w.Write([]string{ts, "AHU-1 Supply Air Temp", v, "°F"})
				}
				w.Flush()
				if err := w.Error(); err != nil {
					b.Fatal(err)
				}
				if err := bw.Flush(); err != nil {
					b.Fatal(err)
				}
				if err := fh.Close(); err != nil {
					b.Fatal(err)
				}
			}
		}
		b.ReportMetric(float64(rows), "rows/op")
	})
}
