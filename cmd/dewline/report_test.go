package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards/pdf"

	"github.com/dewline/dewline/deploy/testkit"
)

// reportStore fills the embedded store of analyzeConfig's scenario (one DX
// air handler over two days, electric reheat) through the real pipeline:
// import the export, analyse the stored trends. It returns the config and
// the hourly CSV that analyze wrote.
func reportStore(t *testing.T) (dir, cfg, hourly string) {
	t.Helper()
	dir = t.TempDir()
	cfg, data := writeScenario(t, dir)
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	hourly = filepath.Join(dir, "hourly.csv")
	code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15", "--out", hourly)
	require.Equal(t, 0, code, errOut)
	return dir, cfg, hourly
}

// dataValue reads data-value of the element with id.
func dataValue(t *testing.T, page, id string) float64 {
	t.Helper()
	m := regexp.MustCompile(`id="` + regexp.QuoteMeta(id) + `"[^>]*data-value="([^"]*)"`).FindStringSubmatch(page)
	require.NotNil(t, m, "#%s with a data-value", id)
	v, err := strconv.ParseFloat(m[1], 64)
	require.NoError(t, err)
	return v
}

// TestReport_EndToEnd: the report of a real store carries the same
// avoidable cost as the hourly file analyze wrote (summed here, outside
// the report's code), names the unit and the period, and is written
// atomically (no temporary file is left).
func TestReport_EndToEnd(t *testing.T) {
	dir, cfg, hourly := reportStore(t)
	out := filepath.Join(dir, "out", "report.html")
	require.NoError(t, os.MkdirAll(filepath.Dir(out), 0o755))
	code, stdout, errOut := runCLI(t, "report", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15", "-o", out)
	require.Equal(t, 0, code, errOut)
	assert.Equal(t, out+"\n", stdout, "the path is printed")
	assert.Contains(t, errOut, `"message":"report written"`, "progress goes to the log")
	body, err := os.ReadFile(out)
	require.NoError(t, err)
	page := string(body)
	assert.Contains(t, page, "AHU-7")
	assert.Contains(t, page, "14 Jul 2026 – 15 Jul 2026", "the two local days asked for")
	assert.Contains(t, page, "engineer of record")
	entries, err := os.ReadDir(filepath.Dir(out))
	require.NoError(t, err)
	assert.Len(t, entries, 1, "only the report, no temporary file")

	// The hourly file's cost_avoidable over the hours that start on 14
	// and 15 July in Chicago (05:00Z on the 14th to 05:00Z on the 16th).
	header, rows := readHourly(t, hourly)
	col := map[string]int{}
	for i, h := range header {
		col[h] = i
	}
	sum, n := 0.0, 0
	for _, r := range rows {
		h := r[col["hour_start"]]
		if h < "2026-07-14T05:00:00Z" || h >= "2026-07-16T05:00:00Z" {
			continue
		}
		v, err := strconv.ParseFloat(r[col["cost_avoidable"]], 64)
		require.NoError(t, err)
		sum += v
		n++
	}
	require.Equal(t, 48, n, "the export's two local days (its times are wall times in Chicago)")
	require.Greater(t, sum, 0.0, "the scenario's dry nights have avoidable reheat")
	assert.InEpsilon(t, sum, dataValue(t, page, "total-cost-avoidable"), 1e-6, "the CSV keeps 6 significant digits or more")

	// Without --from/--to: the last 30 days with results, which here
	// begin with the first stored day.
	code, _, errOut = runCLI(t, "--log-level", "warn", "report", "--config", cfg, "-o", out, "--units", "si")
	require.Equal(t, 0, code, errOut)
	body, err = os.ReadFile(out)
	require.NoError(t, err)
	assert.Contains(t, string(body), "14 Jul 2026 – 15 Jul 2026 (2 days")
	assert.Contains(t, string(body), "SI: °C, K, kg")
	assert.Contains(t, string(body), "@page { size: A4; }")

	// RFC 3339 bounds: a span of 24 hours, the end excluded, annualised × 365 / 1.
	code, _, errOut = runCLI(t, "--log-level", "warn", "report", "--config", cfg, "-o", out,
		"--from", "2026-07-14T12:00:00Z", "--to", "2026-07-15T12:00:00Z")
	require.Equal(t, 0, code, errOut)
	body, err = os.ReadFile(out)
	require.NoError(t, err)
	assert.Contains(t, string(body), "14 Jul 2026 07:00 – 15 Jul 2026 07:00 (America/Chicago, end excluded)")
	assert.Contains(t, string(body), "× 365 / 1 days = × 365.00")
}

// reportPages is the number of pages the one-unit report prints on: each
// sheet starts a new page and, for one air handler over two days, fits on
// one: the summary (1), the annualised estimate with the measures (1), the
// air handler's two sheets (2), the method (1), the assumptions with the
// data coverage (1), and the uncertainty with the cautions (1).
const reportPages = 1 + 1 + 2 + 1 + 1 + 1

// TestReport_PDF prints the report with headless Chromium. Outside CI a
// missing browser skips it; under CI=true it fails.
func TestReport_PDF(t *testing.T) {
	t.Setenv(pdf.EnvChromium, testkit.Chromium(t))
	dir, cfg, _ := reportStore(t)
	out := filepath.Join(dir, "report.html")
	code, stdout, errOut := runCLI(t, "report", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15", "-o", out, "--pdf", "--paper", "letter")
	require.Equal(t, 0, code, errOut)
	pdfPath := filepath.Join(dir, "report.pdf")
	assert.Equal(t, out+"\n"+pdfPath+"\n", stdout)
	pdf, err := os.ReadFile(pdfPath)
	require.NoError(t, err)
	require.True(t, bytes.HasPrefix(pdf, []byte("%PDF-")), "starts with the PDF header")
	// Page objects: "/Type /Page" not followed by "s" (the page tree nodes
	// are /Type /Pages). Chromium (Skia) writes them uncompressed.
	pages := len(regexp.MustCompile(`/Type\s*/Page([^s]|$)`).FindAll(pdf, -1))
	assert.Equal(t, reportPages, pages)
	if _, err := exec.LookPath("pdfinfo"); err == nil {
		info, err := exec.Command("pdfinfo", pdfPath).Output()
		require.NoError(t, err)
		assert.Regexp(t, `Pages:\s+`+strconv.Itoa(reportPages)+`\n`, string(info), "poppler agrees")
		assert.Regexp(t, `Page size:\s+612 x 792 pts \(letter\)`, string(info), "the report's @page size")
	}
	if _, err := exec.LookPath("pdftotext"); err == nil {
		// The air handler's first sheet is page 3: after the summary and the measures.
		txt, err := exec.Command("pdftotext", "-f", "3", "-l", "3", pdfPath, "-").Output()
		require.NoError(t, err)
		assert.Contains(t, string(txt), "1. AHU-7")
		txt, err = exec.Command("pdftotext", "-f", strconv.Itoa(reportPages), "-l", strconv.Itoa(reportPages), pdfPath, "-").Output()
		require.NoError(t, err)
		assert.Contains(t, string(txt), "Cautions")
	}

	// --pdf-out chooses the file.
	other := filepath.Join(dir, "print", "owner.pdf")
	require.NoError(t, os.MkdirAll(filepath.Dir(other), 0o755))
	code, stdout, errOut = runCLI(t, "--log-level", "warn", "report", "--config", cfg, "-o", out, "--pdf-out", other)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, stdout, other)
	_, err = os.Stat(other)
	assert.NoError(t, err)
}

// TestReport_PDFWithoutChromium: with no browser the HTML is still written
// and the error says how to get one.
func TestReport_PDFWithoutChromium(t *testing.T) {
	dir, cfg, _ := reportStore(t)
	t.Setenv(pdf.EnvChromium, filepath.Join(dir, "no-such-chromium"))
	out := filepath.Join(dir, "report.html")
	code, stdout, errOut := runCLI(t, "--log-level", "warn", "report", "--config", cfg, "-o", out, "--pdf")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "--pdf needs Chromium: install the Debian package chromium (apt-get install chromium) or set DEWLINE_CHROMIUM")
	assert.Contains(t, errOut, "the HTML report was written to "+out)
	assert.Contains(t, errOut, "no-such-chromium")
	assert.Equal(t, out+"\n", stdout)
	_, err := os.Stat(out)
	assert.NoError(t, err, "the HTML is there")
	_, err = os.Stat(filepath.Join(dir, "report.pdf"))
	assert.True(t, os.IsNotExist(err), "no PDF")
}

