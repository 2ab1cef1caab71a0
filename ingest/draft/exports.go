package draft

import (
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest/csvfile"
)

// Exports are CSV trend exports to read the points from, with the choices
// given on the command line.
type Exports struct {
	Paths    []string
	Location *time.Location // the site's zone, for local times without an offset
	Year     int            // of dates written without one
	// DayFirst and DecimalComma are "yes", "no", or "" to let the exports
	// tell.
	DayFirst, DecimalComma string
}

// InputError is a choice that cannot be used as given: the fix is the
// user's (a flag's value, a missing time zone).
type InputError struct{ msg string }

func (e *InputError) Error() string { return e.msg }

// ReadExports reads the exports into points (ReadCSV) and records in site
// where they came from and how their dates and decimals were read.
func ReadExports(ex Exports, site *Site) ([]Point, Read, error) {
	opt := csvfile.Options{Location: ex.Location, Year: ex.Year, Settings: csvfile.Settings{DecimalComma: "--decimal-comma",
		DayFirst: "--day-first", Location: "--timezone"}}
	var err error
	if opt.DayFirst, err = tri("day-first", ex.DayFirst); err != nil {
		return nil, Read{}, err
	}
	if opt.DecimalComma, err = tri("decimal-comma", ex.DecimalComma); err != nil {
		return nil, Read{}, err
	}
	points, rd, err := ReadCSV(ex.Paths, opt)
	if errors.Is(err, csvfile.ErrNeedLocation) {
		var fe *csvfile.FileError
		name := "an export"
		if errors.As(err, &fe) {
			name = fe.File
		}
		return nil, rd, &InputError{fmt.Sprintf("%s has local times without a UTC offset: pass --timezone with the site's IANA zone (e.g. America/Chicago), or --timezone UTC if the export is in UTC", name)}
	}
	if err != nil {
		return nil, rd, err
	}
	if len(points) == 0 && len(rd.NoRows) > 0 {
		// A long export names its points in its rows: without one there
		// is nothing to map.
		return nil, rd, fmt.Errorf("%s has no data rows (only its header): export a period with data", strings.Join(rd.NoRows, ", "))
	}
	site.Sources = ex.Paths
	site.DayFirst, site.DecimalComma = or(ex.DayFirst, rd.DayFirst), or(ex.DecimalComma, rd.DecimalComma)
	return points, rd, nil
}

func tri(name, v string) (csvfile.Tri, error) {
	switch v {
	case "":
		return csvfile.Auto, nil
	case "yes":
		return csvfile.Yes, nil
	case "no":
		return csvfile.No, nil
	}
	return csvfile.Auto, &InputError{fmt.Sprintf("--%s %q: use yes or no", name, v)}
}

func or(given, detected string) string {
	if given != "" {
		return given
	}
	return detected
}
