package main

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/demo"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// TestDraft_FixturesReachAnalyze: for each invented building of
// testdata/draft exported as CSV, "dewline draft" writes a configuration
// that "dewline check" accepts as it is, and "dewline analyze" computes
// hours from it: no point map written by hand.
func TestDraft_FixturesReachAnalyze(t *testing.T) {
	for _, f := range []string{"northgate-library.csv", "kestrel-depot.csv", "alder-court.csv", "birchwood-annex.csv"} {
		t.Run(f, func(t *testing.T) {
			dir := t.TempDir()
			export := filepath.Join("../../testdata/draft", f)
			cfg := filepath.Join(dir, "site.yaml")
			code, out, errOut := runCLI(t, "--log-level", "warn", "draft", "--timezone", "UTC", "-o", cfg, export)
			require.Equal(t, 0, code, errOut)
			assert.Contains(t, out, "complete")

			// Accepted as it is; the fixtures' points whose values contradict
			// their declared units need a look (exit status 3).
			code, out, errOut = runCLI(t, "--log-level", "warn", "check", "--config", cfg, "--input", export)
			require.Contains(t, []int{0, exitNeedsLook}, code, errOut)
			assert.Contains(t, out, "valid; 2 air handler(s)")

			hourly := filepath.Join(dir, "hourly.csv")
			code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", export, "--no-store", "--out", hourly)
			require.Equal(t, 0, code, errOut)
			_, rows := readHourly(t, hourly)
			assert.NotEmpty(t, rows)
		})
	}
}

// TestDraft_DemoExports: the draft of the demo's exports against the demo's
// own configuration, written independently of the draft's rules: every
// role the demo maps gets the same point, and the draft analyses.
func TestDraft_DemoExports(t *testing.T) {
	dir := t.TempDir()
	sc, err := demo.Write(dir, demo.Options{Days: demo.MinDays})
	require.NoError(t, err)
	want, err := config.Load(sc.ConfigPath)
	require.NoError(t, err)

	cfg := filepath.Join(dir, "draft.yaml")
	args := append([]string{"--log-level", "warn", "draft", "--timezone", sc.Zone, "-o", cfg}, sc.Exports...)
	code, out, errOut := runCLI(t, args...)
	require.Equal(t, 0, code, errOut+out)
	got, err := config.Load(cfg)
	require.NoError(t, err)
	require.Len(t, got.AirHandlers, len(want.AirHandlers))

	n, same := 0, 0
	for _, wa := range want.AirHandlers {
		ga, ok := got.AirHandler(wa.ID)
		require.True(t, ok, "air handler %s", wa.ID)
		roles := make([]string, 0, len(wa.Points))
		for r := range wa.Points {
			roles = append(roles, r)
		}
		sort.Strings(roles)
		for _, r := range roles {
			n++
			wp, gp := wa.Points[r], ga.Points[r]
			if assert.Equal(t, wp.Name(), gp.Name(), "%s %s", wa.ID, r) && assert.True(t, sameUnitName(r, wp.Unit, gp.Unit), "%s %s: %s vs %s", wa.ID, r, wp.Unit, gp.Unit) {
				same++
			}
		}
	}
	t.Logf("demo: %d of %d mappings of the demo's configuration proposed alike", same, n)

	var inputs []string
	for _, e := range sc.Exports {
		inputs = append(inputs, "--input", e)
	}
	code, _, errOut = runCLI(t, append([]string{"--log-level", "warn", "check", "--config", cfg}, inputs...)...)
	require.Equal(t, 0, code, errOut)
	hourly := filepath.Join(dir, "hourly.csv")
	code, _, errOut = runCLI(t, append([]string{"--log-level", "warn", "analyze", "--config", cfg, "--no-store", "--out", hourly}, inputs...)...)
	require.Equal(t, 0, code, errOut)
	_, rows := readHourly(t, hourly)
	assert.Equal(t, len(want.AirHandlers)*demo.MinDays*24+len(want.AirHandlers), len(rows), "every air handler-hour of the period (the fall-back day has 25)")
}

// sameUnitName compares two unit names as the configuration reads them.
func sameUnitName(role, a, b string) bool {
	spec, _ := metrics.LookupRole(role)
	ua, e1 := psychro.LookupUnit(spec.Kind, a)
	ub, e2 := psychro.LookupUnit(spec.Kind, b)
	return e1 == nil && e2 == nil && ua.Name == ub.Name
}

