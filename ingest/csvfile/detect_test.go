package csvfile

import (
	"bytes"
	"compress/gzip"
	"fmt"
	"io"
	"strings"
	"testing"
	"time"
	"unicode/utf16"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
)

// stream hides Seek, as a pipe or a network body would.
type stream struct{ r io.Reader }

func (s stream) Read(p []byte) (int, error) { return s.r.Read(p) }

func newString(t *testing.T, in string, opt Options) (*Reader, error) {
	t.Helper()
	return NewReader(stream{strings.NewReader(in)}, "test.csv", opt)
}

type got struct {
	series string
	at     time.Time
	v      float64
}

func readGot(t *testing.T, r *Reader) []got {
	t.Helper()
	var out []got
	for _, rec := range readAll(t, r) {
		out = append(out, got{rec.Series, rec.Time.UTC(), rec.Value})
	}
	return out
}

func TestReader_Delimiter(t *testing.T) {
	tests := []struct {
		name  string
		in    string
		opt   Options
		delim rune
		want  []got
	}{
		{"comma", "Time,A,B\n2026-07-14T13:00:00Z,1.5,2\n", Options{}, ',',
			[]got{{"A", utc(2026, 7, 14, 13, 0, 0, 0), 1.5}, {"B", utc(2026, 7, 14, 13, 0, 0, 0), 2}}},
		{"semicolon with decimal commas", "Time;A;B\n2026-07-14T13:00:00Z;1,5;2,25\n2026-07-14T13:01:00Z;3,5;4\n", Options{}, ';',
			[]got{{"A", utc(2026, 7, 14, 13, 0, 0, 0), 1.5}, {"B", utc(2026, 7, 14, 13, 0, 0, 0), 2.25},
				{"A", utc(2026, 7, 14, 13, 1, 0, 0), 3.5}, {"B", utc(2026, 7, 14, 13, 1, 0, 0), 4}}},
		{"tab", "Time\tA\n2026-07-14T13:00:00Z\t7\n", Options{}, '\t', []got{{"A", utc(2026, 7, 14, 13, 0, 0, 0), 7}}},
		{"pipe", "Time|A\n2026-07-14T13:00:00Z|7\n", Options{}, '|', []got{{"A", utc(2026, 7, 14, 13, 0, 0, 0), 7}}},
		{"forced", "Time;A,B\n2026-07-14T13:00:00Z;7,5\n", Options{Delimiter: ';', DecimalComma: Yes}, ';',
			[]got{{"A,B", utc(2026, 7, 14, 13, 0, 0, 0), 7.5}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, err := newString(t, tt.in, tt.opt)
			require.NoError(t, err)
			assert.Equal(t, tt.delim, r.Detected().Delimiter)
			assert.Equal(t, tt.want, readGot(t, r))
		})
	}
}

func TestReader_DecimalSeparator(t *testing.T) {
	const head = "Time;A\n"
	row := func(v string) string { return "2026-07-14T13:00:00Z;" + v + "\n" }
	tests := []struct {
		name    string
		in      string
		opt     Options
		comma   bool
		wantErr error
	}{
		{"comma", head + row("21,5"), Options{}, true, nil},
		{"point", head + row("21.5"), Options{}, false, nil},
		{"integers only", head + row("21") + row("22"), Options{}, false, nil},
		{"thousands or decimal", head + row("12.000") + row("11.500"), Options{}, false, ErrAmbiguousDecimal},
		{"thousands or decimal, comma", head + row("12,000"), Options{}, false, ErrAmbiguousDecimal},
		{"told by a cell", head + row("12.000") + row("11.5"), Options{}, false, nil},
		{"mixed", head + row("21,5") + row("21.5"), Options{}, false, ErrAmbiguousDecimal},
		{"option", head + row("12,000"), Options{DecimalComma: Yes}, true, nil},
		{"comma file, three decimals", "Time,A\n2026-07-14T13:00:00Z,12.000\n", Options{}, false, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, err := newString(t, tt.in, tt.opt)
			if tt.wantErr != nil {
				require.ErrorIs(t, err, tt.wantErr)
				assert.Contains(t, err.Error(), "Options.DecimalComma")
				return
			}
			require.NoError(t, err)
			assert.Equal(t, tt.comma, r.Detected().DecimalComma)
		})
	}

	t.Run("majority", func(t *testing.T) {
		in := head + strings.Repeat(row("21.5"), 9) + row("\"48,9\"")
		r, err := newString(t, in, Options{})
		require.NoError(t, err)
		assert.False(t, r.Detected().DecimalComma)
		assert.Len(t, readAll(t, r), 9)
		assert.Equal(t, map[Reason]int{ReasonDecimalSep: 1}, r.Stats().Rejected)
	})
}

