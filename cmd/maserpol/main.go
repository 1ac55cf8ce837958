// Command maserpol models the polarization of astrophysical masers: the
// Zeeman structure of a maser transition with hyperfine mixing, the
// saturating polarized transfer through a maser column, and parameter
// studies of both. Run "maserpol -h" for the commands.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime"
	"runtime/debug"
	"strings"
	"syscall"

	"maserpol/config"
	"maserpol/runs"
)

// Exit statuses.
const (
	exitOK      = 0
	exitFailure = 1
	exitInput   = 2
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

type command struct {
	name, args, summary string
	run                 func(ctx context.Context, args []string, stdout, stderr io.Writer) int
}

func commands() []command {
	return []command{
		{"run", "CONFIG [--workers N] [--resume] [--shard K/N] [--out DIR] [--no-plots] [--titles]", "run the parameter study of a config file", cmdRun},
		{"levels", "SPECIES_OR_CONFIG [--field \"0:100:21 mG\"] [--format table|ecsv|csv] [--components] [--min-strength X] [--plot FILE] [--titles]", "print Zeeman levels, transitions and hyperfine components", cmdLevels},
		{"plot", "RUNDIR [--format png,svg] [--titles]", "redraw the figures of a run directory from its tables", cmdPlot},
		{"merge", "DST SRC... [--format png,svg] [--no-plots] [--titles]", "join shard run directories into one", cmdMerge},
		{"compare", compareArgs, compareSummary, cmdCompare},
		{"diagnose", diagnoseArgs, diagnoseSummary, cmdDiagnose},
		{"zeeman-factor", zfactorArgs, zfactorSummary, cmdZeemanFactor},
		{"field", fieldArgs, fieldSummary, cmdField},
		{"init", "[--species NAME] [FILE]", "write a commented starter config (default maserpol.toml)", cmdInit},
		{"demo", "[--out DIR] [--workers N]", "run the built-in demonstration studies", cmdDemo},
		{"version", "", "print the program version", cmdVersion},
	}
}

func usage(w io.Writer) {
	fmt.Fprintf(w, "maserpol %s: polarized maser transfer with hyperfine-mixed Zeeman sublevels\n\nUsage:\n", runs.Version)
	for _, c := range commands() {
		fmt.Fprintf(w, "  maserpol %s %s\n      %s\n", c.name, c.args, c.summary)
	}
	fmt.Fprintf(w, "\nRun \"maserpol COMMAND -h\" for the flags of a command.\n"+
		"Results go to stdout, progress and warnings to stderr.\n"+
		"Exit status: 0 success, 1 failure, 2 bad input (config, species, flags).\n")
}

// run is the whole command; main only wires it to the process.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	return guard(stderr, func() int { return dispatch(ctx, args, stdout, stderr) })
}

// guard runs a command. A panic in it is a bug, not bad input: it is
// reported as an internal error with exit status 1 (Go's own exit status
// for a panic, 2, would read as bad input).
func guard(stderr io.Writer, f func() int) (code int) {
	defer func() {
		if p := recover(); p != nil {
			fmt.Fprintf(stderr, "maserpol: internal error: %v\n%s\nmaserpol: this is a bug; please report it with the command line and config\n", p, debug.Stack())
			code = exitFailure
		}
	}()
	return f()
}

func dispatch(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		usage(stderr)
		return exitInput
	}
	switch args[0] {
	case "-h", "-help", "--help", "help":
		usage(stdout)
		return exitOK
	case "-version", "--version":
		args[0] = "version"
	}
	for _, c := range commands() {
		if c.name == args[0] {
			return c.run(ctx, args[1:], stdout, stderr)
		}
	}
	fmt.Fprintf(stderr, "maserpol: unknown command %q\n\n", args[0])
	usage(stderr)
	return exitInput
}

// newFlags makes the flag set of a command with a usage message.
func newFlags(name, args, summary string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet("maserpol "+name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "Usage: maserpol %s %s\n\n%s.\n", name, args, upperFirst(summary))
		n := 0
		fs.VisitAll(func(*flag.Flag) { n++ })
		if n > 0 {
			fmt.Fprintf(stderr, "\nFlags (they may follow the arguments):\n")
			printFlags(stderr, fs)
		}
	}
	return fs
}

// printFlags lists the flags as the usage lines write them, with two
// dashes (the flag package accepts one or two; its own listing uses one).
func printFlags(w io.Writer, fs *flag.FlagSet) {
	fs.VisitAll(func(f *flag.Flag) {
		name, usage := flag.UnquoteUsage(f)
		line := "  --" + f.Name
		if name != "" {
			line += " " + name
		}
		line += "\n    \t" + strings.ReplaceAll(usage, "\n", "\n    \t")
		if f.DefValue != "" && f.DefValue != "0" && f.DefValue != "false" {
			line += fmt.Sprintf(" (default %q)", f.DefValue)
		}
		fmt.Fprintln(w, line)
	})
}

func flagsFor(name string, stderr io.Writer) *flag.FlagSet {
	for _, c := range commands() {
		if c.name == name {
			return newFlags(c.name, c.args, c.summary, stderr)
		}
	}
	panic("no command " + name)
}

func upperFirst(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// parseFlags parses flags anywhere among the arguments (the standard
// package stops at the first argument that is not a flag) and returns the
// positional arguments. After "--" everything is positional.
func parseFlags(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		before := len(args)
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if consumed := before - len(rest); consumed > 0 && args[consumed-1] == "--" {
			return append(pos, rest...), nil
		}
		if len(rest) == 0 {
			return pos, nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

// flagExit maps a flag parsing error to an exit status: help is success.
func flagExit(err error) int {
	if errors.Is(err, flag.ErrHelp) {
		return exitOK
	}
	return exitInput
}

// inputExit reports whether err is bad input (exit 2) and prints it.
func report(stderr io.Writer, err error) int {
	fmt.Fprintf(stderr, "maserpol: %v\n", err)
	var ce *config.Error // also species-file errors: the same type
	var ie *runs.InputError
	var ue *usageError
	if errors.As(err, &ce) || errors.As(err, &ie) || errors.As(err, &ue) {
		return exitInput
	}
	return exitFailure
}

// usageError is a bad argument on the command line.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usagef(format string, a ...any) error { return &usageError{fmt.Sprintf(format, a...)} }

func cmdVersion(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("version", stderr)
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) > 0 {
		fs.Usage()
		return exitInput
	}
	build := ""
	if rev, mod := runs.Revision(); rev != "" {
		build = "revision " + rev
		if mod {
			build += " with local modifications"
		}
		build += ", "
	}
	fmt.Fprintf(stdout, "maserpol %s (%s%s, %s/%s)\n", runs.Version, build, runtime.Version(), runtime.GOOS, runtime.GOARCH)
	return exitOK
}

// studyWarnings prints the warnings of a study (config already reports
// unverified species).
func studyWarnings(stderr io.Writer, st *config.Study) {
	for _, w := range st.Warnings {
		fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
	}
}