// TestDraft_OpenData: the open HILFT data (testdata/open; no unit row,
// dates without a year) has no mixed-air point: the draft names the
// roles it can read, writes the unit commented out with what is missing,
// and says so with exit status 1.
func TestDraft_OpenData(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "draft.yaml")
	code, out, errOut := runCLI(t, "--log-level", "warn", "draft", "--timezone", "UTC", "--year", "2023", "--day-first", "no",
		"--id", "HP-1", "-o", cfg, "../../testdata/open/hilft-ashp/Atlanta_Eff_Default.csv.gz")
	assert.Equal(t, 1, code, errOut)
	assert.Contains(t, out, "missing entering_temp")
	assert.Contains(t, out, "missing entering_rh or entering_dewpoint")
	assert.Contains(t, out, "missing leaving_temp")
	assert.Contains(t, errOut, "no air handler has every required role")
	b, err := os.ReadFile(cfg)
	require.NoError(t, err)
	text := string(b)
	// The mappings the data set's own configuration (config.yaml beside it,
	// written by hand) also makes, with the units its metadata gives.
	for _, want := range []string{
		`#       supply_temp:        {column: "sa_temp", unit: "°F"}`,
		`#       supply_flow:        {column: "sa_flow", unit: "CFM"}`,
		`#       outdoor_temp:       {column: "oa_temp", unit: "°F"}`,
		`#       leaving_dewpoint:   {column: "sa_temp_dp", unit: "°F"}`,
	} {
		assert.Contains(t, text, want)
	}
	assert.Contains(t, text, "air_handlers: []")
	assert.True(t, strings.Contains(text, "# HP-1 is incomplete"), text)
}

// TestDraft_NeedsZone: local times without an offset need --timezone, and
// the message says so with the file's name.
func TestDraft_NeedsZone(t *testing.T) {
	code, _, errOut := runCLI(t, "--log-level", "warn", "draft", "../../testdata/draft/alder-court.csv")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "alder-court.csv has local times without a UTC offset: pass --timezone")
}

// TestDraft_KeepsWhatItWouldOverwrite: -o naming one of the exports (here
// through a hard link) is refused before anything is written, and so is
// an existing file unless --force: it may be a configuration the user has
// edited since. Both exit 2 with the fix and leave the file's bytes as they
// were; --force replaces the file with a whole draft.
func TestDraft_KeepsWhatItWouldOverwrite(t *testing.T) {
	dir := t.TempDir()
	src, err := os.ReadFile("../../testdata/draft/alder-court.csv")
	require.NoError(t, err)
	export := filepath.Join(dir, "alder-court.csv")
	require.NoError(t, os.WriteFile(export, src, 0o600))

	link := filepath.Join(dir, "link.csv") // the same file under another name
	require.NoError(t, os.Link(export, link))
	code, _, errOut := runCLI(t, "--log-level", "warn", "draft", "--timezone", "UTC", "-o", link, export)
	refusedUntouched(t, code, errOut, "is the same file as the input", export, src)

	cfg := filepath.Join(dir, "site.yaml")
	edited := []byte("# my edits\nversion: 1\n")
	require.NoError(t, os.WriteFile(cfg, edited, 0o600))
	code, _, errOut = runCLI(t, "--log-level", "warn", "draft", "--timezone", "UTC", "-o", cfg, export)
	refusedUntouched(t, code, errOut, "--force to replace it", cfg, edited)

	code, _, errOut = runCLI(t, "--log-level", "warn", "draft", "--timezone", "UTC", "--force", "-o", cfg, export)
	require.Equal(t, 0, code, errOut)
	_, err = config.Load(cfg)
	require.NoError(t, err, "the replaced file is a whole configuration")
	left, err := filepath.Glob(filepath.Join(dir, ".site.yaml.*"))
	require.NoError(t, err)
	assert.Empty(t, left, "no temporary file left")
}