func TestReader_DateOrder(t *testing.T) {
	tests := []struct {
		name     string
		in       string
		opt      Options
		dayFirst bool
		first    time.Time
		wantErr  error
	}{
		{"day above 12 first", "Time,A\n14/07/2026 13:05,1\n", Options{}, true, utc(2026, 7, 14, 13, 5, 0, 0), nil},
		{"day above 12 second", "Time,A\n07/14/2026 1:05 PM,1\n", Options{}, false, utc(2026, 7, 14, 13, 5, 0, 0), nil},
		{"dots are day-first", "Time,A\n04.07.2026 13:05,1\n", Options{}, true, utc(2026, 7, 4, 13, 5, 0, 0), nil},
		{"dashes, year last", "Time,A\n04-07-2026 13:05,1\n04-07-2026 13:06,1\n", Options{}, false, time.Time{}, ErrAmbiguousDate},
		{"ambiguous", "Time,A\n04/07/2026 13:05,1\n05/07/2026 13:05,1\n", Options{}, false, time.Time{}, ErrAmbiguousDate},
		{"option yes", "Time,A\n04/07/2026 13:05,1\n", Options{DayFirst: Yes}, true, utc(2026, 7, 4, 13, 5, 0, 0), nil},
		{"option no", "Time,A\n04/07/2026 13:05,1\n", Options{DayFirst: No}, false, utc(2026, 4, 7, 13, 5, 0, 0), nil},
		{"contradiction", "Time,A\n14/07/2026 13:05,1\n07/15/2026 13:05,1\n", Options{}, false, time.Time{}, ErrAmbiguousDate},
		{"day equals month", "Time,A\n07/07/2026 13:05,1\n", Options{}, false, utc(2026, 7, 7, 13, 5, 0, 0), nil},
		{"two-digit year, 12 AM", "Time,A\n7/14/26 12:05 AM,1\n", Options{}, false, utc(2026, 7, 14, 0, 5, 0, 0), nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tt.opt.Location = time.UTC
			r, err := newString(t, tt.in, tt.opt)
			if tt.wantErr != nil {
				require.ErrorIs(t, err, tt.wantErr)
				assert.Contains(t, err.Error(), "DayFirst")
				return
			}
			require.NoError(t, err)
			assert.Equal(t, tt.dayFirst, r.Detected().DayFirst)
			recs := readAll(t, r)
			require.NotEmpty(t, recs)
			assert.True(t, tt.first.Equal(recs[0].Time), "got %s", recs[0].Time)
		})
	}
}

