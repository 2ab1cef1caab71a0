package dashboards

import (
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
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

// TestAlertLabels: an alert kind reads in sentence case on every page that
// names it (the alerts list and its filter, a unit's page) and in the
// report, never as the bare rule id or in lower case beside capitalised
// cells.
func TestAlertLabels(t *testing.T) {
	assert.Equal(t, "Reheat not needed", AlertLabel("reheat_not_needed"))
	assert.Equal(t, "Coil colder than needed", AlertLabel("coil_colder_than_needed"))

	site, m := fixture()
	h := newTestHandler(t, site, m)
	for _, path := range []string{"/alerts?period=custom&from=2026-07-01&to=2026-07-08", "/units/AHU-2?period=custom&from=2026-07-01&to=2026-07-08"} {
		code, body := get(t, h, path)
		require.Equal(t, http.StatusOK, code, path)
		assert.True(t, strings.Contains(body, ">Reheat not needed"), path)
		assert.False(t, strings.Contains(body, ">reheat not needed"), path)
	}
	page := renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{})
	assert.True(t, strings.Contains(page, "<td>Reheat not needed"), "the report's alert tables")
	assert.False(t, strings.Contains(page, "<td>reheat not needed"), "the report's alert tables")
}