// TestCheckDraft_KWLoggedInW: a compressor's power logged in W under a
// kW label (the demo's rooftop unit, its values times 1000) is named W by
// check and by draft alike, by one rule (metrics.OtherUnit): its values
// read in Btu/h are typical too, but a factor of 1000 is a prefix slipped
// (W = kW / 1000, SI Brochure, 9th ed., 2019), the likelier mistake.
func TestCheckDraft_KWLoggedInW(t *testing.T) {
	dir := t.TempDir()
	sc, err := demo.Write(dir, demo.Options{Days: demo.MinDays})
	require.NoError(t, err)
	var rtu string
	for _, e := range sc.Exports {
		if strings.Contains(filepath.Base(e), "rtu-5") {
			rtu = e
		}
	}
	require.NotEmpty(t, rtu, "the demo's wide export with a unit row")
	b, err := os.ReadFile(rtu)
	require.NoError(t, err)
	lines := strings.Split(strings.TrimRight(string(b), "\n"), "\n")
	col := slices.Index(strings.Split(lines[0], ","), "RTU-5 Compressor Power")
	require.Positive(t, col)
	require.Equal(t, "kW", strings.Split(lines[1], ",")[col], "the unit row states kW")
	for i := 2; i < len(lines); i++ {
		f := strings.Split(lines[i], ",")
		v, err := strconv.ParseFloat(f[col], 64)
		require.NoError(t, err, "line %d", i+1)
		f[col] = strconv.FormatFloat(v*1000, 'f', -1, 64)
		lines[i] = strings.Join(f, ",")
	}
	watts := filepath.Join(dir, "rtu-watts.csv")
	require.NoError(t, os.WriteFile(watts, []byte(strings.Join(lines, "\n")+"\n"), 0o600))

	code, out, errOut := runCLI(t, "--log-level", "warn", "check", "--config", sc.ConfigPath, "--input", watts)
	require.Equal(t, 3, code, errOut)
	assert.Regexp(t, `RTU-5\s+cooling_kw\s+RTU-5 Compressor Power\s+kW\s.*values look like W, not kW`, out)

	cfg := filepath.Join(dir, "draft.yaml")
	code, out, errOut = runCLI(t, "--log-level", "warn", "draft", "--timezone", sc.Zone, "-o", cfg, watts)
	require.Equal(t, 0, code, errOut+out)
	drafted, err := os.ReadFile(cfg)
	require.NoError(t, err)
	assert.Regexp(t, `declared kW, but the values \([^)]*\) read as W for`, string(drafted))
}

// TestDraft_HeaderOnly: an export cut to its header (and unit row) has no
// data rows; the draft says so, and still maps a wide export's columns by
// name, as the demo's own configuration maps them. A long export names
// its points in its rows: without one, the draft stops with the reason.
func TestDraft_HeaderOnly(t *testing.T) {
	dir := t.TempDir()
	sc, err := demo.Write(dir, demo.Options{Days: demo.MinDays})
	require.NoError(t, err)
	want, err := config.Load(sc.ConfigPath)
	require.NoError(t, err)
	wantRTU, ok := want.AirHandler("RTU-5")
	require.True(t, ok)
	var wide, long string
	for _, e := range sc.Exports {
		switch b := filepath.Base(e); {
		case strings.Contains(b, "rtu-5"):
			wide = e
		case strings.HasPrefix(b, "ahu-1") && strings.HasSuffix(b, ".csv"):
			long = e
		}
	}
	require.NotEmpty(t, wide)
	require.NotEmpty(t, long)
	head := func(src string, n int) string {
		b, err := os.ReadFile(src)
		require.NoError(t, err)
		lines := strings.SplitAfter(string(b), "\n")
		path := filepath.Join(dir, fmt.Sprintf("head%d-%s", n, filepath.Base(src)))
		require.NoError(t, os.WriteFile(path, []byte(strings.Join(lines[:n], "")), 0o600))
		return path
	}
	for _, n := range []int{2, 1} { // with the unit row, and the header alone
		t.Run(fmt.Sprintf("wide head -%d", n), func(t *testing.T) {
			in := head(wide, n)
			cfg := filepath.Join(dir, fmt.Sprintf("draft%d.yaml", n))
			_, out, errOut := runCLI(t, "--log-level", "warn", "draft", "--timezone", sc.Zone, "-o", cfg, in)
			assert.Contains(t, out+errOut, filepath.Base(in)+" has no data rows (only its header)")
			assert.NotContains(t, out+errOut, "missing entering_temp")
			got, err := config.Load(cfg)
			require.NoError(t, err, out+errOut)
			a, ok := got.AirHandler("RTU-5")
			require.True(t, ok)
			for _, r := range []string{"entering_temp", "entering_rh", "leaving_temp", "supply_temp", "supply_flow"} {
				assert.Equal(t, wantRTU.Points[r].Name(), a.Points[r].Name(), r)
			}
		})
	}
	t.Run("long head -1", func(t *testing.T) {
		in := head(long, 1)
		code, out, errOut := runCLI(t, "--log-level", "warn", "draft", "--timezone", sc.Zone, "-o", filepath.Join(dir, "long.yaml"), in)
		assert.Equal(t, 1, code)
		assert.Contains(t, out+errOut, filepath.Base(in)+" has no data rows (only its header): export a period with data")
	})
}
