package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestInflux_LineNamesRefusedByEveryCommand: with an InfluxDB store, a
// site id and a point name that every write would refuse (a backslash
// before a space, a trailing backslash) are refused by check, import,
// run --once and run --dry-run alike, with the file's line, the key and
// the fix, before any request (the server's address is never dialled).
// The embedded store carries the same names and is left alone.
func TestInflux_LineNamesRefusedByEveryCommand(t *testing.T) {
	dir := t.TempDir()
	_, data := writeScenario(t, dir)
	text := strings.Replace(analyzeConfig, "site: {", `site: {id: 'North\ Wing', `, 1)
	text = strings.Replace(text, "{column: MARH,", `{column: 'RH\',`, 1)
	require.NotEqual(t, analyzeConfig, text)

	emb := filepath.Join(dir, "embedded.yaml")
	require.NoError(t, os.WriteFile(emb, []byte(text), 0o600))
	code, _, errOut := runCLI(t, "--log-level", "warn", "check", "--config", emb)
	assert.Equal(t, 0, code, "the embedded store keeps any name: %s", errOut)

	cfg := influxConfig(t, dir, text, "http://127.0.0.1:9", "dewline_test", "")
	for _, tc := range []struct {
		name string
		args []string
	}{
		{"check", []string{"check", "--config", cfg}},
		{"import", []string{"import", "--config", cfg, data}},
		{"once", []string{"run", "--config", cfg, "--once", "--as-of", "2026-07-15T08:07:00Z"}},
		{"dry run", []string{"run", "--config", cfg, "--dry-run", "--as-of", "2026-07-15T08:07:00Z"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errOut := runCLI(t, append([]string{"--log-level", "warn"}, tc.args...)...)
			assert.NotEqual(t, 0, code)
			assert.Contains(t, errOut, `influx.yaml:2: site.id: site id "North\\ Wing" has a backslash before ' ', which InfluxDB would read as an escape`)
			assert.Contains(t, errOut, `air_handlers[0].points.entering_rh.column: the point "RH\\" is stored in InfluxDB under its name (tag point), but the name ends with a backslash`)
			assert.Contains(t, errOut, "add measurement: and field:")
			assert.NotContains(t, out, "dewline_hourly", "nothing printed as if it could be written")
		})
	}
}