// TestReader_DateOrderScan: the head (128 KiB) holds only 1 to 12 March
// written day first; the 13th comes later. A seekable input is scanned to
// the 13th and rewound; a stream is refused.
func TestReader_DateOrderScan(t *testing.T) {
	var b strings.Builder
	b.WriteString("Time,SAT\n")
	start := utc(2026, 3, 1, 0, 0, 0, 0)
	const rows = 13 * 24 * 60
	for i := range rows {
		ts := start.Add(time.Duration(i) * time.Minute)
		fmt.Fprintf(&b, "%02d/%02d/%d %02d:%02d,%d\n", ts.Day(), ts.Month(), ts.Year(), ts.Hour(), ts.Minute(), i%50)
	}
	in := b.String()
	require.Greater(t, 12*24*60*len("01/03/2026 00:00,1\n"), bufSize, "the head must hold no 13th")

	r, err := NewReader(strings.NewReader(in), "long.csv", Options{Location: time.UTC})
	require.NoError(t, err)
	assert.True(t, r.Detected().DayFirst)
	assert.Contains(t, r.Detected().DateOrderBy, fmt.Sprintf("line %d", 12*24*60+2), "the first row of 13 March")
	recs := readAll(t, r)
	require.Len(t, recs, rows)
	assert.True(t, recs[0].Time.Equal(start))
	assert.True(t, recs[rows-1].Time.Equal(utc(2026, 3, 13, 23, 59, 0, 0)))

	_, err = newString(t, in, Options{Location: time.UTC})
	assert.ErrorIs(t, err, ErrAmbiguousDate)
}

func TestSplitNameUnit(t *testing.T) {
	tests := []struct{ in, name, unit string }{
		{"Supply Temp (°F)", "Supply Temp", "°F"},
		{"SAT [degC]", "SAT", "degC"},
		{"Flow, CFM", "Flow", "CFM"},
		{"Temp, °F", "Temp", "°F"},
		{"SAT °F", "SAT", "°F"},
		{"Reheat Valve %", "Reheat Valve", "%"},
		{"Outdoor Air Flow m3/h", "Outdoor Air Flow", "m3/h"},
		{"RH [%RH]", "RH", "%RH"},
		{"Duct Pressure (inHg)", "Duct Pressure", "inHg"},
		{"AHU-1 (North)", "AHU-1 (North)", ""}, // not a unit
		{"Zone, C", "Zone, C", ""},             // one letter after a comma: not trusted
		{"Snack Bar", "Snack Bar", ""},         // an English word is not taken as a unit
		{"Fan kW", "Fan kW", ""},               // a bare word unit is not split off
		{"(°F)", "(°F)", ""},                   // nothing left for a name
		{"Coil [ppm]", "Coil [ppm]", ""},       // unknown unit
		{"  Supply Temp  ( °F )  ", "Supply Temp", "°F"},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			name, unit := splitNameUnit(tt.in)
			assert.Equal(t, tt.name, name)
			assert.Equal(t, tt.unit, unit)
		})
	}
}

func TestReader_Header(t *testing.T) {
	t.Run("preamble", func(t *testing.T) {
		in := "Ridgeview Library trend export\nExported 2026-07-15\n\nTime,SAT (°F)\n2026-07-14T13:00:00Z,55.1\n"
		r, err := newString(t, in, Options{})
		require.NoError(t, err)
		assert.Equal(t, 4, r.Detected().HeaderLine)
		recs := readAll(t, r)
		require.Len(t, recs, 1)
		assert.Equal(t, 5, recs[0].Line)
	})
	t.Run("trailing delimiters", func(t *testing.T) {
		r, err := newString(t, "Time,A,B,\n2026-07-14T13:00:00Z,1,2,\n", Options{})
		require.NoError(t, err)
		assert.Len(t, r.Columns(), 2)
		assert.Len(t, readAll(t, r), 2)
	})
	t.Run("header only", func(t *testing.T) {
		r, err := newString(t, "Time,A,B\n", Options{})
		require.NoError(t, err)
		_, err = r.Next()
		assert.ErrorIs(t, err, io.EOF)
	})
	t.Run("unit row and header agree", func(t *testing.T) {
		r, err := newString(t, "Time,SAT (°F)\n,degF\n2026-07-14T13:00:00Z,55\n", Options{})
		require.NoError(t, err)
		assert.Equal(t, "degF", r.Columns()[0].Unit)
	})

	errs := []struct {
		name, in, detail string
		wantErr          error
	}{
		{"unit conflict", "Time,SAT (°F)\n,°C\n2026-07-14T13:00:00Z,55\n", "unit row", ErrHeader},
		{"duplicate", "Time,SAT (°F),SAT [°C]\n2026-07-14T13:00:00Z,55,13\n", "both named", ErrHeader},
		{"no name", "Time,,B\n2026-07-14T13:00:00Z,55,13\n", "no name", ErrHeader},
		{"no time column", "Point A,Point B\n1,2\n", "Options.TimeColumn", ErrNoTimeColumn},
		{"named time column wrong", "A,B\n2026-07-14T13:00:00Z,55\n", "no column named", ErrNoTimeColumn},
		{"bad timestamps", "Time,A\nyesterday,1\nnoon,2\n", "yesterday", ErrTimeFormat},
		{"no delimiter", "just one column\n2026\n", "", ErrNoDelimiter},
		{"needs location", "Time,A\n2026-07-14 13:00,1\n", "America/New_York", ErrNeedLocation},
	}
	for _, tt := range errs {
		t.Run(tt.name, func(t *testing.T) {
			opt := Options{}
			if tt.name == "named time column wrong" {
				opt.TimeColumn = "Zeit"
			}
			_, err := newString(t, tt.in, opt)
			require.ErrorIs(t, err, tt.wantErr)
			assert.Contains(t, err.Error(), tt.detail)
			assert.Contains(t, err.Error(), "test.csv")
		})
	}
}

