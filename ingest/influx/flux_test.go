package influx

import (
	"errors"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestFluxString checks literals against the escapes of the Flux
// specification (docs/SPEC.md, "String literals": \n \r \t \" \\ \${ and
// \xNN), written out by hand.
func TestFluxString(t *testing.T) {
	tests := []struct {
		name, in, want string
	}{
		{"plain", "supply_temp", `"supply_temp"`},
		{"empty", "", `""`},
		{"quote", `a"b`, `"a\"b"`},
		{"backslash", `a\b`, `"a\\b"`},
		{"trailing backslash", `a\`, `"a\\"`},
		{"escaped quote stays text", `\"`, `"\\\""`},
		{"interpolation", "${x}", `"\x24{x}"`},
		{"dollar before quote", `$"`, `"\x24\""`},
		{"dollar before backslash", `$\`, `"\x24\\"`},
		{"lone dollar", "$5", `"\x245"`},
		{"newline", "a\nb", `"a\nb"`},
		{"carriage return and tab", "a\r\tb", `"a\r\tb"`},
		{"other control bytes", "a\x00b\x1fc\x7f", `"a\x00b\x1fc\x7f"`},
		{"pipe forward", `x") |> drop(columns: ["_value"]) //`, `"x\") |> drop(columns: [\"_value\"]) //"`},
		{"unicode kept", "°C m³/s 日本", `"°C m³/s 日本"`},
		{"invalid utf-8 byte", "a\xffb", `"a\xffb"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			assert.Equal(t, tt.want, fluxString(tt.in))
		})
	}
}

// decodeFluxString reads a Flux string literal the way the Flux
// specification defines it, as an independent check on fluxString. It also
// refuses what the InfluxDB 1.8 scanner mishandles or would evaluate: a raw
// "$" (interpolation, or a "$" that swallows the next character) and raw
// control characters.
func decodeFluxString(lit string) (string, error) {
	if len(lit) < 2 || lit[0] != '"' || lit[len(lit)-1] != '"' {
		return "", errors.New("not quoted")
	}
	body := lit[1 : len(lit)-1]
	var b strings.Builder
	for i := 0; i < len(body); i++ {
		c := body[i]
		switch {
		case c == '"':
			return "", errors.New("unescaped quote ends the literal early")
		case c == '$':
			return "", errors.New("raw dollar sign")
		case c < 0x20 || c == 0x7f:
			return "", errors.New("raw control character")
		case c != '\\':
			b.WriteByte(c)
			continue
		}
		i++
		if i >= len(body) {
			return "", errors.New("backslash escapes the closing quote")
		}
		switch body[i] {
		case 'n':
			b.WriteByte('\n')
		case 'r':
			b.WriteByte('\r')
		case 't':
			b.WriteByte('\t')
		case '"', '\\':
			b.WriteByte(body[i])
		case '$':
			if i+1 >= len(body) || body[i+1] != '{' {
				return "", errors.New(`\$ not followed by {`)
			}
			b.WriteString("${")
			i++
		case 'x':
			if i+2 >= len(body) {
				return "", errors.New("short \\x escape")
			}
			var v byte
			for _, h := range body[i+1 : i+3] {
				switch {
				case h >= '0' && h <= '9':
					v = v<<4 | byte(h-'0')
				case h >= 'a' && h <= 'f':
					v = v<<4 | byte(h-'a'+10)
				case h >= 'A' && h <= 'F':
					v = v<<4 | byte(h-'A'+10)
				default:
					return "", errors.New("bad hex digit")
				}
			}
			b.WriteByte(v)
			i += 2
		default:
			return "", errors.New("unknown escape")
		}
	}
	return b.String(), nil
}

func TestDecodeFluxString_RefusesUnsafeLiterals(t *testing.T) {
	// The checker must be able to fail, or the round trip below proves
	// nothing.
	for _, lit := range []string{`"a"b"`, `"${x}"`, `"$\""`, "\"a\nb\"", `"a\"`, `"\q"`} {
		_, err := decodeFluxString(lit)
		assert.Error(t, err, lit)
	}
}

func checkFluxString(t *testing.T, s string) {
	t.Helper()
	lit := fluxString(s)
	got, err := decodeFluxString(lit)
	require.NoError(t, err, "literal %s for %q", lit, s)
	assert.Equal(t, s, got, "literal %s", lit)
}

func TestFluxString_RoundTrip(t *testing.T) {
	for _, s := range []string{
		"", `"`, `\`, `\\`, `\"`, `"\`, "$", "${", "${x}", `$"`, `$\`, `\$`, `\${x}`, "}", "\n", "\\n",
		`") |> drop(columns: ["_value"]) |> yield(name: "`, "a\x00b", "\xff\xfe", "°F", "\u2028",
	} {
		checkFluxString(t, s)
	}
	// Every byte value, alone and between letters.
	for c := 0; c < 256; c++ {
		checkFluxString(t, string([]byte{byte(c)}))
		checkFluxString(t, "a"+string([]byte{byte(c)})+"b")
	}
}

func FuzzFluxString(f *testing.F) {
	for _, s := range []string{"", `a"b`, `$"`, "${x}", "\n", `\`, "\xff", "°C"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		lit := fluxString(s)
		got, err := decodeFluxString(lit)
		if err != nil {
			t.Fatalf("literal %s for %q: %v", lit, s, err)
		}
		if got != s {
			t.Fatalf("literal %s decodes to %q, want %q", lit, got, s)
		}
		if !utf8.ValidString(lit) {
			t.Fatalf("literal %s is not valid UTF-8", lit)
		}
	})
}

func TestFluxTime(t *testing.T) {
	est := time.FixedZone("EST", -5*3600)
	tests := []struct {
		name string
		in   time.Time
		want string
	}{
		{"whole seconds", time.Date(2024, 7, 15, 14, 0, 0, 0, time.UTC), "2024-07-15T14:00:00Z"},
		{"nanoseconds kept", time.Date(2024, 7, 15, 14, 0, 0, 1, time.UTC), "2024-07-15T14:00:00.000000001Z"},
		{"other zone to UTC", time.Date(2024, 7, 15, 9, 0, 0, 500_000_000, est), "2024-07-15T14:00:00.5Z"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			assert.Equal(t, tt.want, fluxTime(tt.in))
		})
	}
}

func TestFluxDuration(t *testing.T) {
	assert.Equal(t, "60000000000ns", fluxDuration(time.Minute))
	assert.Equal(t, "1ns", fluxDuration(time.Nanosecond))
}

func TestFluxColumn(t *testing.T) {
	assert.Equal(t, "r._measurement", fluxColumn("_measurement"))
	assert.Equal(t, "r._field", fluxColumn("_field"))
	assert.Equal(t, `r["ahu"]`, fluxColumn("ahu"))
	assert.Equal(t, `r["a\"] == \"x"]`, fluxColumn(`a"] == "x`))
}

func TestFluxStringList(t *testing.T) {
	assert.Equal(t, `["_time", "a\"b", "\x24{x}"]`, fluxStringList([]string{"_time", `a"b`, "${x}"}))
}
