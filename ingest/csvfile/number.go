package csvfile

import (
	"math"
	"strconv"
)

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// numStatus is the outcome of reading a value cell.
type numStatus uint8

const (
	numOK        numStatus = iota
	numMissing             // empty or a missing-value marker
	numBool                // On/Off and the like, read as 1/0
	numNotNum              // text
	numDecSep              // a number with the other decimal separator
	numNotFinite           // overflows float64 or is infinite
)

// parseNumber reads a trimmed value cell. dec is the decimal separator of the
// file ('.' or ',').
//
// Plain decimals of up to 15 digits take the exact fast path (Clinger): the
// digits form an integer below 2^53, and dividing it by an exactly
// representable power of ten is one correctly rounded IEEE operation, so the
// result is bit-for-bit what strconv.ParseFloat returns. Everything else
// (exponents, long mantissas) goes to strconv.
func parseNumber(b []byte, dec byte) (float64, numStatus) {
	if len(b) == 0 {
		return 0, numMissing
	}
	i := 0
	neg := false
	if b[0] == '-' || b[0] == '+' {
		neg = b[0] == '-'
		i = 1
	}
	var mant uint64
	digits, frac := 0, 0
	dot := false
	for ; i < len(b); i++ {
		c := b[i]
		if c-'0' <= 9 {
			mant = mant*10 + uint64(c-'0')
			digits++
			if dot {
				frac++
			}
			continue
		}
		if c == dec && !dot {
			dot = true
			continue
		}
		return parseNumberSlow(b, dec)
	}
	if digits == 0 || digits > 15 {
		return parseNumberSlow(b, dec)
	}
	f := float64(mant)
	if frac > 0 {
		f /= pow10[frac]
	}
	if neg {
		f = -f
	}
	return f, numOK
}

// maxNumberLen bounds the cells strconv sees; longer text is not a number a
// controller writes.
const maxNumberLen = 64

func parseNumberSlow(b []byte, dec byte) (float64, numStatus) {
	if st, ok := classifyWord(b); ok {
		if st == numBool {
			return boolValue(b), numBool
		}
		return 0, st
	}
	if len(b) > maxNumberLen {
		return 0, numNotNum
	}
	// Only sign, digits, one separator and an exponent: strconv would also
	// take "Inf", hex floats and underscores, which no trend value is.
	var buf [maxNumberLen]byte
	n := 0
	seps, other := 0, 0
	digits := 0
	for _, c := range b {
		switch {
		case c-'0' <= 9:
			digits++
		case c == dec:
			seps++
			c = '.'
		case c == '.' || c == ',':
			other++
		case c == '+' || c == '-' || c == 'e' || c == 'E':
		default:
			return 0, numNotNum
		}
		buf[n] = c
		n++
	}
	if digits == 0 {
		return 0, numNotNum
	}
	if other > 0 {
		// "21,5" in a decimal-point file, "21.5" in a decimal-comma file,
		// or a thousands separator: never guess which was meant.
		return 0, numDecSep
	}
	f, err := strconv.ParseFloat(string(buf[:n]), 64)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return 0, numNotFinite
		}
		return 0, numNotNum
	}
	if math.IsInf(f, 0) || math.IsNaN(f) {
		return 0, numNotFinite
	}
	return f, numOK
}

// Words that controllers write into value cells. Missing-value markers give
// no record and no error; the on/off family gives 1 or 0. Matching ignores
// case.
var (
	missingWords = []string{"nan", "null", "none", "na", "n/a", "#n/a", "-", "--", "---", "?", "no data", "nodata"}
	trueWords    = []string{"on", "true", "active", "yes"}
	falseWords   = []string{"off", "false", "inactive", "no"}
)

// classifyWord matches b against the word lists.
func classifyWord(b []byte) (numStatus, bool) {
	if len(b) > 8 {
		return 0, false
	}
	for _, w := range missingWords {
		if equalFold(b, w) {
			return numMissing, true
		}
	}
	if boolWord(b, trueWords) || boolWord(b, falseWords) {
		return numBool, true
	}
	return 0, false
}

func boolWord(b []byte, words []string) bool {
	for _, w := range words {
		if equalFold(b, w) {
			return true
		}
	}
	return false
}

func boolValue(b []byte) float64 {
	if boolWord(b, trueWords) {
		return 1
	}
	return 0
}

// equalFold compares ASCII b with lower-case w, ignoring case.
func equalFold(b []byte, w string) bool {
	if len(b) != len(w) {
		return false
	}
	for i := 0; i < len(b); i++ {
		c := b[i]
		if c >= 'A' && c <= 'Z' {
			c += 'a' - 'A'
		}
		if c != w[i] {
			return false
		}
	}
	return true
}

// sepEvidence classifies b as a number written with separator sep: 0 when
// it is not one ("21,5" for ',' is one), 1 when it could also be an integer
// with a thousands separator ("12,000": three digits after sep and at most
// three non-zero-led digits before), 2 when it can only be a decimal.
// Used to detect the decimal separator of a file.
func sepEvidence(b []byte, sep byte) int {
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		b = b[1:]
	}
	i := 0
	for i < len(b) && b[i]-'0' <= 9 {
		i++
	}
	if i == 0 || i == len(b) || b[i] != sep {
		return 0
	}
	j := i + 1
	for j < len(b) && b[j]-'0' <= 9 {
		j++
	}
	if j != len(b) || j == i+1 {
		return 0
	}
	if j-i-1 == 3 && i <= 3 && b[0] != '0' {
		return 1
	}
	return 2
}
