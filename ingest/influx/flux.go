package influx

import (
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
)

// fluxString returns s as a Flux string literal that evaluates to exactly s.
// Every name that goes into a query (bucket, measurement, field, tag keys and
// values) goes through here; nothing else is pasted into query text.
//
// The Flux specification (docs/SPEC.md, "String literals"; the same text is
// on docs.influxdata.com under Flux language, lexical elements) allows these
// escapes inside "...": \n \r \t \" \\ \${ and \xNN for any byte. We use:
//
//	\  -> \\        "  -> \"
//	LF -> \n        CR -> \r        TAB -> \t
//	$  -> \x24      (every dollar sign, not only "${")
//	other control bytes, DEL and invalid UTF-8 bytes -> \xNN
//
// Why \x24 rather than the documented \${: the scanner of the Flux in
// InfluxDB 1.8 (v0.65, internal/scanner/scanner.rl) reads "$" followed by
// any character but "{" as one unit, so in `"$\""` the "$" swallows the
// backslash and the quote ends the literal early ("expected RPAREN"). With
// every "$" written as \x24 no "$" is left to pair with anything, and the
// literal can never start an interpolation. The literal therefore contains
// no raw control characters either, so it stays on one line.
func fluxString(s string) string {
	var b strings.Builder
	b.Grow(len(s) + 2)
	b.WriteByte('"')
	for i := 0; i < len(s); {
		c := s[i]
		if c >= utf8.RuneSelf {
			r, size := utf8.DecodeRuneInString(s[i:])
			if r == utf8.RuneError && size == 1 {
				writeHexByte(&b, c)
			} else {
				b.WriteString(s[i : i+size])
			}
			i += size
			continue
		}
		switch c {
		case '\\':
			b.WriteString(`\\`)
		case '"':
			b.WriteString(`\"`)
		case '\n':
			b.WriteString(`\n`)
		case '\r':
			b.WriteString(`\r`)
		case '\t':
			b.WriteString(`\t`)
		case '$':
			b.WriteString(`\x24`)
		default:
			if c < 0x20 || c == 0x7f {
				writeHexByte(&b, c)
			} else {
				b.WriteByte(c)
			}
		}
		i++
	}
	b.WriteByte('"')
	return b.String()
}

func writeHexByte(b *strings.Builder, c byte) {
	const hex = "0123456789abcdef"
	b.WriteString(`\x`)
	b.WriteByte(hex[c>>4])
	b.WriteByte(hex[c&0x0f])
}

// fluxTime formats t as a Flux date-time literal: RFC 3339 in UTC with as
// many fractional digits as needed, down to the nanosecond.
func fluxTime(t time.Time) string {
	return t.UTC().Format(time.RFC3339Nano)
}

// fluxDuration formats d as a Flux duration literal in whole nanoseconds,
// which is exact for every time.Duration.
func fluxDuration(d time.Duration) string {
	return strconv.FormatInt(int64(d), 10) + "ns"
}

// fluxColumn returns the expression that reads column key of row r. Tag keys
// are arbitrary strings, so they are always accessed by index with a string
// literal, never as r.key.
func fluxColumn(key string) string {
	switch key {
	case colMeasurement, colField:
		return "r." + key
	}
	return "r[" + fluxString(key) + "]"
}

// fluxStringList formats names as a Flux array of string literals.
func fluxStringList(names []string) string {
	var b strings.Builder
	b.WriteByte('[')
	for i, n := range names {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(fluxString(n))
	}
	b.WriteByte(']')
	return b.String()
}

// Column names of Flux tables read from InfluxDB.
const (
	colMeasurement = "_measurement"
	colField       = "_field"
	colTime        = "_time"
	colValue       = "_value"
	colStart       = "_start"
	colStop        = "_stop"
)
