package csvfile

import "strconv"

// timeForm is the family of timestamps in a file's time column.
type timeForm uint8

const (
	formNone timeForm = iota
	// formISO: 2026-07-14T13:05:00.250-04:00. "T" or a space between date and
	// clock; seconds, fraction and zone optional; a date alone is midnight.
	formISO
	// formYearLast: 07/14/2026 1:05:00 PM, 14.07.2026 13:05, 14-07-2026 13:05.
	// Day and month of one or two digits in an order decided per file, then a
	// four-digit year (or two digits, read as 20yy), then an optional clock
	// with an optional AM/PM.
	formYearLast
	// formUnix: seconds, milliseconds, microseconds or nanoseconds since
	// 1970-01-01 UTC, told apart by their number of digits (10, 13, 16, 19:
	// the years 2001 to 2286). Seconds may carry a fraction.
	formUnix
)

func (f timeForm) String() string {
	switch f {
	case formISO:
		return "ISO 8601"
	case formYearLast:
		return "date with the year last"
	case formUnix:
		return "Unix time"
	}
	return "none"
}

// stamp is a parsed timestamp.
type stamp struct {
	sec    int64 // seconds since 1970-01-01 00:00 on the written clock (UTC = sec - off when hasOff)
	nsec   int64
	off    int64 // UTC offset written in the cell, in seconds
	hasOff bool  // an offset (or Z, or Unix time) was written
}

// dateOrder is how a year-last date orders its first two numbers.
type dateOrder uint8

const (
	monthFirst dateOrder = iota
	dayFirst
)

const secondsPerDay = 86400

// daysFromCivil returns the days since 1970-01-01 of a proleptic Gregorian
// date (H. Hinnant, "chrono-Compatible Low-Level Date Algorithms").
func daysFromCivil(y, m, d int) int64 {
	if m <= 2 {
		y--
	}
	era := y / 400
	yoe := y - era*400
	mp := (m + 9) % 12
	doy := (153*mp+2)/5 + d - 1
	doe := yoe*365 + yoe/4 - yoe/100 + doy
	return int64(era*146097 + doe - 719468)
}

