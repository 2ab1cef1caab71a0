package dashboards

import (
	"encoding/json"
	"net/http"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
)

// TestHandler_FarPeriods: a custom period outside the years results can
// have is a bad request (400) with the allowed range, on every page and
// API, never a failure of the server (the JSON encoder cannot write years
// past 9999).
func TestHandler_FarPeriods(t *testing.T) {
	site, m := fixture()
	h := newTestHandler(t, site, m)
	for _, q := range []string{
		"period=custom&from=9999-12-30&to=9999-12-31",
		"period=custom&from=2026-07-01&to=9999-12-31",
		"period=custom&from=0001-01-01&to=0001-01-02",
	} {
		for _, path := range []string{"/", "/alerts", "/api/v1/overview", "/api/v1/alerts"} {
			code, body := get(t, h, path+"?"+q)
			assert.Equal(t, http.StatusBadRequest, code, "%s?%s: %.200s", path, q, body)
			assert.True(t, strings.Contains(body, "between 1970-01-01 and 2199-12-31"), "%s?%s: %.300s", path, q, body)
			if strings.HasPrefix(path, "/api/") {
				assert.True(t, json.Valid([]byte(body)))
			}
		}
	}
}
