package dashboards

import (
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
)

// TestTotals_InformationalFlagsApart: an hour whose only flag is the
// note cooling_input_modelled (no cooling meter trended) is not a flagged
// hour; it is counted apart, and a real data-quality flag still counts.
func TestTotals_InformationalFlagsApart(t *testing.T) {
	at := time.Date(2026, 7, 14, 5, 0, 0, 0, time.UTC)
	tests := []struct {
		name           string
		flags          [][]string
		flagged, noted int
	}{
		{"notes only", [][]string{{"cooling_input_modelled"}, {"cooling_input_modelled"}}, 0, 2},
		{"a finding beside the note", [][]string{{"cooling_input_modelled", "low_coverage"}, {"cooling_input_modelled"}}, 1, 1},
		{"findings", [][]string{{"out_of_range:supply_temp"}, nil}, 1, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tot := NewTotals()
			for i, f := range tt.flags {
				r := rec("AHU-1", at.Add(time.Duration(i)*time.Hour), map[string]float64{"coverage": 1})
				r.Flags = f
				tot.Add(&r)
			}
			assert.Equal(t, tt.flagged, tot.FlaggedHours)
			assert.Equal(t, tt.noted, tot.NotedHours)
		})
	}
}
