package main

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestAnalyze_ExportsInAnyOrder: the two-day scenario's export analysed
// as logged (time order), newest first, and in the long layout sorted by
// point (as many systems export: all of one point, then the next) gives
// the same hourly file, byte for byte, as importing it and analysing the
// store. Streamed as they come, the other orders lost every point's hours
// but the first's (12 % coverage sorted by point) and newest first
// analysed one hour.
func TestAnalyze_ExportsInAnyOrder(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	raw, err := os.ReadFile(data)
	require.NoError(t, err)
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	header, rows := strings.Split(lines[0], ","), lines[1:]

	newest := slices.Clone(rows)
	slices.Reverse(newest)
	var byPoint []string
	for c := 1; c < len(header); c++ {
		for _, r := range rows {
			f := strings.Split(r, ",")
			byPoint = append(byPoint, f[0]+","+header[c]+","+f[c])
		}
	}
	write := func(name string, head string, rows []string) string {
		p := filepath.Join(dir, name)
		require.NoError(t, os.WriteFile(p, []byte(head+"\n"+strings.Join(rows, "\n")+"\n"), 0o600))
		return p
	}
	inputs := map[string]string{
		"as logged":    data,
		"newest first": write("newest.csv", lines[0], newest),
		"by point":     write("bypoint.csv", "Time,Point,Value", byPoint),
	}
	analyse := func(name string, args ...string) []byte {
		out := filepath.Join(dir, strings.ReplaceAll(name, " ", "-")+".out.csv")
		mustCLI(t, append([]string{"--log-level", "warn", "analyze", "--config", cfg, "--no-store", "--out", out}, args...)...)
		b, err := os.ReadFile(out)
		require.NoError(t, err)
		return b
	}
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	want := analyse("store")
	require.Len(t, strings.Split(strings.TrimSpace(string(want)), "\n"), 1+48, "48 hours and the header")
	for name, in := range inputs {
		got := strings.Split(string(analyse(name, "--input", in)), "\n")
		wl := strings.Split(string(want), "\n")
		if !assert.Equal(t, len(wl), len(got), "%s: lines", name) {
			continue
		}
		for i := range wl {
			if !assert.Equal(t, wl[i], got[i], "%s: line %d", name, i+1) {
				break // the first difference says enough
			}
		}
	}
}

// TestAnalyze_PipeOutOfOrder: an export read from a pipe cannot be read
// twice to find its order first; out of order it ends the analysis with
// the line, the times and the fix, and writes no output file.
func TestAnalyze_PipeOutOfOrder(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	raw, err := os.ReadFile(data)
	require.NoError(t, err)
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	rows := slices.Clone(lines[1:])
	slices.Reverse(rows)
	pipe := filepath.Join(dir, "pipe")
	require.NoError(t, syscall.Mkfifo(pipe, 0o600))
	go func() {
		w, err := os.OpenFile(pipe, os.O_WRONLY, 0)
		if err != nil {
			return
		}
		defer w.Close()
		w.WriteString(lines[0] + "\n" + strings.Join(rows, "\n") + "\n")
	}()
	out := filepath.Join(dir, "out.csv")
	code, _, stderr := runCLI(t, "analyze", "--config", cfg, "--no-store", "--input", pipe, "--out", out)
	assert.Equal(t, 1, code, stderr)
	assert.Contains(t, stderr, pipe+" line 63: ")
	assert.Contains(t, stderr, "the export is not in time order")
	assert.Contains(t, stderr, `import it with "dewline import"`)
	assert.NoFileExists(t, out)
}
