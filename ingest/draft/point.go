package draft

import (
	"math"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Point is one series found in the exports or the store.
type Point struct {
	// Ref is where the series lives: Column (wide CSV), Point (long CSV) or
	// Measurement, Field and Tags (InfluxDB). Its Unit is left empty: the
	// draft decides it.
	Ref metrics.PointRef
	// Name is the text the name rules read: the CSV column or point name,
	// or for InfluxDB the measurement, field and descriptive tag values.
	Name string
	// Unit is the unit the source declares ("" when none).
	Unit string
	// Tags are the series' InfluxDB tags (nil for CSV); Haystack markers,
	// Brick classes and equipment references are read from them.
	Tags map[string]string
	// Stats summarises the values.
	Stats Stats
	// NoRowsIn is the export the point was read from when that export
	// has no data rows (only its header): the point is known by its name
	// and declared unit alone.
	NoRowsIn string

	unitFrom string // where Unit came from when not the source: "name" or "tag"
}

// maxKept bounds the values and times a Stats keeps for its medians.
const maxKept = 4096

// Stats summarises a series' values as logged (in the declared unit).
type Stats struct {
	N           int
	Min, Max    float64
	First, Last time.Time
	values      []float64 // the first maxKept values
	gaps        []float64 // the first maxKept spacings, seconds
	prev        time.Time
}

// Add counts one value logged at t.
func (s *Stats) Add(t time.Time, v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	if s.N == 0 || v < s.Min {
		s.Min = v
	}
	if s.N == 0 || v > s.Max {
		s.Max = v
	}
	s.N++
	if s.First.IsZero() || t.Before(s.First) {
		s.First = t
	}
	if t.After(s.Last) {
		s.Last = t
	}
	if len(s.values) < maxKept {
		s.values = append(s.values, v)
	}
	if !s.prev.IsZero() && t.After(s.prev) && len(s.gaps) < maxKept {
		s.gaps = append(s.gaps, t.Sub(s.prev).Seconds())
	}
	s.prev = t
}

// Interval is the median spacing of the samples (0 with fewer than two).
func (s *Stats) Interval() time.Duration {
	if len(s.gaps) == 0 {
		return 0
	}
	return time.Duration(median(s.gaps) * float64(time.Second)).Round(time.Second)
}

// Regular reports whether most samples come at the median spacing, as an
// interval log does; a change-of-value log spaces them unevenly.
func (s *Stats) Regular() bool {
	if len(s.gaps) < 4 {
		return false
	}
	m := median(s.gaps)
	n := 0
	for _, g := range s.gaps {
		if math.Abs(g-m) <= 0.05*m+1 {
			n++
		}
	}
	return n*10 >= len(s.gaps)*8
}

// Quantile returns the q-quantile (0..1) of the kept values.
func (s *Stats) Quantile(q float64) float64 {
	if len(s.values) == 0 {
		return math.NaN()
	}
	v := append([]float64(nil), s.values...)
	sort.Float64s(v)
	i := int(math.Round(q * float64(len(v)-1)))
	return v[i]
}

// share returns the share of kept values for which ok holds.
func (s *Stats) share(ok func(float64) bool) float64 {
	if len(s.values) == 0 {
		return 0
	}
	n := 0
	for _, v := range s.values {
		if ok(v) {
			n++
		}
	}
	return float64(n) / float64(len(s.values))
}

func median(x []float64) float64 {
	v := append([]float64(nil), x...)
	sort.Float64s(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}
