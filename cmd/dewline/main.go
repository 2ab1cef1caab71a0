// Command dewline analyses air-handler trend logs for dehumidification and
// reheat energy. Run "dewline help" for the commands.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"sort"
	"syscall"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/telemetry"
)

// command is one subcommand of dewline.
type command struct {
	summary string
	run     func(ctx context.Context, env *env, args []string) error
}

// env is what every command gets from main: streams and the root logger.
type env struct {
	stdout, stderr io.Writer
	log            zerolog.Logger
}

var commands = map[string]command{
	"air":     {"compute one moist-air state (dry bulb with RH, dew point, wet bulb or humidity ratio)", runAir},
	"draft":   {"propose a configuration (air handlers, roles, units) from trend exports or an InfluxDB bucket", runDraft},
	"check":   {"validate a configuration and inspect its points in exports or the store", runCheck},
	"import":  {"load trend exports (CSV) into the configured store", runImport},
	"run":     {"the agent: compute every hour on a schedule, write results and alerts back, serve health and metrics", runRun},
	"analyze": {"compute the hourly figures and alerts for a period, from the store or from exports", runAnalyze},
	"serve":   {"serve the dashboard over the stored results (read-only)", runServe},
	"demo":    {"generate an invented building's trend logs, analyse them, write the report and serve the dashboard", runDemo},
	"report":  {"write a self-contained HTML report (and with --pdf a PDF) of a period's findings, measures and method", runReport},
	"adopt":   {"after an upgrade: copy InfluxDB results written without the site tag into the configured site", runAdopt},
	"compare": {"what a sequence change saved: a baseline model of the before period against the after period", runCompare},
}

// usageError is a mistake in the command line: it prints the reason and exits 2.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usagef(format string, a ...any) error { return &usageError{fmt.Sprintf(format, a...)} }

// exitNeedsLook is the exit status of "dewline check" when it ran but
// some points need a look: distinct from an error (1) and a usage mistake (2).
const exitNeedsLook = 3

// exitError ends a command with its own exit status and message.
type exitError struct {
	code int
	msg  string
}

func (e *exitError) Error() string { return e.msg }

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	// The first signal cancels ctx and lets the work in flight finish or
	// stop cleanly; a second one exits at once.
	go func() {
		<-ctx.Done()
		again := make(chan os.Signal, 1)
		signal.Notify(again, os.Interrupt, syscall.SIGTERM)
		<-again
		fmt.Fprintln(os.Stderr, "dewline: second signal, exiting now")
		os.Exit(130)
	}()
	os.Exit(run(ctx, os.Args[1:], os.Stdout, os.Stderr))
}

// run executes one command line and returns the process exit code.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	global := flag.NewFlagSet("dewline", flag.ContinueOnError)
	global.SetOutput(io.Discard)
	logLevel := global.String("log-level", "info", "log level: debug, info, warn, error")
	logFormat := global.String("log-format", "auto", "log format: json, console, or auto (console on a terminal, JSON otherwise)")
	version := global.Bool("version", false, "print the version (module version and commit) and exit")
	global.Usage = func() {}
	if err := global.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			printUsage(stdout) // asked for: standard output, as a command's -h
			return 0
		}
		fmt.Fprintf(stderr, "dewline: %v (run \"dewline help\" for the global flags and commands)\n", err)
		return 2
	}
	if *version {
		fmt.Fprintln(stdout, telemetry.ReadBuild().Line())
		return 0
	}
	log, err := telemetry.NewLogger(stderr, *logLevel, *logFormat)
	if err != nil {
		fmt.Fprintln(stderr, "dewline:", err)
		return 2
	}
	rest := global.Args()
	if len(rest) == 0 || rest[0] == "help" || rest[0] == "-h" || rest[0] == "--help" {
		printUsage(stdout)
		return 0
	}
	cmd, ok := commands[rest[0]]
	if !ok {
		fmt.Fprintf(stderr, "dewline: unknown command %q; run \"dewline help\" for the list\n", rest[0])
		return 2
	}
	e := &env{stdout: stdout, stderr: stderr, log: log.With().Str("command", rest[0]).Logger()}
	if err := cmd.run(ctx, e, rest[1:]); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return 0
		}
		fmt.Fprintf(stderr, "dewline %s: %v\n", rest[0], err)
		var ue *usageError
		if errors.As(err, &ue) {
			return 2
		}
		var xe *exitError
		if errors.As(err, &xe) {
			return xe.code
		}
		return 1
	}
	return 0
}

// loadConfig loads the file named by --config, which is required.
func loadConfig(path string) (*config.Config, error) {
	if path == "" {
		return nil, usagef("--config is required")
	}
	return config.Load(path)
}

// parseWithConfig parses a command's flags (parseFlags) and loads the
// configuration named by its --config flag.
func parseWithConfig(fs *flag.FlagSet, args []string, w io.Writer) (*config.Config, error) {
	if err := parseFlags(fs, args, w); err != nil {
		return nil, err
	}
	return loadConfig(fs.Lookup("config").Value.String())
}

// parseFlags parses a command's flags. Mistakes come back as a one-line
// usage error; -h prints the flags to w and returns flag.ErrHelp.
func parseFlags(fs *flag.FlagSet, args []string, w io.Writer) error {
	if err := parseFlagsFiles(fs, args, w); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q (run \"dewline %s -h\" for the flags)", fs.Arg(0), fs.Name())
	}
	return nil
}

// parseFlagsFiles parses flags that may be followed by file names
// (parseFlags without the check for arguments left over).
func parseFlagsFiles(fs *flag.FlagSet, args []string, w io.Writer) error {
	usage := fs.Usage
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	err := fs.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		fs.SetOutput(w)
		usage()
		return err
	}
	if err != nil {
		return usagef("%v (run \"dewline %s -h\" for the flags)", err, fs.Name())
	}
	return nil
}

func printUsage(w io.Writer) {
	fmt.Fprintln(w, "dewline: dehumidification and reheat energy from air-handler trend logs")
	fmt.Fprintln(w, "\nusage: dewline [--log-level L] [--log-format auto|json|console] COMMAND [flags]")
	fmt.Fprintln(w, "       dewline --version")
	fmt.Fprintln(w, "\ncommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nRun \"dewline COMMAND -h\" for a command's flags. Exit status: 0 done, 1 an error, 2 a usage mistake;")
	fmt.Fprintf(w, "\"dewline check\" exits %d when it ran but points need a look.\n", exitNeedsLook)
}
