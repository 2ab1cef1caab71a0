package dashboards

import (
	"math"
	"strconv"
	"strings"
	"time"
)

// The pages format numbers with these rules (the browser tests read them
// back the same way): a missing value is "–"; thousands are grouped with
// a thin comma; kWh, water and money as below.

// fmtFixed formats v with dec decimals and grouped thousands.
func fmtFixed(v float64, dec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	s := strconv.FormatFloat(v, 'f', dec, 64)
	if s == "-0" || strings.HasPrefix(s, "-0.") && strings.Trim(s[3:], "0") == "" {
		s = s[1:]
	}
	neg := strings.HasPrefix(s, "-")
	if neg {
		s = s[1:]
	}
	intPart, frac, _ := strings.Cut(s, ".")
	var b strings.Builder
	for i, c := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	out := b.String()
	if frac != "" {
		out += "." + frac
	}
	if neg {
		out = "-" + out
	}
	return out
}

// fmtQty formats an energy, water mass or similar: no decimals from 100
// up, one below.
func fmtQty(v float64) string {
	if math.Abs(v) >= 100 {
		return fmtFixed(v, 0)
	}
	return fmtFixed(v, 1)
}

// fmtMoney formats money with two decimals.
func fmtMoney(v float64) string { return fmtFixed(v, 2) }

// fmtPct formats a fraction as a whole percentage.
func fmtPct(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v*100, 'f', 0, 64) + " %"
}

// fmtDuration formats a duration as "3 d 4 h", "5 h" or "40 min".
func fmtDuration(d time.Duration) string {
	switch {
	case d >= 24*time.Hour:
		days := int(d / (24 * time.Hour))
		h := int((d % (24 * time.Hour)) / time.Hour)
		if h == 0 {
			return strconv.Itoa(days) + " d"
		}
		return strconv.Itoa(days) + " d " + strconv.Itoa(h) + " h"
	case d >= time.Hour:
		return strconv.Itoa(int(d/time.Hour)) + " h"
	default:
		return strconv.Itoa(int(d/time.Minute)) + " min"
	}
}
