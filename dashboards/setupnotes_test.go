package dashboards

import (
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
)

// TestSetupNotes: a configured pressure wins over an altitude, the grid
// step reads in minutes when whole, and nothing configured says nothing.
func TestSetupNotes(t *testing.T) {
	notes := SetupNotes("98.5kPa", "300m", time.Minute)
	assert.Equal(t, []Assumption{
		{Topic: "Pressure source", Text: "Configured barometric pressure 98.5kPa."},
		{Topic: "Time grid", Text: "Readings aligned on a 1 min grid; a logged value holds until the next one, at most its point's stale limit."},
	}, notes)

	notes = SetupNotes("", "300m", 30*time.Second)
	assert.Len(t, notes, 2)
	assert.Contains(t, notes[0].Text, "altitude of 300m")
	assert.Contains(t, notes[1].Text, "a 30s grid")

	assert.Empty(t, SetupNotes("", "", 0))
}
