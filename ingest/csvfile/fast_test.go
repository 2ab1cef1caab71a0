package csvfile

import (
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestReader_FastPath: the one-pass row parser and the general path give
// the same records and counts on rows mixing plain decimals with every
// kind of cell the fast path hands over (missing, text, exponents, long
// numbers, signs, spaces, extra fields), across the fall-back hour.
func TestReader_FastPath(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	rng := rand.New(rand.NewPCG(7, 8))
	cells := []func() string{
		func() string { return randomDecimal(rng) },
		func() string { return randomDecimal(rng) },
		func() string { return randomDecimal(rng) },
		func() string { return "" },
		func() string { return "NaN" },
		func() string { return "Off" },
		func() string { return "Comm Fail" },
		func() string { return "1.5e2" },
		func() string { return " 21.5 " },
		func() string { return "+3.25" },
		func() string { return "12345678901234567" },
		func() string { return "21,5" },
	}
	for _, form := range []string{"2006-01-02 15:04:05", time.RFC3339} {
		t.Run(form, func(t *testing.T) {
			var b strings.Builder
			b.WriteString("Timestamp,A,B,C\n")
			at := time.Date(2026, 10, 31, 22, 0, 0, 0, ny)
			for i := range 3000 {
				b.WriteString(at.Add(time.Duration(i) * 10 * time.Second).Format(form))
				for range 3 {
					b.WriteString("," + cells[rng.IntN(len(cells))]())
				}
				if rng.IntN(50) == 0 {
					b.WriteString(",")
				}
				if rng.IntN(80) == 0 {
					b.WriteString(",7")
				}
				b.WriteString("\n")
			}
			in := b.String()
			fast, err := newString(t, in, Options{Location: ny, DecimalComma: No})
			require.NoError(t, err)
			require.True(t, fast.fast)
			slow, err := newString(t, in, Options{Location: ny, DecimalComma: No})
			require.NoError(t, err)
			slow.fast, slow.sp.lazy = false, false
			assert.Equal(t, readAll(t, slow), readAll(t, fast))
			assert.Equal(t, slow.Stats(), fast.Stats())
			if form != time.RFC3339 {
				assert.Positive(t, fast.Stats().DST.RepeatedLater, "the test crosses the repeated hour")
			}
		})
	}
}

// TestReader_Streaming: memory does not grow with the file: reading ten
// times as many rows allocates no more.
func TestReader_Streaming(t *testing.T) {
	gen := func(rows int) string {
		var b strings.Builder
		b.WriteString("Timestamp,A,B\n")
		at := utc(2026, 1, 1, 0, 0, 0, 0)
		for i := range rows {
			b.WriteString(at.Add(time.Duration(i)*time.Minute).Format("2006-01-02 15:04:05") + "," + strconv.Itoa(i%97) + ".5,-" + strconv.Itoa(i%13) + "\n")
		}
		return b.String()
	}
	allocs := func(in string) float64 {
		return testing.AllocsPerRun(3, func() {
			r, err := NewReader(strings.NewReader(in), "x.csv", Options{Location: time.UTC})
			if err != nil {
				t.Fatal(err)
			}
			for {
				if _, err := r.Next(); err != nil {
					return
				}
			}
		})
	}
	small, large := allocs(gen(20_000)), allocs(gen(200_000))
	assert.LessOrEqual(t, large, small+5, "allocations for 200k rows (%v) vs 20k rows (%v)", large, small)
}