func TestReader_TimeColumn(t *testing.T) {
	tests := []struct {
		name string
		in   string
		opt  Options
		col  string
		at   time.Time
	}{
		{"by name, not first", "SAT,Timestamp (UTC)\n55,2026-07-14 13:00:00\n", Options{}, "Timestamp (UTC)", utc(2026, 7, 14, 13, 0, 0, 0)},
		{"by option", "SAT,Logged\n55,2026-07-14 13:00:00\n", Options{TimeColumn: "logged"}, "Logged", utc(2026, 7, 14, 13, 0, 0, 0)},
		{"date and time apart", "Date,Time,SAT\n07/14/2026,1:05:30 PM,55\n", Options{}, "Date + Time", utc(2026, 7, 14, 13, 5, 30, 0)},
		{"date only", "Date,Energy\n2026-07-14,812.5\n", Options{}, "Date", utc(2026, 7, 14, 0, 0, 0, 0)},
		{"end of day", "Time,Energy\n2026-07-14 24:00,812.5\n", Options{}, "Time", utc(2026, 7, 15, 0, 0, 0, 0)},
		{"unix seconds", "t,A\n1784034000.25,1\n", Options{}, "t", utc(2026, 7, 14, 13, 0, 0, 250_000_000)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tt.opt.Location = time.UTC
			r, err := newString(t, tt.in, tt.opt)
			require.NoError(t, err)
			assert.Equal(t, tt.col, r.Detected().TimeColumn)
			recs := readAll(t, r)
			require.Len(t, recs, 1)
			assert.True(t, tt.at.Equal(recs[0].Time), "got %s", recs[0].Time)
		})
	}
}

