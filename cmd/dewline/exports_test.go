package main

import (
	"bytes"
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

// TestExports_ConflictingDuplicates: a row repeated with another value
// (the scenario's 13:00 row written again with the mixed air at 95 °F) is
// named with both lines by check, import and analyze; the later row is
// used on every path, so the export analysed as it streams and the store
// it was imported into give the same hours. An identical repeated row is
// not reported.
func TestExports_ConflictingDuplicates(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	raw, err := os.ReadFile(data)
	require.NoError(t, err)
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	var out []string
	for _, l := range lines {
		out = append(out, l)
		if strings.HasPrefix(l, "2026-07-14 13:00:00,") {
			f := strings.Split(l, ",")
			f[1] = "95.00"
			out = append(out, strings.Join(f, ","))
		}
		if strings.HasPrefix(l, "2026-07-14 14:00:00,") {
			out = append(out, l) // the same row again
		}
	}
	require.NoError(t, os.WriteFile(data, []byte(strings.Join(out, "\n")+"\n"), 0o600))
	// The header is line 1, 2026-07-14 00:00 line 2: 13:00 (18:00Z) is line
	// 782, its mixed air 76 + sin(780/90) = 76.69 °F.
	const want = "lines 782 and 783: MAT at 2026-07-14T18:00:00Z is 76.69, then 95 (kept)"

	code, check, stderr := runCLI(t, "check", "--config", cfg, "--input", data)
	require.Contains(t, []int{0, 3}, code, stderr)
	assert.Contains(t, check, "1 values repeat their series' previous time with another value")
	assert.Contains(t, check, want)
	imp := mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	assert.Contains(t, imp, want)

	code, _, stderr = runCLI(t, "analyze", "--config", cfg, "--no-store", "--input", data, "--out", filepath.Join(dir, "streamed.csv"))
	require.Equal(t, 0, code, stderr)
	assert.Contains(t, stderr, want)
	mustCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--no-store", "--out", filepath.Join(dir, "stored.csv"))
	a, err := os.ReadFile(filepath.Join(dir, "streamed.csv"))
	require.NoError(t, err)
	b, err := os.ReadFile(filepath.Join(dir, "stored.csv"))
	require.NoError(t, err)
	assert.True(t, bytes.Equal(a, b), "the streamed and the stored analysis differ")
}
