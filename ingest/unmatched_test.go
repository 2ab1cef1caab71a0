package ingest

import (
	"fmt"
	"testing"

	"github.com/stretchr/testify/assert"
)

func TestUnmatched_Summary(t *testing.T) {
	var u Unmatched
	assert.Equal(t, "", u.Summary(3))
	for i := range 7 {
		for range 7 - i {
			u.Add(fmt.Sprintf("P%d", i))
		}
	}
	assert.Equal(t, `7 series not in the configuration (28 values), e.g. "P0" (7), "P1" (6), "P2" (5) and 4 more`, u.Summary(3))

	// Past the bound: names are no longer kept, values still counted.
	var many Unmatched
	for i := range MaxUnmatchedNames + 50 {
		many.Add(fmt.Sprintf("series %06d", i))
	}
	n, capped := many.Series()
	assert.Equal(t, MaxUnmatchedNames, n)
	assert.True(t, capped)
	assert.Equal(t, MaxUnmatchedNames+50, many.Values)
	assert.Contains(t, many.Summary(2), `more than 10000 series not in the configuration (10050 values), e.g. "series 000000" (1), "series 000001" (1) and others`)
}