// TestReader_Quotes: RFC 4180 quoting, with line numbers that count the
// line breaks inside quoted fields.
func TestReader_Quotes(t *testing.T) {
	in := "Time,\"AHU-1 \"\"North\"\"\nSupply Temp (°F)\",\"Flow, CFM\"\n" + // lines 1-2
		"2026-07-14T13:00:00Z,\"55.5\",\"1200\"\n" + // 3
		"\"2026-07-14T13:01:00Z\", \"55.6\" ,1210\n" + // 4: spaces around quotes
		"2026-07-14T13:02:00Z,\"55\"7\",1220\n" + // 5: text after a closing quote
		"2026-07-14T13:03:00Z,55.8,\"12\n30\"\n" + // 6-7: a line break inside a value
		"2026-07-14T13:04:00Z,55.9,1240\n" + // 8
		"2026-07-14T13:05:00Z,56.0,\"1250" // 9: unterminated at the end
	r, err := newString(t, in, Options{})
	require.NoError(t, err)
	cols := r.Columns()
	require.Len(t, cols, 2)
	assert.Equal(t, Column{Index: 1, Header: "AHU-1 \"North\"\nSupply Temp (°F)", Name: "AHU-1 \"North\"\nSupply Temp", Unit: "°F", UnitLine: 1}, cols[0])
	assert.Equal(t, Column{Index: 2, Header: "Flow, CFM", Name: "Flow", Unit: "CFM", UnitLine: 1}, cols[1])

	var lines []int
	var vals []float64
	for _, rec := range readAll(t, r) {
		lines = append(lines, rec.Line)
		vals = append(vals, rec.Value)
	}
	assert.Equal(t, []int{3, 3, 4, 4, 6, 8, 8}, lines)
	assert.Equal(t, []float64{55.5, 1200, 55.6, 1210, 55.8, 55.9, 1240}, vals)
	s := r.Stats()
	assert.Equal(t, map[Reason]int{ReasonQuotes: 1, ReasonNotNumeric: 1, ReasonTruncated: 1}, s.Rejected)
	require.Len(t, s.Examples, 3)
	assert.Equal(t, 5, s.Examples[0].Line)
	assert.Equal(t, Rejection{File: "test.csv", Line: 6, Column: "Flow", Reason: ReasonNotNumeric, Text: "12\n30"}, s.Examples[1])
	assert.Equal(t, 9, s.Examples[2].Line)
}

func TestReader_Encodings(t *testing.T) {
	const text = "Time,SAT (°F)\r\n2026-07-14T13:00:00Z,55.5\r\n"
	want := []got{{"SAT", utc(2026, 7, 14, 13, 0, 0, 0), 55.5}}

	utf16le := []byte{0xff, 0xfe}
	for _, u := range utf16.Encode([]rune(text)) {
		utf16le = append(utf16le, byte(u), byte(u>>8))
	}
	utf16be := []byte{0xfe, 0xff}
	for _, u := range utf16.Encode([]rune(text)) {
		utf16be = append(utf16be, byte(u>>8), byte(u))
	}
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	_, _ = zw.Write([]byte(text))
	require.NoError(t, zw.Close())
	latin1 := []byte(strings.ReplaceAll(text, "°", "\xb0"))

	tests := []struct {
		name string
		in   []byte
		enc  string
	}{
		{"utf-8 crlf", []byte(text), "UTF-8"},
		{"utf-8 bom", append([]byte("\xef\xbb\xbf"), text...), "UTF-8 with byte-order mark"},
		{"utf-16le", utf16le, "UTF-16LE"},
		{"utf-16be", utf16be, "UTF-16BE"},
		{"gzip", gz.Bytes(), "UTF-8 in gzip"},
		{"latin-1 header", latin1, "UTF-8; header read as ISO 8859-1"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, err := NewReader(bytes.NewReader(tt.in), "enc.csv", Options{})
			require.NoError(t, err)
			assert.Equal(t, tt.enc, r.Detected().Encoding)
			assert.Equal(t, "°F", r.Columns()[0].Unit)
			assert.Equal(t, want, readGot(t, r))
		})
	}
}

func TestReader_NotText(t *testing.T) {
	tests := []struct {
		name    string
		in      []byte
		wantErr error
		detail  string
	}{
		{"blank lines", []byte("\n \n\n"), ErrEmpty, "blank"},
		{"xls", []byte("\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1rest"), ErrNotText, ".xls"},
		{"pdf", []byte("%PDF-1.7\n"), ErrNotText, "PDF"},
		{"xml", []byte("<?xml version=\"1.0\"?>\n<Workbook/>"), ErrNotText, "XML"},
		{"html without doctype", []byte("\n  <HTML><body>Please sign in again</body></HTML>"), ErrNotText, "HTML"},
		{"binary", []byte("Time,A\n\x00\x01\x02\x03"), ErrNotText, "NUL"},
		{"bare CR", []byte("Time,A\r2026-07-14T13:00:00Z,1\r2026-07-14T13:01:00Z,2\r"), ErrNotText, "carriage return"},
		{"damaged gzip", []byte("\x1f\x8b\x08"), ErrNotText, "gzip"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := NewReader(bytes.NewReader(tt.in), "x.csv", Options{})
			require.ErrorIs(t, err, tt.wantErr)
			assert.Contains(t, err.Error(), tt.detail)
		})
	}
}

