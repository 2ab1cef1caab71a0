// Package testkit holds what dewline's tests share: the rule for a service
// a test needs (InfluxDB, npm psychrolib, Chromium, which deploy/dev/test.sh
// starts or installs), and small helpers. It is imported by tests only.
package testkit

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
)

// InCI reports whether the tests run under CI (CI=true), where a missing
// service is a failure rather than a skip.
func InCI() bool { return os.Getenv("CI") == "true" }

// Need ends the test when a service it needs is missing: under CI=true it
// fails, elsewhere it skips; the message says what is missing and how to
// provide it.
func Need(t testing.TB, missing string) {
	t.Helper()
	if InCI() {
		t.Fatalf("%s (required under CI; deploy/dev/test.sh provides it)", missing)
	}
	t.Skipf("%s; run deploy/dev/test.sh to provide it", missing)
}

// InfluxDB returns the test server's URL and database, which
// deploy/dev/test.sh starts and announces in DEWLINE_INFLUX_URL and
// DEWLINE_INFLUX_DB; without them the test skips, or fails under CI.
func InfluxDB(t testing.TB) (url, db string) {
	t.Helper()
	url, db = os.Getenv("DEWLINE_INFLUX_URL"), os.Getenv("DEWLINE_INFLUX_DB")
	if url == "" || db == "" {
		Need(t, "no InfluxDB test server: DEWLINE_INFLUX_URL and DEWLINE_INFLUX_DB are not set")
	}
	return url, db
}

// Chromium returns the browser the browser tests drive: $DEWLINE_CHROMIUM,
// else Debian's /usr/bin/chromium; without it the test skips, or fails
// under CI.
func Chromium(t testing.TB) string {
	t.Helper()
	p := os.Getenv("DEWLINE_CHROMIUM")
	if p == "" {
		p = "/usr/bin/chromium"
	}
	if _, err := exec.LookPath(p); err != nil {
		Need(t, fmt.Sprintf("no Chromium at %s (%v): install Debian's chromium package (apt-get install chromium) or set DEWLINE_CHROMIUM to a Chromium binary", p, err))
	}
	return p
}

// Psychrolib returns the folder holding npm psychrolib 1.1.1
// ($DEWLINE_PSYCHROLIB), the independent reference the cross-checks run
// through node; without it or node the test skips, or fails under CI.
func Psychrolib(t testing.TB) string {
	t.Helper()
	dir := os.Getenv("DEWLINE_PSYCHROLIB")
	if _, err := exec.LookPath("node"); dir == "" || err != nil {
		Need(t, "npm psychrolib not available: set DEWLINE_PSYCHROLIB to its folder and install node")
	}
	return dir
}

// Node runs a script under node with DEWLINE_PSYCHROLIB set (Psychrolib)
// and returns what it printed; the test fails when the script does.
func Node(t testing.TB, script string, args ...string) []byte {
	t.Helper()
	dir := Psychrolib(t)
	cmd := exec.Command("node", append([]string{script}, args...)...)
	cmd.Env = append(os.Environ(), "DEWLINE_PSYCHROLIB="+dir)
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("node %s: %v\n%s", script, err, out)
	}
	return out
}

// PsychrolibStates runs psychro/testdata/psychrolib.js "check" over
// states (dry bulb, RH fraction, pressure; °C and Pa for system "SI", °F
// and psi for "IP") and returns psychrolib's row for each: W, dew point,
// wet bulb, enthalpy (J/kg or Btu/lb), specific volume, density, in the
// system's units. A state psychrolib refuses fails the test.
func PsychrolibStates(t testing.TB, system string, states [][3]float64) [][]float64 {
	t.Helper()
	tmp := t.TempDir()
	in, out := filepath.Join(tmp, "in.csv"), filepath.Join(tmp, "out.csv")
	var b bytes.Buffer
	for _, s := range states {
		fmt.Fprintf(&b, "%.17g,%.17g,%.17g\n", s[0], s[1], s[2])
	}
	if err := os.WriteFile(in, b.Bytes(), 0o600); err != nil {
		t.Fatal(err)
	}
	Node(t, filepath.Join(Root(t), "psychro", "testdata", "psychrolib.js"), "check", system, in, out)
	data, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(data)), "\n")
	if len(lines) != len(states) {
		t.Fatalf("psychrolib answered %d rows for %d states", len(lines), len(states))
	}
	rows := make([][]float64, len(lines))
	for i, l := range lines {
		for _, f := range strings.Split(l, ",") {
			v, err := strconv.ParseFloat(f, 64)
			if err != nil {
				t.Fatalf("psychrolib refused state %v: %s", states[i], l)
			}
			rows[i] = append(rows[i], v)
		}
	}
	return rows
}

// Root returns the module's root folder (where go.mod is), found upward
// from the test's working folder.
func Root(t testing.TB) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			t.Fatal("no go.mod above the test's folder")
		}
		dir = parent
	}
}

// SyncBuffer is a log sink safe for concurrent writers.
type SyncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *SyncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *SyncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}
