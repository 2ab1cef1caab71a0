package main

import (
	"flag"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/stretchr/testify/require"
)

var update = flag.Bool("update", false, "rewrite the expected files of testdata/cases and the README's chart")

// TestCases runs "dewline analyze" on every folder of testdata/cases
// (config.yaml, input.csv) and compares the hourly output with
// expected.csv. This is a regression check, not an external one: the
// expected files were produced by dewline itself and reviewed; the external
// checks live beside the engine. Run with -update to rewrite them after an
// intended change, and review the diff.
func TestCases(t *testing.T) {
	dirs, err := filepath.Glob("../../testdata/cases/*")
	require.NoError(t, err)
	require.NotEmpty(t, dirs)
	for _, dir := range dirs {
		t.Run(filepath.Base(dir), func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "hourly.csv")
			code, _, errOut := runCLI(t, "--log-level", "error", "analyze", "--config", filepath.Join(dir, "config.yaml"),
				"--input", filepath.Join(dir, "input.csv"), "--out", out, "--no-store")
			require.Equal(t, 0, code, errOut)
			want := filepath.Join(dir, "expected.csv")
			if *update {
				b, err := os.ReadFile(out)
				require.NoError(t, err)
				require.NoError(t, os.WriteFile(want, b, 0o644))
				return
			}
			gh, grows := readHourly(t, out)
			wh, wrows := readHourly(t, want)
			require.Equal(t, wh, gh, "columns")
			require.Len(t, grows, len(wrows))
			for i := range wrows {
				for j := range wh {
					w, g := wrows[i][j], grows[i][j]
					wf, errW := strconv.ParseFloat(w, 64)
					gf, errG := strconv.ParseFloat(g, 64)
					if errW == nil && errG == nil {
						if math.Abs(wf-gf) > 1e-6*math.Max(1, math.Abs(wf)) {
							t.Errorf("row %d %s: got %s, want %s", i, wh[j], g, w)
						}
						continue
					}
					if w != g {
						t.Errorf("row %d %s: got %q, want %q", i, wh[j], g, w)
					}
				}
			}
		})
	}
}
