package agent

import (
	"fmt"
	"io"
	"math"
	"sort"
	"text/tabwriter"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// WriteSummaries writes the analysis of ahus as a table, ranked by
// avoidable cost, with the totals, the open alerts and the usual caution.
func WriteSummaries(w io.Writer, cfg *config.Config, ahus []string, sums map[string]*Summary) error {
	rows := make([]*Summary, 0, len(ahus))
	for _, id := range ahus {
		if s, ok := sums[id]; ok {
			rows = append(rows, s)
		}
	}
	sort.SliceStable(rows, func(i, j int) bool { return rows[i].CostAvoidable > rows[j].CostAvoidable })
	ip := cfg.Site.Units == "ip"
	cur := cfg.Prices.Currency
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	waterUnit := "water kg"
	if ip {
		waterUnit = "water lb"
	}
	fmt.Fprintf(tw, "air handler\thours\tcoverage\t%s\treheat kWh\tavoidable kWh\tavoidable %s\tcost %s\teff. EER\topen alerts\t\n", waterUnit, cur, cur)
	var tot Summary
	var notes, gaps []string
	for _, s := range rows {
		water := s.WaterKg
		if ip {
			water = psychro.KgToLb(water)
		}
		open := 0
		for _, a := range s.Alerts {
			if a.Status == metrics.StatusOpen {
				open++
				notes = append(notes, fmt.Sprintf("  %s %s (%s, since %s): %s", s.AHU, metrics.AlertLabel(a.Kind), a.Severity,
					a.Start.In(cfg.Location).Format("2006-01-02 15:04"), a.Told()))
			}
		}
		fmt.Fprintf(tw, "%s\t%d\t%.0f%%\t%.0f\t%.0f\t%.0f\t%.2f\t%.2f\t%s\t%d\t\n",
			s.AHU, s.Hours, 100*s.Coverage(), water, s.ReheatKWh, s.ReheatAvoidKWh, s.CostAvoidable, s.Cost, eer(s.EffectiveEER()), open)
		if n := s.NoCoolingInput.Hours; n > 0 {
			gaps = append(gaps, fmt.Sprintf("  %s: %s flagged %s, left out of its cost, avoidable cost and EER",
				s.AHU, metrics.Plural(n, "hour"), metrics.FlagCoolingMissing))
			tot.NoCoolingInput.Hours += n
		}
		tot.CostAvoidable += s.CostAvoidable
		tot.Cost += s.Cost
		tot.ReheatKWh += s.ReheatKWh
		tot.ReheatAvoidKWh += s.ReheatAvoidKWh
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintf(w, "\ntotal: reheat %.0f kWh, of which %.0f kWh avoidable (%.2f %s of %.2f %s)\n",
		tot.ReheatKWh, tot.ReheatAvoidKWh, tot.CostAvoidable, cur, tot.Cost, cur)
	if len(gaps) > 0 {
		fmt.Fprintf(w, "\n%s without a cooling input (a metered cooling_kw read nothing, and no rated_eer or plant_kw_per_ton stands in):\n",
			metrics.Plural(tot.NoCoolingInput.Hours, "hour"))
		for _, g := range gaps {
			fmt.Fprintln(w, g)
		}
	}
	if len(notes) > 0 {
		fmt.Fprintln(w, "\nopen alerts:")
		for _, n := range notes {
			fmt.Fprintln(w, n)
		}
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Estimates from building sensors. Before raising coil temperatures or disabling reheat, have the engineer of record")
	fmt.Fprintln(w, "review the change against the space's humidity limits (mould, comfort, codes); follow local codes and licensed practice.")
	return nil
}

func eer(v float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return fmt.Sprintf("%.1f", v)
}
