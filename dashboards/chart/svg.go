package chart

import (
	"errors"
	"hash/fnv"
	"io"
	"math"
	"strconv"
	"unicode/utf8"
)

// errNotFinite marks a coordinate that was NaN or infinite when it reached
// the writer. Charts filter such values before drawing, so this is a bug in
// the package; the writer substitutes 0 and the render fails with it rather
// than put "NaN" into the page.
var errNotFinite = errors.New("chart: internal error: a coordinate was not a finite number")

// svgBuf collects one SVG document in memory; it is written out in one call
// at the end so that a failed render writes nothing.
type svgBuf struct {
	b   []byte
	err error
}

func (s *svgBuf) str(x string) { s.b = append(s.b, x...) }

// esc writes x escaped for XML text and attribute values.
func (s *svgBuf) esc(x string) { s.b = appendEsc(s.b, x) }

// attr writes ` name="value"` with the value escaped.
func (s *svgBuf) attr(name, value string) {
	s.b = append(s.b, ' ')
	s.b = append(s.b, name...)
	s.b = append(s.b, '=', '"')
	s.b = appendEsc(s.b, value)
	s.b = append(s.b, '"')
}

// num writes v rounded to 0.1 (user-space pixels), shortest form.
func (s *svgBuf) num(v float64) { s.b = appendTenths(s.b, s.tenths(v), false) }

// numAttr writes ` name="v"` with v rounded to 0.1.
func (s *svgBuf) numAttr(name string, v float64) {
	s.b = append(s.b, ' ')
	s.b = append(s.b, name...)
	s.b = append(s.b, '=', '"')
	s.num(v)
	s.b = append(s.b, '"')
}

// tenths converts a user-space coordinate to integer tenths, recording an
// error (and returning 0) for NaN or infinite input and clamping absurd
// magnitudes so the integer cannot overflow.
func (s *svgBuf) tenths(v float64) int64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		if s.err == nil {
			s.err = errNotFinite
		}
		return 0
	}
	const limit = 1e9 // a billion pixels: far outside any view box
	v = math.Max(-limit, math.Min(limit, v))
	return int64(math.Round(v * 10))
}

// fixed writes v with at most dec decimals, trailing zeros removed; used for
// data attributes and labels. Non-finite values record an error.
func (s *svgBuf) fixed(v float64, dec int) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		if s.err == nil {
			s.err = errNotFinite
		}
		v = 0
	}
	s.b = appendFixed(s.b, v, dec)
}

// flush writes the document to w.
func (s *svgBuf) flush(w io.Writer) error {
	if s.err != nil {
		return s.err
	}
	_, err := w.Write(s.b)
	return err
}

// appendTenths writes n/10 in its shortest decimal form: 12.3, -4, 0.5. In
// path data (short true) the leading zero of a fraction is dropped (.5, -.5),
// which the SVG path grammar allows.
func appendTenths(b []byte, n int64, short bool) []byte {
	if n < 0 {
		b = append(b, '-')
		n = -n
	}
	ip, fp := n/10, n%10
	if ip != 0 || fp == 0 || !short {
		b = strconv.AppendInt(b, ip, 10)
	}
	if fp != 0 {
		b = append(b, '.', byte('0'+fp))
	}
	return b
}

// appendFixed writes v with up to dec decimals and no trailing zeros or "-0".
func appendFixed(b []byte, v float64, dec int) []byte {
	start := len(b)
	b = strconv.AppendFloat(b, v, 'f', dec, 64)
	if dec > 0 {
		for b[len(b)-1] == '0' {
			b = b[:len(b)-1]
		}
		if b[len(b)-1] == '.' {
			b = b[:len(b)-1]
		}
	}
	if string(b[start:]) == "-0" {
		b = append(b[:start], '0')
	}
	return b
}

// fixedString is appendFixed for labels.
func fixedString(v float64, dec int) string { return string(appendFixed(nil, v, dec)) }

// appendEsc escapes the five XML special characters, writes newlines and
// tabs as character references (they would be normalised away in
// attributes) and replaces invalid UTF-8 and characters XML 1.0 forbids
// (most control characters) with U+FFFD, so any string from configuration
// or data yields a well-formed document.
func appendEsc(b []byte, s string) []byte {
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			i++
			switch {
			case c == '&':
				b = append(b, "&amp;"...)
			case c == '<':
				b = append(b, "&lt;"...)
			case c == '>':
				b = append(b, "&gt;"...)
			case c == '"':
				b = append(b, "&quot;"...)
			case c == '\'':
				b = append(b, "&#39;"...)
			case c == '\n':
				b = append(b, "&#10;"...)
			case c == '\r':
				b = append(b, "&#13;"...)
			case c == '\t':
				b = append(b, "&#9;"...)
			case c < 0x20 || c == 0x7f:
				b = append(b, "\uFFFD"...)
			default:
				b = append(b, c)
			}
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if (r == utf8.RuneError && size == 1) || !xmlChar(r) {
			b = append(b, "\uFFFD"...)
		} else {
			b = append(b, s[i:i+size]...)
		}
		i += size
	}
	return b
}

