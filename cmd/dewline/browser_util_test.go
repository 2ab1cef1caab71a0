package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/log"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards/pdf"
	"github.com/dewline/dewline/deploy/testkit"
)

// Shared code of the browser tests: the scenario they serve, the dashboard
// served in process by "dewline serve", and a headless Chromium that records
// every console error, exception, Content-Security-Policy violation and
// JavaScript dialog of the pages it opens.

// ---------------------------------------------------------------------------
// The scenario

// The browser tests' site, invented for them: a harbour-side hall at sea
// level (so the chart's pressure is the standard 101.325 kPa) with three
// air handlers. AHU-1 takes in muggy outdoor air, so its chart reaches
// high humidity ratios; the second one's name and the third one's id are
// markup, which the pages must show as text. By day (08-20 site time) the
// air entering the coils is humid and reheat is needed; at night it is dry
// and the reheat still runs: reheat the target did not need, which opens
// an alert each night. The third unit's airflow meter dies three hours
// before the last day (the engine holds its last reading for a while), so
// that day has no covered step and no efficiency for it ("–" on the pages).
const (
	xssName   = `<script>alert("x")</script>`
	xssID     = `b"><img src=x onerror=alert(2)>`
	xssNotID  = `<svg onload=alert(4)>` // an unknown unit for the 404 page
	dashFirst = "2026-06-01"            // first local day of the trend export
	dashDays  = 9
)

var dashZone = mustZone("America/New_York")

func mustZone(name string) *time.Location {
	z, err := time.LoadLocation(name)
	if err != nil {
		panic(err)
	}
	return z
}

// dashAirHandler is one air handler of the scenario.
type dashAirHandler struct {
	id, name, col string
	// by day and by night: entering °C and RH %, coil leaving °C
	dayT, dayRH, dayLAT       float64
	nightT, nightRH, nightLAT float64
	satC, flowLs              float64
	deadFlowLastDay           bool
}

var dashAirHandlers = []dashAirHandler{
	{id: "AHU-1", name: "Harbour hall outdoor-air unit", col: "A1", dayT: 29, dayRH: 76, dayLAT: 11.5, nightT: 22, nightRH: 45, nightLAT: 13,
		satC: 18, flowLs: 2600},
	{id: "AHU-2", name: xssName, col: "A2", dayT: 24.5, dayRH: 62, dayLAT: 11, nightT: 22.5, nightRH: 40, nightLAT: 12.5,
		satC: 17, flowLs: 3800},
	{id: xssID, name: "Records & archive's wing", col: "A3", dayT: 23.5, dayRH: 58, dayLAT: 11.5, nightT: 22, nightRH: 38, nightLAT: 13,
		satC: 16.5, flowLs: 1400, deadFlowLastDay: true},
}

// dashConfig is the site's configuration; the store file sits beside it.
func dashConfig() string {
	var b strings.Builder
	b.WriteString(`version: 1
site: {id: harbour-lane, name: Harbour Lane Test Hall, timezone: America/New_York, altitude: 0m, units: si}
store: {kind: embedded, path: dash.db}
grid: {step: 5m}
prices: {currency: USD, electricity_per_kwh: 0.14}
air_handlers:
`)
	for _, u := range dashAirHandlers {
		fmt.Fprintf(&b, `  - id: %s
    name: %s
    cooling: {kind: dx, rated_eer: 10.5}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: none}
    target: {max_supply_dewpoint: 12C}
    points:
      entering_temp: {column: %s_MAT, unit: C}
      entering_rh:   {column: %s_MARH, unit: "%%"}
      leaving_temp:  {column: %s_LAT, unit: C}
      supply_temp:   {column: %s_SAT, unit: C}
      supply_flow:   {column: %s_FLOW, unit: L/s}
`, yamlQuote(u.id), yamlQuote(u.name), u.col, u.col, u.col, u.col, u.col)
	}
	return b.String()
}

// yamlQuote writes s as a single-quoted YAML scalar.
func yamlQuote(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }

// writeDashTrends writes the export: five-minute readings of every unit over
// dashDays local days, times in RFC 3339 UTC.
func writeDashTrends(t *testing.T, path string) {
	t.Helper()
	first, err := time.ParseInLocation(time.DateOnly, dashFirst, dashZone)
	require.NoError(t, err)
	end := first.AddDate(0, 0, dashDays)
	lastDay := end.AddDate(0, 0, -1)
	var b bytes.Buffer
	b.WriteString("Time")
	for _, u := range dashAirHandlers {
		fmt.Fprintf(&b, ",%[1]s_MAT,%[1]s_MARH,%[1]s_LAT,%[1]s_SAT,%[1]s_FLOW", u.col)
	}
	b.WriteString("\n")
	for ts := first; ts.Before(end); ts = ts.Add(5 * time.Minute) {
		b.WriteString(ts.UTC().Format(time.RFC3339))
		lh := ts.Hour()
		day := lh >= 8 && lh < 20
		x := float64(ts.Sub(first) / time.Minute)
		for k, u := range dashAirHandlers {
			mat, rh, lat := u.nightT, u.nightRH, u.nightLAT
			if day {
				mat, rh, lat = u.dayT, u.dayRH, u.dayLAT
			}
			mat += 0.6 * math.Sin(x/97+float64(k))
			rh += 1.5 * math.Sin(x/41+float64(k))
			lat += 0.15 * math.Sin(x/23)
			sat := u.satC + 0.1*math.Sin(x/29)
			flow := strconv.FormatFloat(u.flowLs+40*math.Sin(x/61), 'f', 0, 64)
			if u.deadFlowLastDay && !ts.Before(lastDay.Add(-3*time.Hour)) {
				flow = ""
			}
			fmt.Fprintf(&b, ",%.2f,%.1f,%.2f,%.2f,%s", mat, rh, lat, sat, flow)
		}
		b.WriteString("\n")
	}
	require.NoError(t, os.WriteFile(path, b.Bytes(), 0o600))
}

// dashSite writes the configuration and the export into dir and analyses
// the export into the configured embedded store with "dewline analyze"
// (which also writes the hourly records to hourly.csv, for the test's own
// sums). It returns the configuration's path and the hourly file's.
func dashSite(t *testing.T, dir string) (cfg, hourly string) {
	t.Helper()
	cfg = filepath.Join(dir, "site.yaml")
	require.NoError(t, os.WriteFile(cfg, []byte(dashConfig()), 0o600))
	export := filepath.Join(dir, "export.csv")
	writeDashTrends(t, export)
	hourly = filepath.Join(dir, "hourly.csv")
	code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", export, "--out", hourly)
	require.Equal(t, 0, code, errOut)
	return cfg, hourly
}

// ---------------------------------------------------------------------------
// The dashboard

var servedURL = regexp.MustCompile(`dashboard: (http://\S+?)/ `)

// serveDash runs "dewline serve --config cfg --listen 127.0.0.1:0" in
// process until the test ends and returns its base URL (no trailing /).
func serveDash(t *testing.T, cfg string, more ...string) string {
	t.Helper()
	args := []string{"--log-level", "warn", "serve", "--config", cfg, "--listen", "127.0.0.1:0"}
	for _, c := range more {
		args = append(args, "--config", c)
	}
	ctx, cancel := context.WithCancel(context.Background())
	var stdout, stderr testkit.SyncBuffer
	done := make(chan int, 1)
	go func() {
		done <- run(ctx, args, &stdout, &stderr)
	}()
	t.Cleanup(func() {
		cancel()
		select {
		case code := <-done:
			if code != 0 {
				t.Errorf("dewline serve exited %d\nstderr:\n%s", code, stderr.String())
			}
		case <-time.After(15 * time.Second):
			t.Errorf("dewline serve did not stop within 15 s of its context ending")
		}
	})
	deadline := time.Now().Add(20 * time.Second)
	for {
		if m := servedURL.FindStringSubmatch(stdout.String()); m != nil {
			return m[1]
		}
		select {
		case code := <-done:
			t.Fatalf("dewline serve exited %d before listening\nstderr:\n%s", code, stderr.String())
		case <-time.After(20 * time.Millisecond):
		}
		if time.Now().After(deadline) {
			t.Fatalf("dewline serve printed no address within 20 s\nstdout:\n%s\nstderr:\n%s", stdout.String(), stderr.String())
		}
	}
}

