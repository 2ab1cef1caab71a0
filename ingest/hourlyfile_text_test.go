package ingest

import (
	"bytes"
	"encoding/csv"
	"io"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// textRecords are hours whose names and values exercise every case of the
// writers' text: CSV quoting (commas, quotes, line breaks, a leading space
// of any kind, `\.`), JSON escapes, NaN and infinities, -0, the smallest
// and largest magnitudes, and values that round at eight digits.
func textRecords(n int) []metrics.Record {
	names := []string{"AHU-1", `AHU "2"`, "AHU,3", "AHU\n4", "AHU\r5", " AHU-6", "\tAHU-7", "\u00a0AHU-8", "\u3000AHU-9",
		`\.`, `\`, "", "Lüftung 10", "AHU\x7f11", "AHU\u2028", "é", "\"", ","}
	flags := [][]string{nil, {"low_coverage"}, {"flat:entering_rh", "stuck,sensor"}, {"a\"b"}, {" lead"}, {""}}
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), math.Copysign(0, -1), 0, 5e-324, math.MaxFloat64,
		-math.MaxFloat64, 1e21, 1e-7, 123456785, 0.1 + 0.2, 99999999.5, -1.5}
	rng := rand.New(rand.NewPCG(3, 4))
	out := make([]metrics.Record, n)
	for i := range out {
		r := &out[i]
		r.HourStart = t0.Add(time.Duration(i) * time.Hour)
		if i%5 == 0 {
			r.HourStart = r.HourStart.In(time.FixedZone("site", -5*3600)) // written in UTC all the same
		}
		r.AHU = names[i%len(names)]
		r.Flags = flags[i%len(flags)]
		ptrs := r.FieldPtrs()
		k := 0
		for _, name := range metrics.FieldNames() {
			var v float64
			switch rng.IntN(3) {
			case 0:
				v = special[(i+k)%len(special)]
			case 1:
				v = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(30)-15))
			default:
				v = float64(rng.IntN(2000)) / 8
			}
			*ptrs[name] = v
			k++
		}
	}
	return out
}

// refCSV writes recs with encoding/csv, each value formatted as the
// writers have always formatted it: the text the CSV output must equal.
func refCSV(w io.Writer, recs []metrics.Record) error {
	cw := csv.NewWriter(w)
	header := append([]string{"hour_start", "ahu"}, metrics.FieldNames()...)
	if err := cw.Write(append(header, "flags")); err != nil {
		return err
	}
	for i := range recs {
		r := &recs[i]
		row := []string{r.HourStart.UTC().Format(time.RFC3339), r.AHU}
		for _, f := range r.Fields() {
			row = append(row, refNum(f.Value))
		}
		if err := cw.Write(append(row, strings.Join(r.Flags, " "))); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

func refNum(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 8, 64)
}

// refJSON writes recs as the JSON writer has always written them, string
// by string (strconv.Quote for names and flags).
func refJSON(recs []metrics.Record) string {
	var b strings.Builder
	b.WriteString("[")
	for i := range recs {
		r := &recs[i]
		if i > 0 {
			b.WriteString(",")
		}
		b.WriteString("\n  {\"hour_start\": " + strconv.Quote(r.HourStart.UTC().Format(time.RFC3339)) + ", \"ahu\": " + strconv.Quote(r.AHU))
		for _, f := range r.Fields() {
			s := refNum(f.Value)
			if s == "" {
				s = "null"
			}
			b.WriteString(", \"" + f.Name + "\": " + s)
		}
		b.WriteString(", \"flags\": [")
		for k, f := range r.Flags {
			if k > 0 {
				b.WriteString(", ")
			}
			b.WriteString(strconv.Quote(f))
		}
		b.WriteString("]}")
	}
	if len(recs) > 0 {
		b.WriteString("\n")
	}
	b.WriteString("]\n")
	return b.String()
}

func writeHourly(t testing.TB, format string, recs []metrics.Record) []byte {
	var buf bytes.Buffer
	w, err := NewHourlyWriter(&buf, format)
	require.NoError(t, err)
	for i := range recs {
		require.NoError(t, w.Write(&recs[i]))
	}
	require.NoError(t, w.Close())
	return buf.Bytes()
}

// The CSV text is byte for byte what encoding/csv writes for the same
// cells (the reference: encoding/csv itself, fed strconv.FormatFloat).
func TestHourlyWriter_CSVText(t *testing.T) {
	for _, n := range []int{0, 1, 500} {
		recs := textRecords(n)
		var want bytes.Buffer
		require.NoError(t, refCSV(&want, recs))
		got := writeHourly(t, "csv", recs)
		require.Equal(t, want.String(), string(got), "%d records", n)
	}
}

// The JSON text is byte for byte the one written string by string with
// strconv.Quote (the reference above).
func TestHourlyWriter_JSONText(t *testing.T) {
	for _, n := range []int{0, 1, 500} {
		recs := textRecords(n)
		got := writeHourly(t, "json", recs)
		require.Equal(t, refJSON(recs), string(got), "%d records", n)
	}
}

// Every field encoding/csv quotes is quoted here, and only those (the
// reference: a one-field row of encoding/csv, less its line end).
func TestAppendCSVField(t *testing.T) {
	cases := []string{"", "a", `\.`, `\.x`, "a,b", `a"b`, "a\rb", "a\nb", " a", "a ", "\ta", "\u0085a", "\u00a0a", "\u2029a",
		"\u3000a", "\x00a", "\xffa", "é", "a\"\"b", "\"", ","}
	for c := rune(0); c < 0x3100; c++ {
		cases = append(cases, string(c)+"x")
	}
	for _, s := range cases {
		var buf bytes.Buffer
		cw := csv.NewWriter(&buf)
		require.NoError(t, cw.Write([]string{s, "-"}))
		cw.Flush()
		want := strings.TrimSuffix(buf.String(), ",-\n")
		require.Equal(t, want, string(appendCSVField(nil, s)), "%q", s)
	}
}

// BenchmarkHourlyWriter writes an air handler-year of hours as CSV beside
// encoding/csv writing the same cells (the reference, in the same run):
// x_csv is the writer's time over encoding/csv's.
func BenchmarkHourlyWriter(b *testing.B) {
	recs := textRecords(8760)
	var refNs float64
	b.Run("encoding_csv", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if err := refCSV(io.Discard, recs); err != nil {
				b.Fatal(err)
			}
		}
		refNs = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
	})
	for _, format := range []string{"csv", "json"} {
		b.Run(format, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				w, err := NewHourlyWriter(io.Discard, format)
				if err != nil {
					b.Fatal(err)
				}
				for i := range recs {
					if err := w.Write(&recs[i]); err != nil {
						b.Fatal(err)
					}
				}
				if err := w.Close(); err != nil {
					b.Fatal(err)
				}
			}
			if refNs > 0 {
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/refNs, "x_csv")
			}
		})
	}
}
