package config

import (
	"fmt"
	"strings"
	"time"

	"github.com/robfig/cron/v3"
)

// The bounds of schedule.cron. Results are hourly, so a run more often
// than once a minute (five-field cron's own finest step) only repeats
// work; a schedule that does not fire at least once a year (the longest
// backfill is 3 years, the lookback a week) leaves the agent idle, and one
// that never fires would leave it with no next run at all.
const (
	MinScheduleInterval = time.Minute
	MaxScheduleInterval = 366 * 24 * time.Hour
)

// CronError is a schedule.cron that the agent cannot run: what is wrong
// (Msg) and how to fix it (Fix).
type CronError struct {
	Spec, Msg, Fix string
}

func (e *CronError) Error() string {
	return fmt.Sprintf("schedule.cron %q: %s; %s", e.Spec, e.Msg, e.Fix)
}

// cronExample is the fix of every malformed schedule.cron.
const cronExample = "use five fields, e.g. \"7 * * * *\" for seven minutes past every hour, or @every 30m"

// ParseCron reads schedule.cron as the agent runs it: five fields (or a
// descriptor such as @daily or @every 30m) in the site's time zone. It
// refuses a time zone prefix (CRON_TZ= or TZ=: the zone is site.timezone),
// an @every interval outside MinScheduleInterval..MaxScheduleInterval, and
// five fields that do not fire at least once in every calendar year (30
// February never comes, 29 February only in a leap year). Errors are
// *CronError.
func ParseCron(spec string) (cron.Schedule, error) {
	s := strings.TrimSpace(spec)
	if first, _, _ := strings.Cut(s, " "); strings.Contains(first, "=") {
		// The parser would run the schedule in that zone instead of the
		// site's (and panics on a prefix without a schedule after it).
		return nil, &CronError{Spec: spec, Msg: fmt.Sprintf("the time zone prefix %q would override the site's zone", first),
			Fix: "remove it and set site.timezone: the schedule runs in the site's zone"}
	}
	sched, err := cron.ParseStandard(s)
	if err != nil {
		return nil, &CronError{Spec: spec, Msg: fmt.Sprintf("not a cron schedule: %v", err), Fix: cronExample}
	}
	switch sc := sched.(type) {
	case cron.ConstantDelaySchedule:
		// The parser raises an interval under a second (zero and negative
		// ones too) to a second; the written one is refused instead.
		d, err := time.ParseDuration(strings.TrimSpace(strings.TrimPrefix(s, "@every")))
		if err != nil {
			d = sc.Delay
		}
		const fix = "results are hourly: e.g. @every 1h, or \"7 * * * *\" for seven minutes past every hour"
		if d < MinScheduleInterval {
			return nil, &CronError{Spec: spec, Msg: fmt.Sprintf("the interval %v is below a minute", d), Fix: fix}
		}
		if d > MaxScheduleInterval {
			return nil, &CronError{Spec: spec, Msg: fmt.Sprintf("the interval %v is above a year (8784h)", d), Fix: fix}
		}
	case *cron.SpecSchedule:
		// The fields repeat every year except on 29 February, so a
		// schedule that fires in a year that is not a leap year (2027,
		// in UTC: no daylight saving skips its hour) fires in every year.
		from := time.Date(2027, 1, 1, 0, 0, 0, 0, time.UTC)
		if next := sc.Next(from.Add(-time.Second)); next.IsZero() || !next.Before(from.AddDate(1, 0, 0)) {
			what := "never fires (no such day)"
			if !next.IsZero() {
				what = "fires only on 29 February, once in four years"
			}
			return nil, &CronError{Spec: spec, Msg: "the schedule " + what,
				Fix: "choose a day every month has, e.g. \"7 * * * *\" for every hour or \"0 6 1 * *\" for the first of the month"}
		}
	}
	return sched, nil
}