// xmlChar reports whether r is allowed in an XML 1.0 document (the Char
// production of the XML specification, less C1 controls).
func xmlChar(r rune) bool {
	switch {
	case r >= 0x80 && r <= 0x9f:
		return false
	case r <= 0xD7FF:
		return true
	case r >= 0xE000 && r <= 0xFFFD:
		return true
	case r >= 0x10000 && r <= 0x10FFFF:
		return true
	}
	return false
}

// contentID returns a short id derived from content, so that definitions
// (clip paths, markers) of several charts inlined in one page never clash:
// equal ids mean equal definitions.
func contentID(prefix string, parts ...string) string {
	h := fnv.New32a()
	for _, p := range parts {
		h.Write([]byte(p))
		h.Write([]byte{0})
	}
	return prefix + strconv.FormatUint(uint64(h.Sum32()), 36)
}

// pathData writes compact SVG path data in integer tenths of a user unit.
// It uses relative commands, merges collinear horizontal and vertical runs,
// drops zero-length moves and repeats command letters implicitly, which
// keeps a 720-hour series to a few bytes per hour. Because positions are
// rounded to tenths before differences are taken, relative steps add up to
// the rounded absolute positions exactly.
type pathData struct {
	s        *svgBuf
	cx, cy   int64 // current point
	sx, sy   int64 // start of the current subpath
	started  bool  // a moveto has been written
	open     bool  // the current subpath has a segment since its moveto
	pend     byte  // pending merged segment: 'h', 'v' or 0
	pendD    int64
	lastCmd  byte
	lastNum  bool // the last byte written ends a number
	segments int
}

func newPath(s *svgBuf) *pathData { return &pathData{s: s} }

func (p *pathData) cmd(c byte) {
	if c == p.lastCmd && c != 'm' && c != 'M' && c != 'z' {
		p.lastNum = true // the next number needs a separator, not a letter
		return
	}
	p.s.b = append(p.s.b, c)
	p.lastCmd = c
	p.lastNum = false
}

func (p *pathData) n(v int64) {
	if p.lastNum && v >= 0 {
		p.s.b = append(p.s.b, ' ')
	}
	p.s.b = appendTenths(p.s.b, v, true)
	p.lastNum = true
}

func (p *pathData) flushPend() {
	if p.pend == 0 {
		return
	}
	p.cmd(p.pend)
	p.n(p.pendD)
	p.pend = 0
	p.pendD = 0
}

// moveTo starts a new subpath at (x, y).
func (p *pathData) moveTo(x, y float64) {
	p.flushPend()
	ix, iy := p.s.tenths(x), p.s.tenths(y)
	if !p.started {
		p.cmd('M')
		p.n(ix)
		p.n(iy)
		p.started = true
	} else {
		p.cmd('m')
		p.n(ix - p.cx)
		p.n(iy - p.cy)
	}
	p.cx, p.cy, p.sx, p.sy = ix, iy, ix, iy
	p.open = false
}

// lineTo draws a straight segment to (x, y).
func (p *pathData) lineTo(x, y float64) {
	ix, iy := p.s.tenths(x), p.s.tenths(y)
	dx, dy := ix-p.cx, iy-p.cy
	switch {
	case dx == 0 && dy == 0:
		return
	case dy == 0:
		p.merge('h', dx)
	case dx == 0:
		p.merge('v', dy)
	default:
		p.flushPend()
		p.cmd('l')
		p.n(dx)
		p.n(dy)
	}
	p.cx, p.cy = ix, iy
	p.open = true
	p.segments++
}

func (p *pathData) merge(c byte, d int64) {
	if p.pend == c && (p.pendD > 0) == (d > 0) {
		p.pendD += d
		return
	}
	p.flushPend()
	p.pend, p.pendD = c, d
}

// dot draws a zero-length segment at the current point, which a round line
// cap turns into a visible dot (a series with a single value).
func (p *pathData) dot() {
	p.flushPend()
	p.cmd('h')
	p.n(0)
	p.open = true
}

// close closes the current subpath; the current point returns to its start.
func (p *pathData) close() {
	p.flushPend()
	if !p.open {
		return
	}
	p.cmd('z')
	p.cx, p.cy = p.sx, p.sy
	p.open = false
}

// end writes any pending segment.
func (p *pathData) end() { p.flushPend() }

// endTitled ends the path data and the <path> element, with title as its
// tooltip.
func (p *pathData) endTitled(title string) {
	p.end()
	p.s.str(`"><title>`)
	p.s.esc(title)
	p.s.str(`</title></path>`)
}
