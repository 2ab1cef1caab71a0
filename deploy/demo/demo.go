package demo

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"time"

	"github.com/dewline/dewline/psychro"
)

// Period limits and defaults.
const (
	DefaultDays = 21
	MinDays     = 14
	MaxDays     = 28
	// ZoneName is the site's time zone.
	ZoneName = "America/Chicago"
	// ConfigFile is the name of the configuration Write puts in its folder.
	ConfigFile = "dewline-demo.yaml"
	// StoreFile is the embedded store the configuration names, beside it.
	StoreFile = "demo.db"
)

// SiteName is the invented site of the scenario.
const SiteName = "Saltmarsh Point Clinic and Laboratory"

// siteAltitudeFt is the invented site's elevation.
const siteAltitudeFt = 20.0

// Options choose the scenario. The zero value is the default scenario.
type Options struct {
	// Seed drives every random choice; 0 means 1. The same Options give
	// byte-identical files.
	Seed int64
	// Days is the length of the period, 14 to 28; 0 means 21.
	Days int
	// Start is the first day. Its calendar date in the site's zone is used,
	// from local midnight. The zero value is Monday 19 October 2026, so that
	// the default period spans the end of daylight saving on 1 November.
	Start time.Time
}

// AirHandler is one air handler of the scenario.
type AirHandler struct {
	ID        string
	Name      string
	Behaviour string // one plain line: what its controls do
	Cooling   string // dx or chilled_water
	Reheat    string // electric, hot_water or recovered
	Export    string // file name of its trend export
}

// Artefact is a deliberate flaw in the logs.
type Artefact struct {
	AirHandler string    // air handler id
	Point      string    // series name in the export; empty when the whole controller is affected
	Role       string    // the point's role in the configuration; empty with Point
	From, To   time.Time // UTC, [From, To)
	What       string    // one plain line
}

// Scenario describes what Write produced.
type Scenario struct {
	Site        string
	Zone        string
	From, To    time.Time // UTC, whole hours: the analysed period, [From, To)
	ConfigPath  string    // the configuration written; its store is embedded, demo.db beside it
	Exports     []string  // the trend exports written, full paths
	AirHandlers []AirHandler
	Rows        int       // data rows written in all exports (headers not counted)
	Bytes       int64     // size of the exports on disk
	Stuck       Artefact  // the humidity sensor that reads one value
	Gap         Artefact  // the controller that logged nothing
	FallBack    time.Time // UTC instant the clocks go back inside the period; zero when they do not
	Seed        int64     // the seed used (1 when Options.Seed was 0)
	Days        int       // the length of the period in days

	truth [][]hourTruth // per unit, per hour of the period: what the equipment did
}

// hourTruth is the generator's own account of one air handler-hour.
type hourTruth struct {
	Minutes        int     // minutes simulated
	Logged         int     // minutes the controller was logging
	CoilTotalKWh   float64 // psychro.Coil Total, condensate term included
	CoilSensKWh    float64
	WaterKg        float64
	ReheatKWh      float64 // heat added by the reheat coil
	ReheatInputKWh float64 // purchased for reheat: electric, or boiler fuel
	CoolingInKWh   float64 // compressor or chilled-water plant electricity
	FanHeatKWh     float64 // fan heat between coil and supply sensor
	MaxLeavingRH   float64 // of the air leaving the coil, fraction
	MinRiseReheat  float64 // smallest supply - leaving temperature (K) while reheat ran; +Inf when it never did
	ReheatMinutes  int
}

