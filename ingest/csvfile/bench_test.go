package csvfile

import (
	"bytes"
	"encoding/csv"
	"errors"
	"io"
	"runtime"
	"strconv"
	"sync"
	"testing"
	"time"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/psychro"
)

// The benchmarks read a generated one-year, one-minute, ten-point wide export
// (525,600 rows, 5,256,000 values, about 40 MB) from memory, producing
// records with parsed times and values. Each sub-benchmark of BenchmarkReader
// also times, in the same iterations, a bare encoding/csv loop over the same
// bytes (ReuseRecord, no value parsed) and reports x_bare, the reader's time
// over that loop's. The goal is x_bare <= 1.5.
//
//	go test -run '^$' -bench Reader -benchmem ./ingest/csvfile

const (
	benchRows   = 525_600
	benchPoints = 10
)

var benchFiles = map[string]func() []byte{
	// ISO 8601 wall time in America/New_York, with the November repeated
	// hour written twice and the March gap absent, as a controller logs it.
	"local": sync.OnceValue(func() []byte { return benchExport(true) }),
	// RFC 3339 with the UTC offset on every row.
	"rfc3339": sync.OnceValue(func() []byte { return benchExport(false) }),
}

func benchExport(local bool) []byte {
	ny, err := time.LoadLocation("America/New_York")
	if err != nil {
		panic(err)
	}
	var buf bytes.Buffer
	buf.Grow(benchRows * 90)
	buf.WriteString("Timestamp")
	for p := range benchPoints {
		buf.WriteString(",AHU-" + strconv.Itoa(p/5+1) + " Point " + strconv.Itoa(p%5+1) + " (°F)")
	}
	buf.WriteByte('\n')
	start := time.Date(2026, 1, 1, 0, 0, 0, 0, ny)
	var line []byte
	seed := uint32(12345)
	for i := range benchRows {
		t := start.Add(time.Duration(i) * time.Minute)
		line = line[:0]
		if local {
			line = t.AppendFormat(line, "2006-01-02 15:04:05")
		} else {
			line = t.AppendFormat(line, time.RFC3339)
		}
		for range benchPoints {
			seed = seed*1664525 + 1013904223
			v := 55 + float64(seed>>16%3000)/100 // 55.00 .. 84.99
			line = append(line, ',')
			line = strconv.AppendFloat(line, v, 'f', 2, 64)
		}
		line = append(line, '\n')
		buf.Write(line)
	}
	return buf.Bytes()
}

// bareCSV reads data with encoding/csv, reusing the record, parsing nothing.
func bareCSV(data []byte) (rows int) {
	cr := csv.NewReader(bytes.NewReader(data))
	cr.ReuseRecord = true
	for {
		_, err := cr.Read()
		if err == io.EOF {
			return rows
		}
		if err != nil {
			panic(err)
		}
		rows++
	}
}

var benchSink float64

// BenchmarkReader runs, in every iteration, the bare encoding/csv loop and
// then the dewline reader over the same bytes, timing each: on a shared
// machine both see the same load. ns/op, MB/s and allocs are the reader's
// alone; x_bare is the reader's total time over the bare loop's, and
// x_bare_best the ratio of the fastest runs of each.
func BenchmarkReader(b *testing.B) {
	ny, err := time.LoadLocation("America/New_York")
	if err != nil {
		b.Fatal(err)
	}
	for _, file := range []string{"local", "rfc3339"} {
		data := benchFiles[file]()
		for _, conv := range []string{"next", "read", "next-tosi-cached", "next-tosi-lookup"} {
			b.Run(file+"/"+conv, func(b *testing.B) {
				b.SetBytes(int64(len(data)))
				b.ReportAllocs()
				var bareSum, dewSum time.Duration
				bareBest, dewBest := time.Duration(1<<62), time.Duration(1<<62)
				var mallocs, allocBytes uint64
				var ms0, ms1 runtime.MemStats
				for b.Loop() {
					b.StopTimer()
					t0 := time.Now()
					if n := bareCSV(data); n != benchRows+1 {
						b.Fatalf("bare loop read %d rows", n)
					}
					bd := time.Since(t0)
					runtime.ReadMemStats(&ms0)
					b.StartTimer()
					t1 := time.Now()
					readBench(b, data, ny, conv)
					dd := time.Since(t1)
					b.StopTimer()
					runtime.ReadMemStats(&ms1)
					mallocs += ms1.Mallocs - ms0.Mallocs
					allocBytes += ms1.TotalAlloc - ms0.TotalAlloc
					bareSum, dewSum = bareSum+bd, dewSum+dd
					bareBest, dewBest = min(bareBest, bd), min(dewBest, dd)
					b.StartTimer()
				}
				rows := float64(benchRows) * float64(b.N)
				b.ReportMetric(rows/dewSum.Seconds(), "rows/s")
				b.ReportMetric(rows/bareSum.Seconds(), "bare_rows/s")
				b.ReportMetric(float64(len(data))*float64(b.N)/bareSum.Seconds()/1e6, "bare_MB/s")
				b.ReportMetric(dewSum.Seconds()/bareSum.Seconds(), "x_bare")
				b.ReportMetric(dewBest.Seconds()/bareBest.Seconds(), "x_bare_best")
				b.ReportMetric(float64(mallocs)/rows, "allocs/row")
				b.ReportMetric(float64(allocBytes)/rows, "B/row")
			})
		}
	}
}

// readBench reads the whole export:
//
//	next              Next, record by record
//	read              Read, 512 records at a time
//	next-tosi-cached  Next, and each value to SI with the unit looked up once per series
//	next-tosi-lookup  Next, and each value to SI with psychro.LookupUnit for every value
func readBench(b *testing.B, data []byte, loc *time.Location, mode string) {
	r, err := NewReader(bytes.NewReader(data), "bench.csv", Options{Location: loc})
	if err != nil {
		b.Fatal(err)
	}
	n := 0
	sum := 0.0
	switch mode {
	case "read":
		buf := make([]ingest.Record, 512)
		for {
			k, err := r.Read(buf)
			if err != nil {
				if errors.Is(err, io.EOF) {
					break
				}
				b.Fatal(err)
			}
			for i := range buf[:k] {
				sum += buf[i].Value
			}
			n += k
		}
	default:
		units := map[string]psychro.Unit{}
		for {
			rec, err := r.Next()
			if err != nil {
				if errors.Is(err, io.EOF) {
					break
				}
				b.Fatal(err)
			}
			v := rec.Value
			switch mode {
			case "next-tosi-cached":
				u, ok := units[rec.Series]
				if !ok {
					if u, err = psychro.LookupUnit(psychro.KindTemperature, rec.Unit); err != nil {
						b.Fatal(err)
					}
					units[rec.Series] = u
				}
				v = u.ToSI(v)
			case "next-tosi-lookup":
				u, err := psychro.LookupUnit(psychro.KindTemperature, rec.Unit)
				if err != nil {
					b.Fatal(err)
				}
				v = u.ToSI(v)
			}
			sum += v
			n++
		}
	}
	benchSink += sum
	if n != benchRows*benchPoints {
		b.Fatalf("read %d records, want %d; stats %+v", n, benchRows*benchPoints, r.Stats())
	}
}