func daysIn(y, m int) int {
	switch m {
	case 2:
		if y%4 == 0 && (y%100 != 0 || y%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}

// Years accepted in calendar dates.
const minYear, maxYear = 1900, 2199

func validDate(y, m, d int) bool {
	return y >= minYear && y <= maxYear && m >= 1 && m <= 12 && d >= 1 && d <= daysIn(y, m)
}

// d2 reads two ASCII digits.
func d2(a, b byte) (int, bool) {
	a -= '0'
	b -= '0'
	return int(a)*10 + int(b), a <= 9 && b <= 9
}

// parseISO reads an ISO 8601 timestamp.
func parseISO(b []byte) (stamp, bool) {
	var st stamp
	if len(b) < 10 || b[4] != '-' || b[7] != '-' {
		return st, false
	}
	yh, ok1 := d2(b[0], b[1])
	yl, ok2 := d2(b[2], b[3])
	m, ok3 := d2(b[5], b[6])
	d, ok4 := d2(b[8], b[9])
	y := yh*100 + yl
	if !(ok1 && ok2 && ok3 && ok4) || !validDate(y, m, d) {
		return st, false
	}
	st.sec = daysFromCivil(y, m, d) * secondsPerDay
	rest := b[10:]
	if len(rest) == 0 {
		return st, true
	}
	// Fast path: "hh:mm:ss", then the end, "Z" or "±hh:mm": the forms
	// exports write on every row.
	if len(rest) >= 9 && (rest[0] == ' ' || rest[0] == 'T') && rest[3] == ':' && rest[6] == ':' {
		h, o1 := d2(rest[1], rest[2])
		mi, o2 := d2(rest[4], rest[5])
		s, o3 := d2(rest[7], rest[8])
		if o1 && o2 && o3 && h <= 23 && mi <= 59 && s <= 59 {
			clock := int64(h*3600 + mi*60 + s)
			switch z := rest[9:]; len(z) {
			case 0:
				st.sec += clock
				return st, true
			case 1:
				if z[0] == 'Z' {
					st.sec += clock
					st.hasOff = true
					return st, true
				}
			case 6:
				oh, o4 := d2(z[1], z[2])
				om, o5 := d2(z[4], z[5])
				if (z[0] == '+' || z[0] == '-') && z[3] == ':' && o4 && o5 && oh <= 23 && om <= 59 {
					st.sec += clock
					st.off = int64(oh*3600 + om*60)
					if z[0] == '-' {
						st.off = -st.off
					}
					st.hasOff = true
					return st, true
				}
			}
		}
	}
	switch rest[0] {
	case 'T', 't', ' ':
	default:
		return st, false
	}
	return withClock(st, rest[1:])
}

// addYear rewrites a date written without a year, "a/b hh:mm", into
// "a/b/yyyy hh:mm" in buf, so the year-last parser reads it. It reports
// false, leaving b alone, when b is not such a date.
func addYear(b []byte, year int, buf []byte) ([]byte, bool) {
	i := 0
	digits := func() int {
		n := 0
		for i < len(b) && n < 3 && b[i]-'0' <= 9 {
			i++
			n++
		}
		return n
	}
	if n := digits(); n < 1 || n > 2 || i >= len(b) {
		return b, false
	}
	sep := b[i]
	if sep != '/' && sep != '.' && sep != '-' {
		return b, false
	}
	i++
	if n := digits(); n < 1 || n > 2 {
		return b, false
	}
	if i < len(b) && (b[i] == sep || b[i]-'0' <= 9) {
		return b, false // it has a year, or is something else
	}
	buf = append(buf[:0], b[:i]...)
	buf = append(buf, sep)
	buf = strconv.AppendInt(buf, int64(year), 10)
	return append(buf, b[i:]...), true
}

// yearLast holds the parts of a year-last date before the order is known.
type yearLast struct {
	a, b, y int
	sep     byte
}

// scanYearLast reads "a/b/yyyy" (also with '.' or '-') and returns the rest.
func scanYearLast(b []byte) (yearLast, []byte, bool) {
	var p yearLast
	i := 0
	num := func(max int) (int, bool) {
		n, v := 0, 0
		for i < len(b) && n < max && b[i]-'0' <= 9 {
			v = v*10 + int(b[i]-'0')
			i++
			n++
		}
		return v, n > 0
	}
	var ok bool
	if p.a, ok = num(2); !ok || i >= len(b) {
		return p, nil, false
	}
	p.sep = b[i]
	if p.sep != '/' && p.sep != '.' && p.sep != '-' {
		return p, nil, false
	}
	i++
	if p.b, ok = num(2); !ok || i >= len(b) || b[i] != p.sep {
		return p, nil, false
	}
	i++
	start := i
	if p.y, ok = num(4); !ok {
		return p, nil, false
	}
	switch i - start {
	case 4:
	case 2:
		p.y += 2000
	default:
		return p, nil, false
	}
	if i < len(b) && b[i]-'0' <= 9 {
		return p, nil, false
	}
	return p, b[i:], true
}

// parseYearLast reads a year-last timestamp with the given order.
func parseYearLast(b []byte, order dateOrder) (stamp, bool) {
	var st stamp
	p, rest, ok := scanYearLast(b)
	if !ok {
		return st, false
	}
	m, d := p.a, p.b
	if order == dayFirst {
		m, d = p.b, p.a
	}
	if !validDate(p.y, m, d) {
		return st, false
	}
	st.sec = daysFromCivil(p.y, m, d) * secondsPerDay
	if len(rest) == 0 {
		return st, true
	}
	switch rest[0] {
	case ' ', 'T':
	case ',':
		if len(rest) < 2 || rest[1] != ' ' {
			return st, false
		}
	default:
		return st, false
	}
	return withClock(st, rest[1:])
}

// withClock adds the clock and the zone that follow a date (after its
// separator) to st.
func withClock(st stamp, rest []byte) (stamp, bool) {
	sod, nsec, rest, ok := scanClock(skipSpaces(rest))
	if !ok {
		return st, false
	}
	st.sec += sod
	st.nsec = nsec
	st.off, st.hasOff, ok = scanZone(rest)
	return st, ok
}

// parseUnix reads a Unix time of 10, 13, 16 or 19 digits (s, ms, µs, ns);
// seconds may carry a fraction. digits must match the file's digit count.
func parseUnix(b []byte, digits int) (stamp, bool) {
	st := stamp{hasOff: true}
	if len(b) < digits {
		return st, false
	}
	var v int64
	for _, c := range b[:digits] {
		if c-'0' > 9 {
			return st, false
		}
		v = v*10 + int64(c-'0')
	}
	rest := b[digits:]
	switch digits {
	case 10:
		st.sec = v
		if len(rest) > 0 {
			if rest[0] != '.' || len(rest) == 1 || len(rest) > 10 {
				return st, false
			}
			scale := int64(1e8)
			for _, c := range rest[1:] {
				if c-'0' > 9 {
					return st, false
				}
				st.nsec += int64(c-'0') * scale
				scale /= 10
			}
		}
		return st, true
	case 13:
		st.sec, st.nsec = v/1e3, v%1e3*1e6
	case 16:
		st.sec, st.nsec = v/1e6, v%1e6*1e3
	case 19:
		st.sec, st.nsec = v/1e9, v%1e9
	default:
		return st, false
	}
	return st, len(rest) == 0
}

// unixDigits returns the digit count of a Unix-time cell, or 0.
func unixDigits(b []byte) int {
	n := 0
	for n < len(b) && b[n]-'0' <= 9 {
		n++
	}
	switch n {
	case 10:
		if n == len(b) || b[n] == '.' {
			return n
		}
	case 13, 16, 19:
		if n == len(b) {
			return n
		}
	}
	return 0
}

func skipSpaces(b []byte) []byte {
	for len(b) > 0 && b[0] == ' ' {
		b = b[1:]
	}
	return b
}

// scanClock reads "h:mm[:ss[.fffffffff]][ AM|PM]" and returns the seconds
// since midnight, the nanoseconds and the rest. Hour 24 is taken only as
// "24:00[:00]", the end of the day.
func scanClock(b []byte) (sod, nsec int64, rest []byte, ok bool) {
	i := 0
	h := 0
	for i < len(b) && i < 2 && b[i]-'0' <= 9 {
		h = h*10 + int(b[i]-'0')
		i++
	}
	if i == 0 || i+3 > len(b) || b[i] != ':' {
		return 0, 0, nil, false
	}
	mi, okm := d2(b[i+1], b[i+2])
	if !okm || mi > 59 {
		return 0, 0, nil, false
	}
	i += 3
	s := 0
	if i < len(b) && b[i] == ':' {
		if i+3 > len(b) {
			return 0, 0, nil, false
		}
		var oks bool
		if s, oks = d2(b[i+1], b[i+2]); !oks || s > 59 {
			return 0, 0, nil, false
		}
		i += 3
		if i < len(b) && (b[i] == '.' || b[i] == ',') {
			i++
			n := 0
			scale := int64(1e8)
			for i < len(b) && b[i]-'0' <= 9 {
				nsec += int64(b[i]-'0') * scale
				scale /= 10
				i++
				n++
			}
			if n == 0 {
				return 0, 0, nil, false
			}
		}
	}
	if i < len(b) && b[i]-'0' <= 9 {
		return 0, 0, nil, false
	}
	rest = b[i:]
	// AM/PM, after optional spaces.
	r := skipSpaces(rest)
	if len(r) >= 2 && (r[1]|0x20) == 'm' && ((r[0]|0x20) == 'a' || (r[0]|0x20) == 'p') &&
		(len(r) == 2 || r[2] == ' ' || r[2] == 'Z' || r[2] == '+' || r[2] == '-') {
		if h < 1 || h > 12 {
			return 0, 0, nil, false
		}
		pm := r[0]|0x20 == 'p'
		if h == 12 {
			h = 0
		}
		if pm {
			h += 12
		}
		rest = r[2:]
	}
	if h > 24 || (h == 24 && (mi != 0 || s != 0 || nsec != 0)) {
		return 0, 0, nil, false
	}
	return int64(h*3600 + mi*60 + s), nsec, rest, true
}

// scanZone reads what follows the clock: nothing, "Z", "UTC", "GMT", or an
// offset "+hh:mm", "+hhmm", "+hh"; spaces before it are allowed.
func scanZone(b []byte) (off int64, has, ok bool) {
	b = skipSpaces(b)
	switch {
	case len(b) == 0:
		return 0, false, true
	case len(b) == 1 && (b[0] == 'Z' || b[0] == 'z'):
		return 0, true, true
	case len(b) == 3 && (equalFold(b, "utc") || equalFold(b, "gmt")):
		return 0, true, true
	case b[0] == '+' || b[0] == '-':
	default:
		return 0, false, false
	}
	sign := int64(1)
	if b[0] == '-' {
		sign = -1
	}
	b = b[1:]
	var h, m int
	var okh, okm bool
	switch {
	case len(b) == 2:
		h, okh = d2(b[0], b[1])
		okm = true
	case len(b) == 4:
		h, okh = d2(b[0], b[1])
		m, okm = d2(b[2], b[3])
	case len(b) == 5 && b[2] == ':':
		h, okh = d2(b[0], b[1])
		m, okm = d2(b[3], b[4])
	}
	if !okh || !okm || h > 23 || m > 59 {
		return 0, false, false
	}
	return sign * int64(h*3600+m*60), true, true
}
