package dashboards

import (
	"context"
	"fmt"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Site is what the pages and the report know of the configuration.
type Site struct {
	ID       string // site.id: tags its results, names it in a portfolio
	Name     string
	Zone     *time.Location // days and tick labels are in this zone
	IP       bool           // the site's display units (a page may switch)
	Currency string
	// PressurePa is the site's barometric pressure, for the chart.
	PressurePa  float64
	AirHandlers []AirHandler // in configuration order
	// Basis records assumptions the report states, in plain words, by
	// topic (e.g. "airflow", "prices"). Optional.
	Basis []Assumption
}

// Assumption is one stated basis of the figures.
type Assumption struct {
	Topic, Text string
}

// SetupNotes state how the configuration set what a report's figures rest
// on: the pressure source (pressure, else altitude, as configured) and the
// time grid (step).
func SetupNotes(pressure, altitude string, step time.Duration) []Assumption {
	var notes []Assumption
	switch {
	case pressure != "":
		notes = append(notes, Assumption{Topic: "Pressure source", Text: "Configured barometric pressure " + pressure + "."})
	case altitude != "":
		notes = append(notes, Assumption{Topic: "Pressure source", Text: "Standard atmosphere at the configured altitude of " + altitude + " (ASHRAE Handbook — Fundamentals 2017, ch. 1, eq. 3)."})
	}
	if step > 0 {
		grid := step.String()
		if step%time.Minute == 0 {
			grid = fmt.Sprintf("%d min", step/time.Minute)
		}
		notes = append(notes, Assumption{Topic: "Time grid", Text: "Readings aligned on a " + grid + " grid; a logged value holds until the next one, at most its point's stale limit."})
	}
	return notes
}

// AirHandler is one air handler as configured.
type AirHandler struct {
	ID, Name string
	Spec     *metrics.AirHandler // cooling and reheat kinds, target, prices, pressure
}

// AirHandler returns the configured unit with id.
func (s *Site) AirHandler(id string) (AirHandler, bool) {
	for _, u := range s.AirHandlers {
		if u.ID == id {
			return u, true
		}
	}
	return AirHandler{}, false
}

// Results is where the pages read what the engine computed. The embedded
// store and InfluxDB satisfy it (store.Store.Results, in their backends).
type Results interface {
	// Hours calls fn with the records of ahu (every unit when ahu is "")
	// whose hour starts in [from, to), in hour order for each unit (units
	// may come one after the other or interleaved). The record passed to
	// fn may be reused after fn returns.
	Hours(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error
	// Alerts returns the alerts that overlap [q.From, q.To) and match q's
	// other fields, in start order.
	Alerts(ctx context.Context, q AlertQuery) ([]Alert, error)
	// Span returns the first and the last stored hour; ok is false when
	// nothing is stored yet.
	Span(ctx context.Context) (first, last time.Time, ok bool, err error)
}

// DayReader is what a Results may also offer: per unit and local day of
// the site's zone, the sums of the additive hourly fields
// (metrics.AdditiveFields), kept by the store. The overview then reads a
// portfolio's month as thousands of days instead of a hundred thousand
// hours. complete is false, with fn never called, when the store cannot
// answer for exactly the hours it holds in [from, to); the caller then
// reads the hours.
type DayReader interface {
	Days(ctx context.Context, from, to time.Time, fn func(d DaySums) error) (complete bool, err error)
}

// DaySums is one unit's local day: Sums holds the sums in the additive
// fields of a record (NaN where no hour had a value), Hours the number of
// stored hours and Flagged those with a data-quality flag.
type DaySums struct {
	AHU            string
	Day            time.Time // local midnight
	Hours, Flagged int
	Sums           *metrics.Record
	NoCoolingInput metrics.CoolingGap // the day's hours without a cooling input
}

// AlertQuery selects alerts; empty fields match all.
type AlertQuery struct {
	AHU      string
	Kind     string
	State    string // pending, open or closed
	From, To time.Time
}

// Alert is an alert as stored.
type Alert struct {
	ID        string    `json:"id"`
	AHU       string    `json:"ahu"`
	Kind      string    `json:"kind"`
	Severity  string    `json:"severity"`
	State     string    `json:"state"`
	Start     time.Time `json:"start"`
	End       time.Time `json:"end,omitzero"` // zero while ongoing
	EnergyKWh float64   `json:"energy_kwh"`
	Money     float64   `json:"money"`
	Reason    string    `json:"reason"`
}

// Duration is how long the alert has held: to its end, or to now while ongoing.
func (a Alert) Duration(now time.Time) time.Duration {
	end := a.End
	if end.IsZero() {
		end = now
	}
	if end.Before(a.Start) {
		return 0
	}
	return end.Sub(a.Start)
}

// Overlaps reports whether the alert was active at some time in [from, to).
func (a Alert) Overlaps(from, to time.Time) bool {
	if !to.IsZero() && !a.Start.Before(to) {
		return false
	}
	return from.IsZero() || a.End.IsZero() || a.End.After(from)
}
