package main

import (
	"encoding/json"
	"math"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestCompare_Browser opens the comparison page that "dewline compare -o"
// writes in a real headless Chromium: it loads without a console message,
// an exception or a violation of its own Content-Security-Policy (which
// allows its stylesheet by hash and nothing else), the stylesheet applied,
// the predicted-vs-measured chart is drawn across its plot, and the
// headline, every finding ("no significant change" among them) and every
// avoided percentage shown are the figures of "dewline compare --json".
func TestCompare_Browser(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeOutdoorSequence(t, dir)
	code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--from", "2026-07-14", "--to", "2026-07-19")
	require.Equal(t, 0, code, errOut)
	page := filepath.Join(dir, "compare.html")
	args := []string{"--log-level", "warn", "compare", "--config", cfg, "--before", "2026-07-14..2026-07-15", "--after", "2026-07-16..2026-07-17", "--units", "si"}
	code, _, errOut = runCLI(t, append(args, "-o", page)...)
	require.Equal(t, 0, code, errOut)
	code, out, errOut := runCLI(t, append(args, "--json")...)
	require.Equal(t, 0, code, errOut)
	var c struct {
		Units []struct {
			ID    string `json:"id"`
			Model struct {
				Drivers string `json:"drivers"`
				Savings []struct {
					Quantity   string   `json:"quantity"`
					AvoidedPct *float64 `json:"avoided_pct"`
					Finding    string   `json:"finding"`
				} `json:"savings"`
			} `json:"baseline_model"`
		} `json:"units"`
		Total struct {
			Savings []struct {
				AvoidedPct *float64 `json:"avoided_pct"`
				Finding    string   `json:"finding"`
			} `json:"savings"`
		} `json:"total"`
	}
	require.NoError(t, json.Unmarshal([]byte(out), &c), out)
	require.Len(t, c.Units, 1)
	sv := c.Units[0].Model.Savings
	require.Len(t, sv, 4)
	findings := map[string]bool{}
	for _, s := range sv {
		findings[s.Finding] = true
	}
	require.True(t, findings["saving"] && findings["no significant change"],
		"the scenario changes the reheat and leaves the coil alone: both findings must be on the page (%v)", findings)

	// The file as a reviewer opens it: served as it is, with no header of
	// the server's own, so the page's policy is the only one.
	srv := httptest.NewServer(http.FileServer(http.Dir(dir)))
	t.Cleanup(srv.Close)
	b := startBrowser(t)
	s := b.open(t, srv.URL+"/compare.html", "compare")
	assert.EqualValues(t, http.StatusOK, s.status)
	assert.Empty(t, s.problems, "console, exceptions or CSP violations on the comparison page")
	assert.Zero(t, eval[int](t, b, inertJS), "active elements on the comparison page")
	// The stylesheet applied (allowed by its hash): the header's colour
	// is the page's brand colour, #0f5c63.
	assert.Equal(t, "rgb(15, 92, 99)", eval[string](t, b, `getComputedStyle(document.querySelector('header')).backgroundColor`))

	// The predicted-vs-measured chart: both lines drawn across most of the
	// plot (two periods of 48 hours each, a gap between them).
	type line struct {
		Paths int
		D     string
		Width float64
	}
	type fit struct {
		SVGWidth            float64
		Measured, Predicted line
	}
	f := eval[fit](t, b, `(() => {
		const svg = document.querySelector('figure.fit[data-unit="AHU-7"] svg');
		if (!svg) return {SVGWidth: 0};
		const line = cls => {
			const paths = [...svg.querySelectorAll('.' + cls)].flatMap(e => e.tagName === 'path' ? [e] : [...e.querySelectorAll('path')])
				.filter(p => (p.getAttribute('d') || '').length > 20);
			let lo = Infinity, hi = -Infinity;
			for (const p of paths) { const bb = p.getBBox(); lo = Math.min(lo, bb.x); hi = Math.max(hi, bb.x + bb.width); }
			return {Paths: paths.length, D: paths.map(p => p.getAttribute('d')).join(' '), Width: paths.length ? hi - lo : 0};
		};
		return {SVGWidth: svg.viewBox.baseVal.width || svg.getBBox().width, Measured: line('measured'), Predicted: line('predicted')};
	})()`)
	require.Greater(t, f.SVGWidth, 0.0, "no fit chart for AHU-7")
	for name, l := range map[string]line{"measured": f.Measured, "predicted": f.Predicted} {
		assert.Positive(t, l.Paths, "%s line", name)
		assert.Greater(t, l.Width, 0.6*f.SVGWidth, "%s: drawn across the plot", name)
	}
	assert.NotEqual(t, f.Measured.D, f.Predicted.D, "after the change the model predicts twice the measured reheat of a humid hour")

	// The headline card and every row of the savings table against --json.
	head := eval[string](t, b, `document.querySelector('[data-field="card-avoided-reheat"]').textContent.trim()`)
	assert.NoError(t, samePct(head, c.Total.Savings[0].AvoidedPct), "headline")
	note := eval[string](t, b, `document.querySelector('#card-avoided-reheat .note').textContent`)
	assert.True(t, strings.HasSuffix(strings.TrimSpace(note), ": "+c.Total.Savings[0].Finding), "headline note %q", note)
	type row struct{ Unit, Quantity, Pct, Finding string }
	rows := eval[[]row](t, b, `[...document.querySelectorAll('#savings-table tbody tr')].map(tr => ({
		Unit: tr.dataset.unit, Quantity: tr.dataset.quantity,
		Pct: tr.querySelector('[data-field=avoided_pct]').textContent.trim(),
		Finding: tr.querySelector('[data-field=finding]').textContent.trim()}))`)
	require.Len(t, rows, 4, "one air handler, four quantities")
	shownNoChange := 0
	for i, r := range rows {
		assert.Equal(t, "AHU-7", r.Unit)
		assert.Equal(t, sv[i].Finding, r.Finding, "%s finding", r.Quantity)
		assert.NoError(t, samePct(r.Pct, sv[i].AvoidedPct), "%s avoided", r.Quantity)
		if r.Finding == "no significant change" {
			shownNoChange++
		}
	}
	assert.Positive(t, shownNoChange, "\"no significant change\" is shown")
	assert.Equal(t, "outdoor", eval[string](t, b, `document.querySelector('#drivers [data-field=drivers]').textContent`))

	// The policy is in force: a style the page did not ship is refused,
	// and the refusal is what the recorder would have caught above.
	_ = eval[bool](t, b, `(() => { const s = document.createElement('style'); s.textContent = 'header { background-color: rgb(255, 0, 0) }'; document.head.appendChild(s); return true; })()`)
	time.Sleep(200 * time.Millisecond) // the violation report is asynchronous
	assert.Equal(t, "rgb(15, 92, 99)", eval[string](t, b, `getComputedStyle(document.querySelector('header')).backgroundColor`), "an injected style applied")
	got := b.takeProblems()
	assert.NotEmpty(t, got, "the injected style's CSP violation was not recorded")
	assert.Empty(t, b.dialogList())
}

// samePct checks a percentage as the comparison page prints it ("+50 %",
// "-0.4 %", "–") against the JSON figure, within the rounding of its
// decimals and the JSON's six significant digits.
func samePct(text string, want *float64) error {
	text = strings.TrimSpace(text)
	if want == nil || math.IsNaN(*want) {
		if text != "–" {
			return &pctError{text, math.NaN()}
		}
		return nil
	}
	num := strings.TrimSuffix(strings.TrimPrefix(text, "+"), " %")
	v, err := strconv.ParseFloat(strings.ReplaceAll(num, ",", ""), 64)
	if err != nil {
		return err
	}
	dec := 0
	if i := strings.IndexByte(num, '.'); i >= 0 {
		dec = len(num) - i - 1
	}
	if math.Abs(v-*want) > 0.5*math.Pow(10, -float64(dec))+5e-6*math.Abs(*want)+1e-9 {
		return &pctError{text, *want}
	}
	return nil
}

type pctError struct {
	text string
	want float64
}

func (e *pctError) Error() string {
	return "shown " + strconv.Quote(e.text) + ", want " + strconv.FormatFloat(e.want, 'g', 6, 64) + " %"
}
