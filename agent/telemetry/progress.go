package telemetry

import (
	"fmt"
	"io"
	"os"

	"github.com/mattn/go-isatty"
	"github.com/rs/zerolog"
)

// Progress shows long work: a bar that redraws itself on a terminal, a log
// line every tenth otherwise.
type Progress struct {
	what string
	tty  bool
	log  zerolog.Logger
	last int
	w    io.Writer
}

// NewProgress shows the progress of what on standard error, or logs it
// through log when standard error is not a terminal.
func NewProgress(what string, log zerolog.Logger) *Progress {
	return &Progress{what: what, tty: isatty.IsTerminal(os.Stderr.Fd()), log: log, last: -1, w: os.Stderr}
}

// Update reports done of total.
func (p *Progress) Update(done, total int) {
	if total <= 0 {
		return
	}
	pct := done * 100 / total
	if p.tty {
		if pct != p.last || done == total {
			width := 30
			fill := done * width / total
			bar := make([]byte, width)
			for i := range bar {
				bar[i] = '.'
				if i < fill {
					bar[i] = '#'
				}
			}
			fmt.Fprintf(p.w, "\r%s [%s] %3d%% %d/%d", p.what, bar, pct, done, total)
			if done == total {
				fmt.Fprintln(p.w)
			}
		}
	} else if pct/10 != p.last/10 || done == total {
		p.log.Info().Int("done", done).Int("total", total).Int("percent", pct).Msg(p.what)
	}
	p.last = pct
}