func TestReader_Options(t *testing.T) {
	_, err := newString(t, "Time,A\n", Options{Delimiter: '"', Layout: 7, DayFirst: 9})
	var oe *OptionsError
	require.ErrorAs(t, err, &oe)
	assert.Len(t, oe.Problems, 3, "all problems at once")
}

// TestReader_LongFoldPerPoint: a long file sorted by point crosses the US
// fall-back hour once per point. Each point's pass is resolved on its own:
// a step back in wall time inside the repeated hour switches that point to
// EST, and the next point starts again in EDT. A repeated timestamp is no
// step back.
func TestReader_LongFoldPerPoint(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	in := "Time,Point,Value\n" +
		"2026-11-01 01:15,SAT,1\n2026-11-01 01:45,SAT,2\n2026-11-01 01:45,SAT,3\n2026-11-01 01:15,SAT,4\n2026-11-01 02:30,SAT,5\n" +
		"2026-11-01 01:15,RAT,6\n2026-11-01 01:45,RAT,7\n2026-11-01 01:15,RAT,8\n2026-11-01 01:15,RAT,9\n"
	r, err := newString(t, in, Options{Location: ny})
	require.NoError(t, err)
	edt15, edt45, est15 := utc(2026, 11, 1, 5, 15, 0, 0), utc(2026, 11, 1, 5, 45, 0, 0), utc(2026, 11, 1, 6, 15, 0, 0)
	assert.Equal(t, []got{
		{"SAT", edt15, 1}, {"SAT", edt45, 2}, {"SAT", edt45, 3}, {"SAT", est15, 4}, {"SAT", utc(2026, 11, 1, 7, 30, 0, 0), 5},
		{"RAT", edt15, 6}, {"RAT", edt45, 7}, {"RAT", est15, 8}, {"RAT", est15, 9},
	}, readGot(t, r))
	assert.Equal(t, DST{Repeated: 8, RepeatedEarlier: 5, RepeatedLater: 3}, r.Stats().DST)
}

func TestReader_Read(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	for _, size := range []int{1, 3, 5, 1000} {
		t.Run(fmt.Sprint(size), func(t *testing.T) {
			want := readAll(t, mustFixture(t, "ridgeview-ahu1-fallback.csv", Options{Location: ny}))
			r := mustFixture(t, "ridgeview-ahu1-fallback.csv", Options{Location: ny})
			var all []ingest.Record
			dst := make([]ingest.Record, size)
			for {
				n, err := r.Read(dst)
				all = append(all, dst[:n]...)
				if err == io.EOF {
					break
				}
				require.NoError(t, err)
				require.Positive(t, n)
			}
			assert.Equal(t, want, all)
			assert.Equal(t, len(want), r.Stats().Records)
		})
	}
}

// TestReader_TooLong: a record far over the 1 MiB limit is rejected and the
// reader carries on at the next line.
func TestReader_TooLong(t *testing.T) {
	in := "Time,A\n2026-07-14T13:00:00Z,1\n2026-07-14T13:01:00Z,\"" + strings.Repeat("9", 2*maxRecordBytes) + "\"\n2026-07-14T13:02:00Z,3\n"
	r, err := newString(t, in, Options{})
	require.NoError(t, err)
	recs := readAll(t, r)
	require.Len(t, recs, 2)
	assert.Equal(t, 4, recs[1].Line)
	assert.Equal(t, map[Reason]int{ReasonTooLong: 1}, r.Stats().Rejected)
}
