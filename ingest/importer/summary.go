package importer

import (
	"fmt"
	"io"
	"sort"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/rs/zerolog"
)

// UnmatchedExamples is how many unmapped series names a summary shows.
const UnmatchedExamples = 5

// Write prints what happened to the file's rows: read, accepted, written,
// and every kind of rejection with examples.
func (s Stats) Write(w io.Writer) {
	fmt.Fprintf(w, "%s: %d rows read, %d values accepted, %d written to the store\n", s.File, s.Rows, s.Records, s.Written)
	if s.CSV.Missing > 0 {
		fmt.Fprintf(w, "  %d empty or missing-value cells skipped\n", s.CSV.Missing)
	}
	reasons := make([]string, 0, len(s.CSV.Rejected))
	for r := range s.CSV.Rejected {
		reasons = append(reasons, string(r))
	}
	sort.Strings(reasons)
	for _, r := range reasons {
		fmt.Fprintf(w, "  rejected, %s: %d\n", r, s.CSV.Rejected[csvfile.Reason(r)])
	}
	for _, ex := range s.CSV.Examples {
		fmt.Fprintf(w, "    e.g. %s\n", ex.String())
	}
	if s.NotFinite > 0 {
		fmt.Fprintf(w, "  rejected, not a finite number after unit conversion: %d\n", s.NotFinite)
	}
	WriteRowUnits(w, s.Units)
	if d := s.Duplicates.Summary(""); d != "" {
		fmt.Fprintf(w, "  %s\n", d)
	}
	if d := s.CSV.DST; d.Repeated > 0 || d.Skipped > 0 {
		fmt.Fprintf(w, "  daylight saving: %d rows in a repeated hour (%d read as the earlier offset, %d as the later); %d rows in a skipped hour rejected\n",
			d.Repeated, d.RepeatedEarlier, d.RepeatedLater, d.Skipped)
	}
	if u := s.Unmatched.Summary(UnmatchedExamples); u != "" {
		fmt.Fprintf(w, "  skipped: %s\n", u)
	}
}

// WriteRowUnits reports the rows read in a unit their row states other
// than the configured one, and the rows refused for their unit.
func WriteRowUnits(w io.Writer, ru *ingest.RowUnits) {
	if ru == nil {
		return
	}
	if ru.Converted > 0 {
		fmt.Fprintf(w, "  converted from the unit their row states (not the configured one): %d\n", ru.Converted)
	}
	if ru.Rejected > 0 {
		fmt.Fprintf(w, "  rejected, unit not of the point's kind: %d\n", ru.Rejected)
		for _, ex := range ru.Examples {
			fmt.Fprintf(w, "    e.g. %s\n", ex.String())
		}
	}
}

// LogInputs logs what exports analysed as they stream held that was
// not used: rows rejected by each reader, rows read in or refused for
// the unit they state (ru), series no air handler maps, values given
// twice for one time (dups).
func LogInputs(log zerolog.Logger, readers []*csvfile.Reader, ru *ingest.RowUnits, unmatched ingest.Unmatched, dups *ingest.Duplicates) {
	if dups.Conflicting > 0 {
		ev := log.Warn().Int("values", dups.Conflicting)
		for i, ex := range dups.Examples {
			ev = ev.Str(fmt.Sprintf("example_%d", i+1), ex.String())
		}
		ev.Msg("values repeat their series' previous time with another value; the later row is used")
	}
	for _, r := range readers {
		s := r.Stats()
		ev := log.Info().Str("file", r.Name()).Int("records", s.Records).Int("rejected", s.RejectedTotal())
		ev.Msg("input read")
		for _, rej := range s.Examples {
			log.Warn().Str("file", r.Name()).Str("rejected", rej.String()).Msg("row rejected")
		}
	}
	if ru != nil {
		if ru.Converted > 0 {
			log.Info().Int("values", ru.Converted).Msg("values converted from the unit their row states")
		}
		if ru.Rejected > 0 {
			ev := log.Warn().Int("rows", ru.Rejected)
			if len(ru.Examples) > 0 {
				ev = ev.Str("example", ru.Examples[0].String())
			}
			ev.Msg("rows rejected: their unit is not of the point's kind; correct the unit column")
		}
	}
	if u := unmatched.Summary(UnmatchedExamples); u != "" {
		log.Info().Str("unmatched", u).Msg("series not mapped to any air handler")
	}
}
