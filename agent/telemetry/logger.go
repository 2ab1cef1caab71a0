package telemetry

import (
	"fmt"
	"io"
	"os"

	"github.com/mattn/go-isatty"
	"github.com/rs/zerolog"
)

// NewLogger is the root logger of every command, writing to w at level
// (debug, info, warn, error) in format: json, console, or auto (console on
// a terminal, JSON otherwise).
func NewLogger(w io.Writer, level, format string) (zerolog.Logger, error) {
	lvl, err := zerolog.ParseLevel(level)
	if err != nil || level == "" {
		return zerolog.Logger{}, fmt.Errorf("--log-level %q: use debug, info, warn or error", level)
	}
	f, ok := w.(*os.File)
	tty := ok && isatty.IsTerminal(f.Fd())
	if format == "auto" {
		format = "json"
		if tty {
			format = "console"
		}
	}
	switch format {
	case "json":
		return zerolog.New(w).Level(lvl).With().Timestamp().Logger(), nil
	case "console":
		// Colour codes only on a terminal: a file or a pipe gets plain text.
		return zerolog.New(zerolog.ConsoleWriter{Out: w, NoColor: !tty}).Level(lvl).With().Timestamp().Logger(), nil
	}
	return zerolog.Logger{}, fmt.Errorf("--log-format %q: use json, console or auto", format)
}