// Write generates the scenario into dir (created when missing; files of the
// same names are replaced) and returns what it wrote.
func Write(dir string, opt Options) (*Scenario, error) {
	if opt.Seed == 0 {
		opt.Seed = 1
	}
	if opt.Days == 0 {
		opt.Days = DefaultDays
	}
	if opt.Days < MinDays || opt.Days > MaxDays {
		return nil, fmt.Errorf("demo: %d days is outside %d..%d; choose a period of two to four weeks", opt.Days, MinDays, MaxDays)
	}
	loc, err := time.LoadLocation(ZoneName)
	if err != nil {
		return nil, fmt.Errorf("demo: load time zone %s: %w; install the system time zone data or import time/tzdata", ZoneName, err)
	}
	start := opt.Start
	if start.IsZero() {
		start = time.Date(2026, time.October, 19, 0, 0, 0, 0, loc)
	}
	y, m, d := start.In(loc).Date()
	from := time.Date(y, m, d, 0, 0, 0, 0, loc)
	to := time.Date(y, m, d+opt.Days, 0, 0, 0, 0, loc)
	if from.Year() < 1970 || to.Year() > 2199 {
		return nil, fmt.Errorf("demo: start %s is outside 1970..2199", from.Format("2006-01-02"))
	}
	pPa, err := psychro.PressureFromAltitude(psychro.FtToM(siteAltitudeFt))
	if err != nil {
		return nil, fmt.Errorf("demo: site pressure: %w", err)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("demo: create %s: %w", dir, err)
	}

	sc := &Scenario{
		Site: SiteName, Zone: ZoneName,
		From: from.UTC(), To: to.UTC(),
		ConfigPath: filepath.Join(dir, ConfigFile),
		Seed:       opt.Seed, Days: opt.Days,
	}
	sc.FallBack = fallBackIn(loc, sc.From, sc.To)

	g := &generator{
		loc: loc, pPa: pPa, from: sc.From, n: int(sc.To.Sub(sc.From) / time.Minute),
		seed: uint64(opt.Seed),
	}
	g.airHandlers = airHandlerDefs()
	g.placeArtefacts(sc, opt.Days)
	for i := range g.airHandlers {
		sc.AirHandlers = append(sc.AirHandlers, g.airHandlers[i].AirHandler)
	}
	if err := g.run(dir, sc); err != nil {
		return nil, err
	}
	if err := writeConfig(sc.ConfigPath, g, sc); err != nil {
		return nil, err
	}
	return sc, nil
}

// rng returns an independent generator for one purpose, so that adding a
// draw in one place does not shift the numbers of another.
func (g *generator) rng(stream uint64) *rand.Rand {
	return rand.New(rand.NewPCG(g.seed, 0x9e3779b97f4a7c15^stream))
}

// fallBackIn returns the instant in [from, to) at which the zone's offset
// decreases (clocks go back), or zero.
func fallBackIn(loc *time.Location, from, to time.Time) time.Time {
	t := from
	for t.Before(to) {
		_, end := t.In(loc).ZoneBounds()
		if end.IsZero() || !end.Before(to) {
			return time.Time{}
		}
		_, before := end.Add(-time.Second).In(loc).Zone()
		_, after := end.In(loc).Zone()
		if after < before {
			return end.UTC()
		}
		t = end
	}
	return time.Time{}
}

// placeArtefacts chooses when the stuck sensor and the offline controller
// happen: the gap on a weekday about 40 % into the period, the stuck
// sensor from about 60 % for just under two days.
func (g *generator) placeArtefacts(sc *Scenario, days int) {
	y, m, d := sc.From.In(g.loc).Date()
	gapDay := days * 2 / 5
	for wd := time.Date(y, m, d+gapDay, 0, 0, 0, 0, g.loc).Weekday(); wd == time.Saturday || wd == time.Sunday; {
		gapDay++
		wd = time.Date(y, m, d+gapDay, 0, 0, 0, 0, g.loc).Weekday()
	}
	gapFrom := time.Date(y, m, d+gapDay, 10, 20, 0, 0, g.loc)
	gapTo := time.Date(y, m, d+gapDay, 16, 35, 0, 0, g.loc)
	sc.Gap = Artefact{
		AirHandler: "AHU-4", From: gapFrom.UTC(), To: gapTo.UTC(),
		What: "the laboratory controller is offline: no point of AHU-4 is logged",
	}
	stuckDay := days * 3 / 5
	stuckFrom := time.Date(y, m, d+stuckDay, 14, 10, 0, 0, g.loc)
	stuckTo := stuckFrom.Add(46*time.Hour + 50*time.Minute)
	sc.Stuck = Artefact{
		AirHandler: "RTU-5", Point: pointName(g.airHandlers, "RTU-5", "space_rh"), Role: "space_rh",
		From: stuckFrom.UTC(), To: stuckTo.UTC(),
		What: "the pharmacy space RH sensor sticks at one reading; the unit's controller believes it too",
	}
	g.gapFrom, g.gapTo = minuteOf(sc.From, sc.Gap.From), minuteOf(sc.From, sc.Gap.To)
	g.stuckFrom, g.stuckTo = minuteOf(sc.From, sc.Stuck.From), minuteOf(sc.From, sc.Stuck.To)
}

func minuteOf(from, t time.Time) int { return int(t.Sub(from) / time.Minute) }

func pointName(us []airHandlerDef, id, role string) string {
	for _, u := range us {
		if u.ID != id {
			continue
		}
		for _, p := range u.points {
			if p.role == role {
				return p.name
			}
		}
	}
	return ""
}

// errPhysics marks a state the simulation should never reach.
var errPhysics = errors.New("demo: simulation left the range of the psychrometric formulas")