// getJSON decodes GET base+path into v and requires a 200.
func getJSON(t *testing.T, base, path string, v any) {
	t.Helper()
	resp, err := http.Get(base + path)
	require.NoError(t, err)
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	require.NoError(t, err)
	require.Equal(t, http.StatusOK, resp.StatusCode, "GET %s: %s", path, body)
	require.NoError(t, json.Unmarshal(body, v), "GET %s", path)
}

// ---------------------------------------------------------------------------
// The browser

// shotsDir is where the screenshots go: $DEWLINE_ARTIFACTS/browser when
// set, else a new temporary folder. It is kept after the test, and its path
// is printed to the test log and to stderr so that CI logs show it.
func shotsDir(t *testing.T) string {
	t.Helper()
	var dir string
	if a := os.Getenv("DEWLINE_ARTIFACTS"); a != "" {
		dir = filepath.Join(a, "browser")
		require.NoError(t, os.MkdirAll(dir, 0o755))
	} else {
		var err error
		dir, err = os.MkdirTemp("", "dewline-browser-")
		require.NoError(t, err)
	}
	t.Logf("screenshots of the dashboard: %s", dir)
	fmt.Fprintf(os.Stderr, "dewline browser test: screenshots of the dashboard in %s\n", dir)
	return dir
}

// browser is one headless Chromium tab with its recorders.
type browser struct {
	ctx   context.Context
	shots string

	mu       sync.Mutex
	problems []string // console errors, exceptions and CSP violations since the last open
	dialogs  []string // every JavaScript dialog, for the whole test
	nShots   int
	nLoads   int
	loadTime time.Duration // spent loading pages
	shotTime time.Duration // spent taking screenshots
}

// stats summarises the pages opened, for the test log.
func (b *browser) stats() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return fmt.Sprintf("%d page loads in %.1f s, %d screenshots in %.1f s", b.nLoads, b.loadTime.Seconds(), b.nShots, b.shotTime.Seconds())
}

// startBrowser starts Chromium (headless, a fresh profile in a temporary
// folder, no network services of its own) for the rest of the test.
func startBrowser(t *testing.T) *browser {
	t.Helper()
	exe := testkit.Chromium(t)
	profile := t.TempDir()
	opts := append(pdf.HeadlessOptions(exe, profile), chromedp.WindowSize(1280, 900))
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancelTab := chromedp.NewContext(actx)
	t.Cleanup(func() { cancelTab(); cancelAlloc() }) // cancelAlloc waits for the browser to exit
	b := &browser{ctx: ctx, shots: shotsDir(t)}
	require.NoError(t, chromedp.Listen(ctx, b.record), "start Chromium (%s)", exe)
	// A dialog blocks the page: record it and dismiss it from another
	// goroutine (the listener must not send commands).
	dialogs := chromedp.Events(ctx, page.JavascriptDialogOpening)
	go func() {
		for ev, err := range dialogs {
			if err != nil {
				return
			}
			b.mu.Lock()
			b.dialogs = append(b.dialogs, string(ev.Type)+": "+ev.Message)
			b.mu.Unlock()
			_, _ = chromedp.Call(ctx, page.HandleJavaScriptDialog, page.HandleJavaScriptDialogParams{Accept: false})
		}
	}()
	return b
}

