package telemetry

import (
	"bytes"
	"strings"
	"testing"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
)

// TestProgress: off a terminal, one log line per tenth of the work done (10
// % ... 100 %); on a terminal, a bar that ends with a line break.
func TestProgress(t *testing.T) {
	var logs bytes.Buffer
	p := &Progress{what: "importing", log: zerolog.New(&logs), last: -1}
	for i := 0; i <= 1000; i++ {
		p.Update(i, 1000)
	}
	lines := strings.Split(strings.TrimSpace(logs.String()), "\n")
	assert.Len(t, lines, 10)
	assert.Contains(t, lines[0], `"percent":10`)
	assert.Contains(t, lines[9], `"percent":100`)

	var bar bytes.Buffer
	p = &Progress{what: "report", tty: true, w: &bar, last: -1}
	p.Update(1, 4)
	p.Update(4, 4)
	assert.Contains(t, bar.String(), "\rreport [#######.......................]  25% 1/4")
	assert.True(t, strings.HasSuffix(bar.String(), "100% 4/4\n"))
	p.Update(1, 0) // nothing to show
	assert.True(t, strings.HasSuffix(bar.String(), "100% 4/4\n"))
}
