package main

import (
	"math"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/metrics"
)

// An open alert's energy and money grow with every hour it stays open: the
// two-day scenario (dry nights with reheat on) is analysed hour by hour,
// each time through one more hour, into the embedded store and the real
// InfluxDB, and after every hour each reheat_not_needed alert's figures
// are checked against the hourly records stored for the same hours: the
// sum of their avoidable reheat energy and money over the hours the
// alert's condition held (avoidable reheat of at least 1 kWh in an hour
// with no humidity need, the rule as documented in the README).
func TestInflux_OpenAlertFiguresGrowHourly(t *testing.T) {
	embCfg, fluxCfg, data := scenarioInBothStores(t, "openalert")

	for _, c := range []struct{ name, cfg string }{{"embedded", embCfg}, {"influxdb", fluxCfg}} {
		t.Run(c.name, func(t *testing.T) {
			var res dashboards.Results
			start := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
			openChecked, grew := 0, 0
			last := map[string]float64{}
			// The first night's alert opens at 20:00 site time (01:00 UTC on
			// the 15th); step through it and into the next day.
			for cut := start.Add(22 * time.Hour); cut.Before(start.Add(40 * time.Hour)); cut = cut.Add(time.Hour) {
				code, out, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", c.cfg, "--input", data,
					"--from", start.Format(time.RFC3339), "--to", cut.Format(time.RFC3339))
				require.Equal(t, 0, code, errOut)
				summaryTold := regexp.MustCompile(`(?m)^  AHU-7 Reheat not needed \(warning, since [0-9: -]+\): opened: .+; latest hour: .+$`)
				if res == nil { // the embedded file exists after the first analysis
					_, st := openTestStore(t, c.cfg)
					res = st.results(time.Now)
				}

				var recs []metrics.Record
				require.NoError(t, res.Hours(t.Context(), "AHU-7", start, cut, func(r *metrics.Record) error {
					recs = append(recs, *r)
					return nil
				}))
				alerts, err := res.Alerts(t.Context(), dashboards.AlertQuery{AHU: "AHU-7", Kind: metrics.AlertReheatNotNeeded})
				require.NoError(t, err)
				for _, a := range alerts {
					end := cut
					if !a.End.IsZero() && a.End.Before(end) {
						end = a.End
					}
					var kwh, money float64
					hours := 0
					for _, r := range recs {
						if r.HourStart.Before(a.Start) || !r.HourStart.Before(end) {
							continue
						}
						if r.Coverage > 0 && r.ReheatAvoidKWh >= 1 && r.HumidityNeedHours <= 0.1*r.Coverage {
							kwh += r.ReheatAvoidKWh
							money += r.CostAvoidable
							hours++
						}
					}
					require.Positive(t, hours, "%s through %s: no stored hour held the condition", a.ID, cut)
					assert.InDelta(t, kwh, a.EnergyKWh, 1e-6*math.Max(1, kwh), "%s (%s) through %s: energy vs %d stored hours", a.ID, a.State, cut, hours)
					assert.InDelta(t, money, a.Money, 1e-6*math.Max(1, money), "%s (%s) through %s: money vs %d stored hours", a.ID, a.State, cut, hours)
					// The reason tells the opening hour's and the latest
					// hour's, labelled, as the analysis summary does.
					if a.State == string(metrics.StatusOpen) && cut.Sub(a.Start) > 3*time.Hour {
						assert.Regexp(t, `^opened: .*not needed.*; latest hour: .*not needed`, a.Reason, "%s through %s", a.ID, cut)
						assert.Regexp(t, summaryTold, out, "the summary through %s", cut)
						assert.Contains(t, out, "opened: "+strings.SplitN(strings.TrimPrefix(a.Reason, "opened: "), "; latest hour: ", 2)[0],
							"the summary tells the same opening reason through %s", cut)
					}
					if a.State == string(metrics.StatusOpen) {
						openChecked++
						if prev, ok := last[a.ID]; ok && a.EnergyKWh > prev {
							grew++
						}
					}
					last[a.ID] = a.EnergyKWh
				}
			}
			assert.GreaterOrEqual(t, openChecked, 5, "hours an open alert was checked")
			assert.GreaterOrEqual(t, grew, 4, "hours an open alert's energy grew")
		})
	}
}
