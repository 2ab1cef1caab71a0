package embedded

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestBlock_Encoding checks a small block against bytes worked out by hand
// from the layout in block.go: three samples a minute apart from the day's
// start, all 1.0.
func TestBlock_Encoding(t *testing.T) {
	pts := []point{{0, 1}, {60000, 1}, {120000, 1}}
	want := []byte{
		0x01,             // format
		0x03,             // n
		0x00,             // first time - day start
		0xe0, 0xd4, 0x03, // step 60000 = 0x60 | 468<<7, 468 = 0x54 | 3<<7
		0x02,             // of 2 gaps
		0x06, 0x3f, 0xf0, // 1.0 = 0x3ff0000000000000: no leading, 6 trailing zero bytes
		0x80, 0x80, // unchanged twice
	}
	assert.Equal(t, want, appendBlock(nil, 0, pts))
	got, err := decodeBlock(nil, 0, 3, want)
	require.NoError(t, err)
	assert.Equal(t, pts, got)
}

// TestBlock_RoundTrip: every time and every bit pattern comes back.
func TestBlock_RoundTrip(t *testing.T) {
	day := int64(19905) * dayMs // 2024-07-01, as in store_test.go
	vals := []float64{math.Copysign(0, -1), 0, 5e-324, -5e-324, math.MaxFloat64, -math.MaxFloat64,
		math.SmallestNonzeroFloat64 * 3, 12.5, 12.5, 12.345678901234567, -40, 1e-300, 1 << 53, 0.1}
	var pts []point
	ms := day
	for i, v := range vals {
		pts = append(pts, point{ms: ms, v: v})
		ms += int64(1 + i%3*59999) // steps of 1 ms and one minute, in runs
	}
	pts = append(pts, point{ms: day + dayMs - 1, v: 3}) // the day's last millisecond
	data := appendBlock(nil, day, pts)
	got, err := decodeBlock([]point{{ms: -1}}, day, len(pts), data)
	require.NoError(t, err)
	require.Len(t, got, len(pts)+1, "appended after what dst held")
	for i, p := range pts {
		assert.Equal(t, p.ms, got[i+1].ms, "time %d", i)
		assert.Equal(t, math.Float64bits(p.v), math.Float64bits(got[i+1].v), "value %d (%v)", i, p.v)
	}
	// Before 1970 the day start is floored, never rounded towards zero.
	assert.Equal(t, int64(-dayMs), dayOf(-1))
	assert.Equal(t, int64(0), dayOf(dayMs-1))
}

func TestBlock_Corrupt(t *testing.T) {
	good := appendBlock(nil, 0, []point{{0, 1}, {60000, 2}, {120000, 3}})
	tests := []struct {
		name string
		n    int
		data []byte
		want string
	}{
		{"empty", 3, nil, "empty"},
		{"other format", 3, append([]byte{2}, good[1:]...), "format 2"},
		{"count differs from the row", 4, good, "the row says 4"},
		{"cut short", 3, good[:len(good)-1], "cut short"},
		{"bytes left over", 3, append(good[:len(good):len(good)], 0), "left over"},
		{"past the day", 3, []byte{1, 3, 0, 0x80, 0xdc, 0xcc, 0x14, 2, 0x80, 0x80, 0x80}, "past the day"}, // two steps of 43200000 ms, half a day
		{"bad value header", 1, []byte{1, 1, 0, 0x44}, "header"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := decodeBlock(nil, 0, tt.n, tt.data)
			require.ErrorIs(t, err, errCorruptBlock)
			assert.Contains(t, err.Error(), tt.want)
		})
	}
}
