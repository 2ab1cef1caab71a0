package draft

import (
	"errors"
	"fmt"
	"io"
)

// WriteSummary prints, per air handler, the roles mapped, those to check
// and those missing with where to look, then the points left unassigned;
// out, when set, is the file the configuration went to. It returns an
// error when no air handler has every required role.
func (p *Proposal) WriteSummary(w io.Writer, points int, out string) error {
	for _, f := range p.NoRows {
		fmt.Fprintf(w, "%s has no data rows (only its header): its columns are mapped by name alone, units as declared; draft again from an export with data to check them against values\n", f)
	}
	complete := 0
	for _, a := range p.AirHandlers {
		low := 0
		for _, m := range a.Mappings {
			if m.Conf == Low {
				low++
			}
		}
		state := "complete"
		if !a.Complete() {
			state = "incomplete, commented out"
		} else {
			complete++
		}
		fmt.Fprintf(w, "%-10s %2d roles mapped, %d to check (LOW), %s\n", a.ID, len(a.Mappings), low, state)
		for _, m := range a.Missing {
			fmt.Fprintf(w, "           missing %s: look for %s\n", m.Role, m.LookFor)
		}
	}
	fmt.Fprintf(w, "%d point(s) read, %d left unassigned (listed at the end of the file)\n", points, len(p.Unassigned))
	if out != "" {
		fmt.Fprintf(w, "next: review the ASSUMED and LOW lines of %s, then dewline check --config %s\n", out, out)
	}
	if complete == 0 {
		return errors.New("no air handler has every required role; complete one in the draft (see missing above)")
	}
	return nil
}
