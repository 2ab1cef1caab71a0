package metrics

import (
	"math"
	"time"
)

// Hour is one air handler-hour of trend data aligned onto a grid: N steps
// of Step from Start (UTC, on the hour). Values[role][i] is the role's SI
// value over step i, NaN where it is missing, stale or was excluded.
type Hour struct {
	AHU     string
	Start   time.Time
	Step    time.Duration
	Values  map[Role][]float64
	Quality map[Role]RoleQuality
}

// RoleQuality describes one role's data in one hour.
type RoleQuality struct {
	Coverage   float64 // share of steps with a value, 0..1
	Samples    int     // samples logged inside the hour
	OutOfRange int     // samples inside the hour excluded as physically implausible
	NotFinite  int     // samples inside the hour that were NaN or infinite
	// Flat: the hour has ten or more samples, all the same value. FlatFor:
	// how long the run of identical samples that holds every sample of the
	// hour lasts (0 when the hour's samples differ or the run has fewer than
	// six samples). Both are set by the aligner from the raw samples, so
	// they do not depend on the logging interval.
	Flat    bool
	FlatFor time.Duration
	// OtherUnit names the unit the role's values look logged in when it is
	// not the configured one (dewline check's rule, over the hour and the
	// day before it); empty when they look right or were not judged.
	OtherUnit string
}

// Steps returns the number of grid steps in the hour.
func (h *Hour) Steps() int { return int(time.Hour / h.Step) }

// Value returns role's value at step i, NaN when absent.
func (h *Hour) Value(role Role, i int) float64 {
	v, ok := h.Values[role]
	if !ok {
		return math.NaN()
	}
	return v[i]
}

// Has reports whether role is mapped for this air handler.
func (h *Hour) Has(role Role) bool {
	_, ok := h.Values[role]
	return ok
}

// Coverage returns role's coverage in the hour (0 when unmapped).
func (h *Hour) Coverage(role Role) float64 { return h.Quality[role].Coverage }
