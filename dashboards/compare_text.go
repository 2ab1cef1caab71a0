package dashboards

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"github.com/dewline/dewline/metrics/compare"
)

// WriteCompareText writes the comparison as text (dewline compare's
// output): the periods, the table,
// the warnings, the method and the caution.
func WriteCompareText(w io.Writer, c *compare.Comparison, d Display) {
	site := c.Site
	if site == "" {
		site = "site"
	}
	fmt.Fprintf(w, "%s: before %s, after %s\n", site, c.Before.Label, c.After.Label)
	fmt.Fprintf(w, "hours stored: before %d, after %d; usable (entering dew point, enough coverage): before %d, after %d\n\n",
		c.Total.Bins.HoursBefore.Stored, c.Total.Bins.HoursAfter.Stored, c.Total.Bins.HoursBefore.Usable, c.Total.Bins.HoursAfter.Usable)
	header, rows := CompareTable(c, d)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, strings.Join(header, "\t"))
	for _, r := range rows {
		fmt.Fprintln(tw, strings.Join(r, "\t"))
	}
	_ = tw.Flush()
	fmt.Fprintln(w, "\ndrivers of the baseline:")
	for _, u := range c.AirHandlers {
		if u.Model != nil {
			fmt.Fprintf(w, "  %s: %s (%s)\n", u.ID, u.Model.Drivers, u.Model.DriversWhy)
		}
	}
	if n := NormalisedWords(c); n != "" {
		fmt.Fprintf(w, "normalised to %s conditions, reheat:", n)
		for _, u := range c.AirHandlers {
			if r := u.Model.Reheat(); r != nil && r.Normalised != nil {
				n := r.Normalised
				fmt.Fprintf(w, " %s %+.1f %% ± %.1f %% (%d h);", u.ID, float64(n.AvoidedPct), 100*float64(n.U90)/math.Abs(float64(n.Baseline)), n.Hours)
			}
		}
		fmt.Fprintln(w)
	}
	if len(c.Warnings) > 0 {
		fmt.Fprintln(w, "\nwarnings:")
		for _, s := range c.Warnings {
			fmt.Fprintln(w, "  - "+s)
		}
	}
	fmt.Fprintf(w, "\nmethod: %s\n", c.Method)
	fmt.Fprintln(w, "± 90 %: the larger of ASHRAE Guideline 14's savings uncertainty (with the autocorrelation correction) and the regression's prediction interval; a change inside it is \"no significant change\". --json gives every figure, the HTML (-o) the model's fit hour by hour.")
	fmt.Fprintf(w, "bin check: %s\n", c.BinMethod)
	fmt.Fprintln(w, "\n"+CompareCaution)
}
