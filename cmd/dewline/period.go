package main

import (
	"fmt"
	"time"
)

// parseTime reads a period bound: RFC 3339 with an offset, or a local date
// or date and time in the site's zone ("2026-07-01", "2026-07-01T06:00").
func parseTime(s string, loc *time.Location) (time.Time, error) {
	if t, err := time.Parse(time.RFC3339, s); err == nil {
		return t, nil
	}
	for _, layout := range []string{"2006-01-02", "2006-01-02T15:04", "2006-01-02 15:04", "2006-01-02T15:04:05"} {
		t, err := time.ParseInLocation(layout, s, loc)
		if err != nil {
			continue
		}
		// A wall time that does not exist (clocks went forward) or exists
		// twice (clocks went back) in the site's zone is not guessed.
		if t.Format(layout) != s {
			return time.Time{}, fmt.Errorf("%q does not exist in %s (the clocks went forward); give the time with its UTC offset", s, loc)
		}
		const wall = "2006-01-02T15:04:05"
		for _, d := range []time.Duration{-time.Hour, time.Hour} {
			if u := t.Add(d); u.Format(wall) == t.Format(wall) {
				return time.Time{}, fmt.Errorf("%q happens twice in %s (the clocks went back); give the time with its UTC offset, e.g. %s", s, loc, t.Format(time.RFC3339))
			}
		}
		return t, nil
	}
	return time.Time{}, fmt.Errorf("%q is not a time: use 2026-07-01, 2026-07-01T06:00 (site time) or RFC 3339 such as 2026-07-01T06:00:00Z", s)
}

// periodRule is the one rule for the bounds of a period, stated in every
// command's help and in the README.
const periodRule = "a date (2026-07-01, site time) is a whole day, so --to DAY includes that day; a time (2026-07-01T06:00 site time, or RFC 3339) is an instant, and --to excludes it"

// parseFrom reads the start of a period: a date starts at its local
// midnight, a time is the instant given.
func parseFrom(flagName, s string, loc *time.Location) (time.Time, error) {
	t, err := parseTime(s, loc)
	if err != nil {
		return time.Time{}, usagef("%s: %v", flagName, err)
	}
	return t, nil
}

// parseTo reads the end of a period by periodRule: a date is the last day,
// included (the period ends at the next local midnight); a time is an
// instant, excluded. date reports which it was.
func parseTo(flagName, s string, loc *time.Location) (t time.Time, date bool, err error) {
	if day, derr := time.ParseInLocation(time.DateOnly, s, loc); derr == nil {
		t, err = parseTime(day.AddDate(0, 0, 1).Format(time.DateOnly), loc)
		if err != nil {
			return time.Time{}, true, usagef("%s: the day after %s: %v", flagName, s, err)
		}
		return t, true, nil
	}
	t, err = parseTime(s, loc)
	if err != nil {
		return time.Time{}, false, usagef("%s: %v", flagName, err)
	}
	return t, false, nil
}