// TestReport_PartCoverage: a period that results cover only in part says
// so in the summary and in a warning; the scenario holds two whole days
// of results (14 and 15 July), so four days are half covered.
func TestReport_PartCoverage(t *testing.T) {
	dir, cfg, _ := reportStore(t)
	out := filepath.Join(dir, "r.html")
	code, _, errOut := runCLI(t, "--log-level", "warn", "report", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-17", "-o", out)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, errOut, "results cover only 50 % of the period's air handler-hours")
	body, err := os.ReadFile(out)
	require.NoError(t, err)
	assert.True(t, strings.Contains(string(body), `id="results-coverage">50 % of the period's air handler-hours: the figures count the hours without results as nothing`), "the summary states the coverage")

	// The whole two days: covered, no warning.
	code, _, errOut = runCLI(t, "--log-level", "warn", "report", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15", "-o", out)
	require.Equal(t, 0, code, errOut)
	assert.NotContains(t, errOut, "results cover only")
	body, err = os.ReadFile(out)
	require.NoError(t, err)
	assert.True(t, strings.Contains(string(body), `id="results-coverage">100 % of the period's air handler-hours</dd>`), "the summary states the coverage")
}

func TestReport_BadInput(t *testing.T) {
	dir, cfg, _ := reportStore(t)
	// A store with trends but no results yet.
	emptyDir := t.TempDir()
	emptyCfg, data := writeScenario(t, emptyDir)
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", emptyCfg, data)
	require.Equal(t, 0, code, errOut)
	out := filepath.Join(dir, "r.html")
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no config", []string{"report", "-o", out}, 2, "--config is required"},
		{"bad units", []string{"report", "--config", cfg, "--units", "metric"}, 2, `--units "metric": use si or ip`},
		{"bad paper", []string{"report", "--config", cfg, "--paper", "a3"}, 2, `--paper "a3": use a4 or letter`},
		{"bad time", []string{"report", "--config", cfg, "--from", "July"}, 2, "is not a time"},
		{"reversed", []string{"report", "--config", cfg, "--from", "2026-07-15", "--to", "2026-07-14"}, 2, "--to must be after --from"},
		{"too long", []string{"report", "--config", cfg, "--from", "2025-01-01", "--to", "2026-07-14"}, 2, "longer than 400 days"},
		{"stray argument", []string{"report", "--config", cfg, "extra"}, 2, `unexpected argument "extra"`},
		{"no results yet", []string{"report", "--config", emptyCfg, "-o", out}, 1, "the store holds no results yet"},
		{"period without results", []string{"report", "--config", cfg, "--from", "2026-06-01", "--to", "2026-06-10", "-o", out}, 1,
			"no results are stored for 1 Jun 2026 – 10 Jun 2026, so the report would show no avoidable cost for lack of data"},
		{"folder missing", []string{"report", "--config", cfg, "-o", filepath.Join(dir, "nope", "r.html")}, 1, "nope"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, _, errOut := runCLI(t, append([]string{"--log-level", "error"}, tt.args...)...)
			assert.Equal(t, tt.code, code, errOut)
			assert.Contains(t, errOut, tt.want)
		})
	}
	_, err := os.Stat(out)
	assert.True(t, os.IsNotExist(err), "no failed run left a report")
	// The help names the command's purpose.
	code, stdout, _ := runCLI(t, "report", "-h")
	assert.Equal(t, 0, code)
	assert.True(t, strings.Contains(stdout, "self-contained HTML report"), stdout)
}
