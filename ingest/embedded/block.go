package embedded

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"math/bits"
)

// A sample block holds the samples of one series in one UTC day, encoded
// exactly: every millisecond time and every float64 bit pattern (so -0
// stays -0) comes back as it went in. The layout, version 1:
//
//	byte     format (1)
//	uvarint  n, the number of samples (n >= 1)
//	uvarint  first time - day start, in ms
//	runs     of (uvarint step ms >= 1, uvarint count >= 1): the n-1 gaps
//	         between consecutive times; a regular trend is one run
//	values   n times: x = bits XOR the previous value's bits (the first
//	         XORs 0); one byte lead<<4 | trail, the counts of x's leading
//	         and trailing zero bytes, then x's 8-lead-trail middle bytes,
//	         big-endian. An unchanged value is the single byte 0x80.
//
// Times in a block are strictly increasing. Trend values change little
// from one sample to the next, so their bits share the sign, the exponent
// and the top of the mantissa, and x has leading zero bytes; a regular
// one-minute series takes 3 to 9 bytes a sample instead of a row of its
// own.
const blockFormat = 1

// dayMs is a UTC day in milliseconds.
const dayMs = 24 * 60 * 60 * 1000

// errCorruptBlock marks a block that does not decode.
var errCorruptBlock = errors.New("corrupt sample block")

// point is a sample as a block holds it: Unix milliseconds and the value.
type point struct {
	ms int64
	v  float64
}

// dayOf returns the start of the UTC day of ms (floored, also before 1970).
func dayOf(ms int64) int64 {
	d := ms / dayMs
	if ms%dayMs < 0 {
		d--
	}
	return d * dayMs
}

// appendBlock appends the encoding of pts, which must be non-empty, in
// strictly increasing time and all within the UTC day that starts at day.
func appendBlock(dst []byte, day int64, pts []point) []byte {
	dst = append(dst, blockFormat)
	dst = binary.AppendUvarint(dst, uint64(len(pts)))
	dst = binary.AppendUvarint(dst, uint64(pts[0].ms-day))
	for i := 1; i < len(pts); {
		step := pts[i].ms - pts[i-1].ms
		j := i + 1
		for j < len(pts) && pts[j].ms-pts[j-1].ms == step {
			j++
		}
		dst = binary.AppendUvarint(dst, uint64(step))
		dst = binary.AppendUvarint(dst, uint64(j-i))
		i = j
	}
	var prev uint64
	for _, p := range pts {
		b := math.Float64bits(p.v)
		x := b ^ prev
		prev = b
		if x == 0 {
			dst = append(dst, 0x80)
			continue
		}
		lead, trail := bits.LeadingZeros64(x)/8, bits.TrailingZeros64(x)/8
		dst = append(dst, byte(lead<<4|trail))
		for k := 7 - lead; k >= trail; k-- {
			dst = append(dst, byte(x>>(8*k)))
		}
	}
	return dst
}

// decodeBlock appends the samples of the block that starts at day to dst.
// It checks the block against the day and against n, its sample count as
// the row records it, and refuses anything it cannot read exactly.
func decodeBlock(dst []point, day int64, n int, data []byte) ([]point, error) {
	br, err := openBlock(day, n, data)
	if err != nil {
		return dst, err
	}
	for br.more() {
		p, err := br.next()
		if err != nil {
			return dst, err
		}
		dst = append(dst, p)
	}
	return dst, br.end()
}

// blockReader reads a block's samples one at a time, without a buffer:
// one cursor walks the time runs, the other the values.
type blockReader struct {
	data       []byte
	tpos, vpos int
	left       int    // samples not read yet
	ms         int64  // the time of the sample read last
	step       int64  // the current run's step
	run        uint64 // gaps left in the current run
	prev       uint64 // the bits of the value read last
	started    bool
}

func corrupt(what string) error { return fmt.Errorf("%w: %s", errCorruptBlock, what) }

// openBlock checks the block's header and its time runs against the day
// and n, its sample count as the row records it.
func openBlock(day int64, n int, data []byte) (blockReader, error) {
	if len(data) == 0 {
		return blockReader{}, corrupt("empty")
	}
	if data[0] != blockFormat {
		return blockReader{}, corrupt(fmt.Sprintf("format %d, this dewline reads %d", data[0], blockFormat))
	}
	pos := 1
	uv := func() (uint64, bool) {
		v, k := binary.Uvarint(data[pos:])
		if k <= 0 {
			return 0, false
		}
		pos += k
		return v, true
	}
	count, ok := uv()
	if !ok || count == 0 || count != uint64(n) || count > dayMs {
		return blockReader{}, corrupt(fmt.Sprintf("holds %d samples, the row says %d", count, n))
	}
	off, ok := uv()
	if !ok || off >= dayMs {
		return blockReader{}, corrupt("first time outside the day")
	}
	br := blockReader{data: data, tpos: pos, left: n, ms: day + int64(off)}
	// Walk the runs once to check them and to find where the values start.
	last, gaps := br.ms, uint64(n-1)
	for gaps > 0 {
		step, ok1 := uv()
		k, ok2 := uv()
		if !ok1 || !ok2 || step == 0 || k == 0 || k > gaps || step >= dayMs {
			return blockReader{}, corrupt("times do not decode")
		}
		gaps -= k
		if last += int64(step * k); last >= day+dayMs {
			return blockReader{}, corrupt("a time past the day")
		}
	}
	br.vpos = pos
	return br, nil
}

// more reports whether a sample is left to read.
func (br *blockReader) more() bool { return br.left > 0 }

// next returns the next sample; call it only while more.
func (br *blockReader) next() (point, error) {
	if br.started {
		if br.run == 0 {
			// openBlock checked every run, so these decode.
			step, k := binary.Uvarint(br.data[br.tpos:])
			br.tpos += k
			run, k := binary.Uvarint(br.data[br.tpos:])
			br.tpos += k
			br.step, br.run = int64(step), run
		}
		br.ms += br.step
		br.run--
	}
	br.started = true
	br.left--
	data, pos := br.data, br.vpos
	if pos >= len(data) {
		return point{}, corrupt("values cut short")
	}
	h := data[pos]
	pos++
	if h != 0x80 {
		lead, trail := int(h>>4), int(h&0x0f)
		if lead+trail >= 8 {
			return point{}, corrupt(fmt.Sprintf("value header %#x", h))
		}
		m := 8 - lead - trail
		if pos+m > len(data) {
			return point{}, corrupt("values cut short")
		}
		var x uint64
		for _, c := range data[pos : pos+m] {
			x = x<<8 | uint64(c)
		}
		pos += m
		br.prev ^= x << (8 * trail)
	}
	br.vpos = pos
	return point{ms: br.ms, v: math.Float64frombits(br.prev)}, nil
}

// end checks, after the last sample, that nothing is left over.
func (br *blockReader) end() error {
	if br.vpos != len(br.data) {
		return corrupt(fmt.Sprintf("%d bytes left over", len(br.data)-br.vpos))
	}
	return nil
}
