// Package telemetrytest reads the agent's Prometheus metrics in tests: it
// scrapes a handler and parses the text exposition with the Prometheus
// parser, so that tests check what a scraper would see.
package telemetrytest

import (
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"

	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"
	"github.com/stretchr/testify/require"
)

// Scrape reads h as Prometheus would and parses the text exposition.
func Scrape(t *testing.T, h http.Handler) map[string]*dto.MetricFamily {
	t.Helper()
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/metrics", nil))
	require.Equal(t, http.StatusOK, rec.Code)
	return ParseExposition(t, rec.Body.String())
}

// ParseExposition parses a Prometheus text exposition.
func ParseExposition(t *testing.T, text string) map[string]*dto.MetricFamily {
	t.Helper()
	p := expfmt.NewTextParser(model.UTF8Validation)
	fams, err := p.TextToMetricFamilies(strings.NewReader(text))
	require.NoError(t, err)
	return fams
}

// Sample returns the value of the series of name with the labels given as
// name, value pairs: a counter's or gauge's value, a histogram's count.
// ok is false when there is no such series.
func Sample(fams map[string]*dto.MetricFamily, name string, labels ...string) (v float64, ok bool) {
	f, found := fams[name]
	if !found {
		return 0, false
	}
next:
	for _, m := range f.GetMetric() {
		for i := 0; i+1 < len(labels); i += 2 {
			match := false
			for _, lp := range m.GetLabel() {
				if lp.GetName() == labels[i] && lp.GetValue() == labels[i+1] {
					match = true
				}
			}
			if !match {
				continue next
			}
		}
		switch {
		case m.Counter != nil:
			return m.Counter.GetValue(), true
		case m.Gauge != nil:
			return m.Gauge.GetValue(), true
		case m.Histogram != nil:
			return float64(m.Histogram.GetSampleCount()), true
		}
	}
	return 0, false
}