// record keeps what a page must not produce. It runs on the tab's reading
// goroutine: it only appends under the lock.
func (b *browser) record(ev any) {
	var p string
	switch e := ev.(type) {
	case *runtime.EventConsoleAPICalled:
		// The pages have no script: any console call at all is a finding.
		var args []string
		for _, a := range e.Args {
			args = append(args, strings.Trim(string(a.Value), `"`)+a.Description)
		}
		p = fmt.Sprintf("console.%s: %s", e.Type, strings.Join(args, " "))
	case *runtime.EventExceptionThrown:
		p = "exception: " + e.ExceptionDetails.Text
		if e.ExceptionDetails.Exception != nil {
			p += " " + e.ExceptionDetails.Exception.Description
		}
	case *log.EventEntryAdded:
		// CSP violations arrive here with source "security"; failed
		// loads with "network". Verbose and info entries are not findings.
		if e.Entry.Level == log.EntryLevelError || e.Entry.Level == log.EntryLevelWarning || e.Entry.Source == log.EntrySourceSecurity {
			p = fmt.Sprintf("log %s/%s: %s (%s)", e.Entry.Source, e.Entry.Level, e.Entry.Text, e.Entry.URL)
		}
	}
	if p == "" {
		return
	}
	b.mu.Lock()
	b.problems = append(b.problems, p)
	b.mu.Unlock()
}

// takeProblems returns and clears the recorded problems.
func (b *browser) takeProblems() []string {
	b.mu.Lock()
	defer b.mu.Unlock()
	p := b.problems
	b.problems = nil
	return p
}

func (b *browser) dialogList() []string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return append([]string(nil), b.dialogs...)
}

// shown is what a page looked like when it had loaded.
type shown struct {
	url      string
	status   int64
	problems []string
}

// open loads url, waits for it, saves a full-page screenshot named after
// name (none when name is "") and returns the document's status and the problems recorded while
// it loaded.
func (b *browser) open(t *testing.T, url, name string) shown {
	t.Helper()
	resp := b.navigate(t, "open "+url, func(ctx context.Context) (*network.Response, error) {
		return chromedp.Run(ctx, chromedp.NavigateResponse(url))
	})
	return b.loaded(t, url, resp.Status, name)
}

// click clicks the element with id and waits for the page it navigates to.
func (b *browser) click(t *testing.T, id, name string) shown {
	t.Helper()
	resp := b.navigate(t, "click #"+id, func(ctx context.Context) (*network.Response, error) {
		return chromedp.RunResponse(ctx, chromedp.Click(chromedp.ID(id)))
	})
	return b.loaded(t, resp.URL, resp.Status, name)
}

// navigate forgets the problems recorded so far, runs step, which loads a
// page (what names it in a failure), and counts its time as loading time.
func (b *browser) navigate(t *testing.T, what string, step func(context.Context) (*network.Response, error)) *network.Response {
	t.Helper()
	b.takeProblems()
	ctx, cancel := context.WithTimeout(b.ctx, 20*time.Second)
	defer cancel()
	start := time.Now()
	resp, err := step(ctx)
	require.NoError(t, err, what)
	b.timed(&b.loadTime, start)
	return resp
}

func (b *browser) timed(d *time.Duration, start time.Time) {
	b.mu.Lock()
	defer b.mu.Unlock()
	*d += time.Since(start)
	if d == &b.loadTime {
		b.nLoads++
	}
}

func (b *browser) loaded(t *testing.T, url string, status int64, name string) shown {
	t.Helper()
	if name != "" {
		b.screenshot(t, name)
	}
	return shown{url: url, status: status, problems: b.takeProblems()}
}

var unsafeName = regexp.MustCompile(`[^a-zA-Z0-9._-]+`)

func (b *browser) screenshot(t *testing.T, name string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, 20*time.Second)
	defer cancel()
	start := time.Now()
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100)) // 100: PNG
	require.NoError(t, err, "screenshot %s", name)
	b.timed(&b.shotTime, start)
	b.mu.Lock()
	b.nShots++
	n := b.nShots
	b.mu.Unlock()
	file := filepath.Join(b.shots, fmt.Sprintf("%02d-%s.png", n, strings.Trim(unsafeName.ReplaceAllString(name, "_"), "_")))
	require.NoError(t, os.WriteFile(file, png, 0o644))
}

