package metrics

import "strings"

// Informational reports whether a record flag is a note on how a figure
// was obtained (cooling input from the rated efficiency, as no meter is
// trended) rather than a data-quality finding; pages and totals count
// such hours apart from the flagged ones.
func Informational(flag string) bool {
	return flag == FlagModelledCooling
}

// QualityFlagged reports whether flags hold a data-quality finding, any
// flag that is not Informational.
func QualityFlagged(flags []string) bool {
	for _, f := range flags {
		if !Informational(strings.TrimSpace(f)) {
			return true
		}
	}
	return false
}
