package csvfile

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
)

func TestParseNumber(t *testing.T) {
	tests := []struct {
		in   string
		dec  byte
		want float64
		st   numStatus
	}{
		{"21.53", '.', 21.53, numOK},
		{"-0.5", '.', -0.5, numOK},
		{"+3", '.', 3, numOK},
		{".5", '.', 0.5, numOK},
		{"5.", '.', 5, numOK},
		{"1e3", '.', 1000, numOK},
		{"1.5E-2", '.', 0.015, numOK},
		{"21,5", ',', 21.5, numOK},
		{"-1,25e1", ',', -12.5, numOK},
		{"1234567890123456789", '.', 1234567890123456789, numOK}, // past the fast path
		{"0.1000000000000000055511151231257827", '.', 0.1, numOK},
		{"", '.', 0, numMissing},
		{"NaN", '.', 0, numMissing},
		{"null", '.', 0, numMissing},
		{"---", '.', 0, numMissing},
		{"-", '.', 0, numMissing},
		{"#N/A", '.', 0, numMissing},
		{"n/a", '.', 0, numMissing},
		{"On", '.', 1, numBool},
		{"TRUE", '.', 1, numBool},
		{"active", '.', 1, numBool},
		{"Off", '.', 0, numBool},
		{"Inactive", '.', 0, numBool},
		{"21,5", '.', 0, numDecSep},
		{"1,234.5", '.', 0, numDecSep},
		{"12.000", ',', 0, numDecSep},
		{"Comm Fail", '.', 0, numNotNum},
		{"inf", '.', 0, numNotNum},
		{"0x1p3", '.', 0, numNotNum},
		{"1_000", '.', 0, numNotNum},
		{"72 °F", '.', 0, numNotNum},
		{".", '.', 0, numNotNum},
		{"1e999", '.', 0, numNotFinite},
		{"-1e999", '.', 0, numNotFinite},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			got, st := parseNumber([]byte(tt.in), tt.dec)
			assert.Equal(t, tt.st, st)
			assert.InDelta(t, tt.want, got, exact)
		})
	}
	v, _ := parseNumber([]byte("-0"), '.')
	assert.True(t, math.Signbit(v), "-0 keeps its sign, as strconv does")
}

// randomDecimal writes decimals of the kinds trend logs hold.
func randomDecimal(rng *rand.Rand) string {
	switch rng.IntN(4) {
	case 0:
		return strconv.Itoa(rng.IntN(10_000_000))
	case 1:
		return strconv.FormatFloat(rng.Float64()*1000, 'f', rng.IntN(6)+1, 64)
	case 2:
		return strconv.FormatFloat(-rng.Float64()*50, 'f', rng.IntN(3), 64)
	}
	return strconv.FormatFloat(rng.Float64()*1e6, 'f', rng.IntN(10), 64)
}

// TestParseNumber_Strconv: the fast paths give strconv.ParseFloat's result
// to the bit, for both separators.
func TestParseNumber_Strconv(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for range 200_000 {
		s := randomDecimal(rng)
		want, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatal(err)
		}
		got, st := parseNumber([]byte(s), '.')
		if st != numOK || math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("%q: got %v (%d), want %v", s, got, st, want)
		}
		c := []byte(s)
		for i := range c {
			if c[i] == '.' {
				c[i] = ','
			}
		}
		if got, st = parseNumber(c, ','); st != numOK || math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("%q: got %v (%d), want %v", c, got, st, want)
		}
	}
}

// TestReader_FastDecimals: the one-pass row parser gives
// strconv.ParseFloat's result to the bit, and takes every row of plain
// decimals.
func TestReader_FastDecimals(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	var b strings.Builder
	var want []float64
	b.WriteString("Time,A,B,C\n")
	const rows = 50_000
	for range rows {
		b.WriteString("2026-07-14T13:00:00Z")
		for range 3 {
			s := randomDecimal(rng)
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatal(err)
			}
			want = append(want, v)
			b.WriteString("," + s)
		}
		b.WriteString("\n")
	}
	r, err := NewReader(strings.NewReader(b.String()), "x.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	for i, rec := range readAll(t, r) {
		if math.Float64bits(rec.Value) != math.Float64bits(want[i]) {
			t.Fatalf("line %d: got %v, want %v", rec.Line, rec.Value, want[i])
		}
	}
	assert.Equal(t, rows, r.fastRows, "every row on the fast path")
	assert.Equal(t, 3*rows, r.Stats().Records)
}
