package dashboards

import (
	"fmt"
	"time"
)

// Period is a window of whole local days, [From, To), in the site's zone.
type Period struct {
	Kind     string    `json:"kind"` // day, week, month or custom
	From     time.Time `json:"from"`
	To       time.Time `json:"to"`
	Label    string    `json:"label"`
	DateFrom string    `json:"date_from"` // first day, YYYY-MM-DD local
	DateTo   string    `json:"date_to"`   // last day, inclusive
}

// Days is the number of local days in the period.
func (p Period) Days() int {
	n := 0
	for d := p.From; d.Before(p.To); d = d.AddDate(0, 0, 1) {
		n++
	}
	return n
}

// Hours is the length of the period in hours (days of 23 or 25 hours
// counted as they are).
func (p Period) Hours() float64 { return p.To.Sub(p.From).Hours() }

const dateLayout = "2006-01-02"

// The years a custom period may name: results are stored from Unix time 0,
// and trend exports are read up to 2199 (csvfile's own bound); a year past
// 9999 cannot even be written as JSON.
const (
	minYear = 1970
	maxYear = 2199
)

// ResolvePeriod turns a request's kind (day, week, month, custom) and, for
// custom, its first and last dates (YYYY-MM-DD, inclusive) into a period.
// The named kinds end with the last day that has results (latest), so a
// site whose data stopped a while ago still shows its last day, week or
// 30 days. An empty kind is "week".
func ResolvePeriod(kind, from, to string, zone *time.Location, latest time.Time) (Period, error) {
	if zone == nil {
		zone = time.UTC
	}
	lastDay := midnight(latest.In(zone))
	var p Period
	switch kind {
	case "", "week":
		p = Period{Kind: "week", From: lastDay.AddDate(0, 0, -6), To: lastDay.AddDate(0, 0, 1)}
	case "day":
		p = Period{Kind: "day", From: lastDay, To: lastDay.AddDate(0, 0, 1)}
	case "month":
		p = Period{Kind: "month", From: lastDay.AddDate(0, 0, -29), To: lastDay.AddDate(0, 0, 1)}
	case "custom":
		f, err := time.ParseInLocation(dateLayout, from, zone)
		if err != nil {
			return Period{}, fmt.Errorf("from %q: give the first day as YYYY-MM-DD", from)
		}
		t, err := time.ParseInLocation(dateLayout, to, zone)
		if err != nil {
			return Period{}, fmt.Errorf("to %q: give the last day as YYYY-MM-DD", to)
		}
		for _, d := range []struct {
			name, s string
			t       time.Time
		}{{"from", from, f}, {"to", to, t}} {
			if d.t.Year() < minYear || d.t.Year() > maxYear {
				return Period{}, fmt.Errorf("%s %s: give a day between %d-01-01 and %d-12-31", d.name, d.s, minYear, maxYear)
			}
		}
		if t.Before(f) {
			return Period{}, fmt.Errorf("to %s is before from %s: swap them", to, from)
		}
		if t.Sub(f) > 400*24*time.Hour {
			return Period{}, fmt.Errorf("%s..%s is longer than 400 days: choose a shorter period", from, to)
		}
		p = Period{Kind: "custom", From: f, To: t.AddDate(0, 0, 1)}
	default:
		return Period{}, fmt.Errorf("period %q: use day, week, month or custom", kind)
	}
	p.DateFrom = p.From.Format(dateLayout)
	p.DateTo = p.To.AddDate(0, 0, -1).Format(dateLayout)
	if p.DateFrom == p.DateTo {
		p.Label = p.From.Format("Mon 2 Jan 2006")
	} else {
		p.Label = p.From.Format("2 Jan 2006") + " – " + p.To.AddDate(0, 0, -1).Format("2 Jan 2006")
	}
	return p, nil
}

// midnight is the start of t's local day.
func midnight(t time.Time) time.Time {
	y, m, d := t.Date()
	return time.Date(y, m, d, 0, 0, 0, 0, t.Location())
}

// PeriodBetween describes [from, to) as a Period in zone: whole local days
// are labelled as dates (the last one inclusive), other bounds with their
// local time.
func PeriodBetween(from, to time.Time, zone *time.Location) Period {
	if zone == nil {
		zone = time.UTC
	}
	f, t := from.In(zone), to.In(zone)
	p := Period{Kind: "custom", From: f, To: t}
	if f.Equal(midnight(f)) && t.Equal(midnight(t)) {
		last := t.AddDate(0, 0, -1)
		p.DateFrom, p.DateTo = f.Format(dateLayout), last.Format(dateLayout)
		if p.DateFrom == p.DateTo {
			p.Label = f.Format("Mon 2 Jan 2006")
		} else {
			p.Label = f.Format("2 Jan 2006") + " – " + last.Format("2 Jan 2006")
		}
		return p
	}
	p.Kind = "span"
	p.Label = f.Format("2 Jan 2006 15:04") + " – " + t.Format("2 Jan 2006 15:04") + " (" + zone.String() + ", end excluded)"
	return p
}
