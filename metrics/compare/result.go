package compare

import "fmt"

// AirHandlerComparison is one air handler before and after: the headline from
// the baseline model, the humidity side, and the bin method as a check.
type AirHandlerComparison struct {
	ID   string `json:"id"`
	Name string `json:"name"`
	// Finding is the reheat finding (FindingSaving, FindingIncrease,
	// FindingNoChange, FindingNoModel or FindingTargetLost).
	Finding  string   `json:"finding"`
	Model    *Model   `json:"baseline_model"`
	Humidity Humidity `json:"humidity"`
	Bins     BinCheck `json:"bin_check"`
	Warnings []string `json:"warnings"`
}

// SiteTotal sums the units.
type SiteTotal struct {
	// Savings per quantity: sums of the units' figures, half-widths in
	// quadrature (the units' models are independent).
	Savings []Savings `json:"savings"`
	Bins    BinCheck  `json:"bin_check"`
}

// Reheat returns the site's reheat savings (nil before Result).
func (t *SiteTotal) Reheat() *Savings {
	if len(t.Savings) == 0 {
		return nil
	}
	return &t.Savings[yReheat]
}

// airHandlerResult builds one unit's result from its bin check and its hours.
func airHandlerResult(u AirHandler, bc BinCheck, rows [3][]hourRow, suspectHours [2]int, norm normSpec) AirHandlerComparison {
	uc := AirHandlerComparison{ID: u.ID, Name: u.Name, Bins: bc, Warnings: []string{}}
	md, warns := buildModel(rows, norm, suspectHours)
	uc.Model = md
	uc.Warnings = append(uc.Warnings, warns...)
	uc.Humidity = humidityOf(u.Spec, rows[0], rows[1])
	uc.Finding = FindingNoModel
	if r := md.Reheat(); r != nil {
		uc.Finding = r.Finding
		if r.Significant && float64(r.FSU68) > FSULimit {
			uc.Warnings = append(uc.Warnings, fmt.Sprintf("the reheat saving's fractional uncertainty at 68 %% is %s, above Guideline 14's 50 %%", fmtPct(float64(r.FSU68))))
		}
		if r.Finding == FindingSaving && uc.Humidity.Held == "not held" {
			uc.Finding = FindingTargetLost
			uc.Warnings = append(uc.Warnings, fmt.Sprintf("the humidity target was not held after the change: the supply dew point was above %s °C in %s of the after hours (%s before); the saving is not a win until the sequence holds the target",
				fmtNum(float64(uc.Humidity.TargetDPC)), fmtPct(float64(uc.Humidity.AboveAfter)), fmtPct(float64(uc.Humidity.AboveBefore))))
		}
	}
	return uc
}

func fmtNum(v float64) string {
	if !finite(v) {
		return "–"
	}
	return fmt.Sprintf("%.1f", v)
}