// eval evaluates a JavaScript expression in the page and decodes its value.
func eval[T any](t *testing.T, b *browser, expr string) T {
	t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, 10*time.Second)
	defer cancel()
	v, err := chromedp.Run(ctx, chromedp.Evaluate[T](expr))
	require.NoError(t, err, "evaluate %s", expr)
	return v
}

// ---------------------------------------------------------------------------
// Numbers as the pages show them

// The pages' number rules (dashboards/format.go): a missing value is "–",
// thousands are grouped with commas, a fixed number of decimals, and
// percentages as "NN %".

// shownNumber is a number read back from a page: its value and the half
// width of the rounding of the shown decimals.
type shownNumber struct {
	v, half float64
	missing bool
}

var shownRe = regexp.MustCompile(`^(-?[0-9]{1,3}(?:,[0-9]{3})*|-?[0-9]+)(?:\.([0-9]+))?( %)?$`)

// parseShown reads a number as the pages print it.
func parseShown(s string) (shownNumber, error) {
	s = strings.TrimSpace(s)
	if s == "–" {
		return shownNumber{v: math.NaN(), missing: true}, nil
	}
	m := shownRe.FindStringSubmatch(s)
	if m == nil {
		return shownNumber{}, fmt.Errorf("%q is not a number as the pages print them", s)
	}
	v, err := strconv.ParseFloat(strings.ReplaceAll(m[1], ",", "")+"."+m[2]+"0", 64)
	if err != nil {
		return shownNumber{}, err
	}
	half := 0.5 * math.Pow(10, -float64(len(m[2])))
	if m[3] != "" {
		v, half = v/100, half/100
	}
	return shownNumber{v: v, half: half}, nil
}

// sameShown checks that text shows want within the rounding of its
// decimals. want comes from the JSON API, which keeps 6 significant
// digits: a relative 5e-6 more is allowed for that rounding.
func sameShown(text string, want float64) error {
	got, err := parseShown(text)
	if err != nil {
		return err
	}
	if math.IsNaN(want) || math.IsInf(want, 0) {
		if !got.missing {
			return fmt.Errorf("%q shown for a missing value (want –)", text)
		}
		return nil
	}
	if got.missing {
		return fmt.Errorf("– shown for %g", want)
	}
	tol := got.half + 5e-6*math.Abs(want) + 1e-12
	if d := math.Abs(got.v - want); d > tol {
		return fmt.Errorf("%q shown, want %g (off by %.6g, more than the %.3g of the rounding)", text, want, d, tol)
	}
	return nil
}

// TestBrowser_ParseShown: the reader of shown numbers follows the pages'
// rules (dashboards/format.go) and rejects what they never print.
func TestBrowser_ParseShown(t *testing.T) {
	tests := []struct {
		name, text string
		v, half    float64
		missing    bool
		bad        bool
	}{
		{name: "grouped", text: "12,345", v: 12345, half: 0.5},
		{name: "grouped with decimals", text: "1,234,567.89", v: 1234567.89, half: 0.005},
		{name: "one decimal", text: "-3.4", v: -3.4, half: 0.05},
		{name: "percentage", text: "84 %", v: 0.84, half: 0.005},
		{name: "missing", text: "–", missing: true},
		{name: "bad grouping", text: "1,23", bad: true},
		{name: "not a number", text: "NaN", bad: true},
		{name: "hyphen for missing", text: "-", bad: true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := parseShown(tt.text)
			if tt.bad {
				require.Error(t, err)
				return
			}
			require.NoError(t, err)
			require.Equal(t, tt.missing, got.missing)
			if !tt.missing {
				require.InDelta(t, tt.v, got.v, 1e-9)
				require.InDelta(t, tt.half, got.half, 1e-12)
			}
		})
	}
	require.NoError(t, sameShown("1,234.6", 1234.64))
	require.Error(t, sameShown("1,234.6", 1234.66), "outside the rounding of one decimal")
	require.Error(t, sameShown("0.0", math.NaN()), "a missing value must show as –")
	require.Error(t, sameShown("–", 0), "a value must not show as –")
}
