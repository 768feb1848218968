// Command telltale trains a sentence CNN on labeled text, explains what its
// filters respond to and why it labels a text the way it does, audits it for
// spurious cues, and shows it all in a desktop window or an HTML report.
//
// Usage:
//
//	telltale <command> [options]
//
// Run `telltale help` for the list of commands and `telltale help <command>`
// for one command's options.
package main

//go:generate go run ./internal/demogen -out testdata/demo

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log"
	"os"
	"os/signal"
	"strconv"
	"strings"
	"syscall"

	"telltale/internal/inputfile"
	"telltale/internal/localeenv"
	"telltale/internal/outguard"
)

// commands is every command, in the order help lists them.
var commands = []*command{
	cmdData,
	cmdTrain,
	cmdEval,
	cmdPredict,
	cmdExplain,
	cmdFilters,
	cmdFaithfulness,
	cmdAudit,
	cmdMask,
	cmdCompare,
	cmdImport,
	cmdExport,
	cmdReport,
	cmdGUI,
	cmdVersion,
}

// A command is one subcommand of telltale (the shape of the Go command's
// base.Command): its usage line, a one-line summary, a longer description,
// its options and the function that runs it.
type command struct {
	Name      string
	UsageLine string // after "telltale "
	Short     string
	Long      string
	// Options returns a fresh value to hold the command's options.
	Options func() options
	// Run runs the command with the value Options returned, its options
	// parsed and checked and its outputs cleared by the output guard.
	Run func(ctx context.Context, env *runEnv, o options) error
}

// options holds one command's option values.
type options interface {
	// register adds the options to fs, with their defaults.
	register(fs *flag.FlagSet)
	// check refuses option values that cannot work, before any work starts
	// (a usageError names the option); it may adjust values with a warning
	// on env.Stderr. fs tells which options were given.
	check(fs *flag.FlagSet, env *runEnv) error
	// files lists the files the command will write and those it reads, for
	// the output guard.
	files() (outputs, inputs []outguard.File)
}

// runAs adapts a run function over one command's own options type to
// command.Run.
func runAs[O options](run func(context.Context, *runEnv, O) error) func(context.Context, *runEnv, options) error {
	return func(ctx context.Context, env *runEnv, o options) error { return run(ctx, env, o.(O)) }
}

// runEnv is what a command sees of the process.
type runEnv struct {
	Stdin  io.Reader
	Stdout io.Writer
	Stderr io.Writer
}

// usageError marks an error in the command line itself (exit code 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return usageError{fmt.Sprintf(format, args...)} }

// interrupted is the error of a run stopped by a signal; its message says
// what was kept. It matches context.Canceled under errors.Is.
type interrupted string

func (e interrupted) Error() string { return string(e) }
func (e interrupted) Unwrap() error { return context.Canceled }

// signalled is the cause of a context cancelled by a signal.
type signalled struct{ sig syscall.Signal }

func (s signalled) Error() string { return "interrupted by " + s.sig.String() }

// errHelpShown ends a run that printed a command's help on request.
var errHelpShown = errors.New("help shown")

func main() {
	log.SetFlags(0)
	log.SetPrefix("telltale: ")
	if len(os.Args) < 2 || os.Args[1] != cmdGUI.Name {
		localeenv.Undo() // only the window needs the locale fix
	}
	ctx, stop := signalContext()
	code := run(ctx, os.Args[1:], os.Stdin, os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// signalContext returns a context cancelled, with a signalled cause, by
// the first SIGINT or SIGTERM; later ones are ignored while the command
// finishes (saving what it keeps). The signal also ends an input's wait for
// a named pipe's writer (inputfile.Interrupt), which no context reaches.
func signalContext() (context.Context, func()) {
	ctx, cancel := context.WithCancelCause(context.Background())
	ch := make(chan os.Signal, 2)
	signal.Notify(ch, os.Interrupt, syscall.SIGTERM)
	go func() {
		if s, ok := (<-ch).(syscall.Signal); ok {
			cancel(signalled{s})
			inputfile.Interrupt() // an input's open that waits for a pipe's writer gives way too
		}
	}()
	return ctx, func() { signal.Stop(ch); cancel(nil) }
}

// run executes one command line and returns the process exit code: 0 on
// success, 1 on a run-time failure, 2 on a usage error, 128 + the signal's
// number (130 for SIGINT) when a signal stopped it.
func run(ctx context.Context, args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		printHelp(stderr)
		return 2
	}
	switch args[0] {
	case "help", "-h", "-help", "--help":
		return runHelp(args[1:], stdout, stderr)
	case "--version", "-version":
		args = append([]string{cmdVersion.Name}, args[1:]...) // as most programs accept it
	}
	c := lookup(args[0])
	if c == nil {
		fmt.Fprintf(stderr, "telltale: unknown command %q; run 'telltale help' for the list\n", clip(args[0]))
		return 2
	}
	err := execute(ctx, c, args[1:], &runEnv{Stdin: stdin, Stdout: stdout, Stderr: stderr})
	return exitCode(ctx, c, err, stderr)
}

func lookup(name string) *command {
	for _, c := range commands {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// execute parses and checks c's options, runs the output guard and then c.
func execute(ctx context.Context, c *command, args []string, env *runEnv) error {
	o := c.Options()
	fs := flag.NewFlagSet(c.Name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	o.register(fs)
	repeated := countUses(fs)
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			printCommandHelp(env.Stdout, c)
			return errHelpShown
		}
		return usageError{flagMessage(err)}
	}
	if err := repeated(); err != nil {
		return err
	}
	// A stray word would make the flag package stop, silently dropping
	// every option after it.
	if fs.NArg() > 0 {
		return usagef("unexpected argument %q: every value goes with an option (quote texts, e.g. --text \"...\")", clip(fs.Arg(0)))
	}
	if err := o.check(fs, env); err != nil {
		return err
	}
	outputs, inputs := o.files()
	if err := guardFiles(outputs, inputs); err != nil {
		return err
	}
	if err := checkCorpora(o, inputs); err != nil {
		return err
	}
	if p, ok := o.(preflighter); ok {
		if err := p.preflight(); err != nil {
			return err
		}
	}
	return c.Run(ctx, env, o)
}

// exitCode prints err (if any) and returns the exit code for it.
func exitCode(ctx context.Context, c *command, err error, stderr io.Writer) int {
	if code, stopped := signalCode(ctx, err); stopped {
		var in interrupted
		if errors.As(err, &in) {
			fmt.Fprintf(stderr, "telltale %s: interrupted: %s\n", c.Name, in)
		} else {
			fmt.Fprintf(stderr, "telltale %s: interrupted\n", c.Name)
		}
		return code
	}
	var ue usageError
	switch {
	case err == nil, errors.Is(err, errHelpShown):
		return 0
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "telltale %s: %s\nusage: telltale %s\n", c.Name, errorText(c, err), c.UsageLine)
		return 2
	}
	fmt.Fprintf(stderr, "telltale %s: %s\n", c.Name, errorText(c, err))
	return 1
}

// errorText is err's message after "telltale NAME: ", without the prefix
// of the package of the same name ("audit: "), which would say it twice.
func errorText(c *command, err error) string {
	return strings.TrimPrefix(err.Error(), c.Name+": ")
}

// signalCode reports whether the run was stopped by a signal (or its
// context cancelled) and the exit code that says so: 128 + the signal's
// number, 130 (SIGINT) when the context was cancelled otherwise.
func signalCode(ctx context.Context, err error) (int, bool) {
	if ctx.Err() == nil && !errors.Is(err, context.Canceled) {
		return 0, false
	}
	var s signalled
	if errors.As(context.Cause(ctx), &s) {
		return 128 + int(s.sig), true
	}
	return 128 + int(syscall.SIGINT), true
}

// flagMessage rewrites the flag package's errors with options written as
// the help writes them (two dashes).
func flagMessage(err error) string {
	msg := err.Error()
	var name, value, why string
	switch {
	case scan(msg, "flag provided but not defined: -", &name):
		return fmt.Sprintf("unknown option --%s: 'telltale help' with the command's name lists its options", clip(name))
	case scan(msg, "flag needs an argument: -", &name):
		return fmt.Sprintf("--%s needs a value", name)
	case scanValue(msg, &value, &name, &why):
		return fmt.Sprintf("--%s %s: %s", name, clip(value), why)
	}
	return msg
}

// scan reports whether msg starts with prefix and sets rest to what follows.
func scan(msg, prefix string, rest *string) bool {
	r, ok := strings.CutPrefix(msg, prefix)
	*rest = r
	return ok
}

// scanValue takes apart the flag package's `invalid value "V" for flag -N: W`
// and `invalid boolean value "V" for -N: W`.
func scanValue(msg string, value, name, why *string) bool {
	rest, ok := strings.CutPrefix(msg, "invalid value ")
	boolean := false
	if !ok {
		if rest, ok = strings.CutPrefix(msg, "invalid boolean value "); !ok {
			return false
		}
		boolean = true
	}
	q, err := strconv.QuotedPrefix(rest)
	if err != nil {
		return false
	}
	tail, ok := strings.CutPrefix(rest[len(q):], " for ")
	if !ok {
		return false
	}
	n, w, ok := strings.Cut(strings.TrimPrefix(strings.TrimPrefix(tail, "flag "), "-"), ": ")
	if !ok {
		return false
	}
	*value, _ = strconv.Unquote(q)
	*name, *why = n, w
	if boolean {
		*why = "give true or false"
	}
	return true
}

func runHelp(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		printHelp(stdout)
		return 0
	}
	if c := lookup(args[0]); c != nil {
		printCommandHelp(stdout, c)
		return 0
	}
	fmt.Fprintf(stderr, "telltale: unknown command %q\n", clip(args[0]))
	printHelp(stderr)
	return 2
}

func printHelp(w io.Writer) {
	fmt.Fprintln(w, "telltale trains a sentence CNN, explains it and audits it for spurious cues.")
	fmt.Fprintln(w, "\nUsage:\n\n\ttelltale <command> [options]\n\nCommands:")
	for _, c := range commands {
		fmt.Fprintf(w, "\t%-13s %s\n", c.Name, c.Short)
	}
	fmt.Fprintln(w, "\nRun 'telltale help <command>' for a command's options.")
}

// printCommandHelp prints c's usage, description and exactly the options
// it registers.
func printCommandHelp(w io.Writer, c *command) {
	fmt.Fprintf(w, "usage: telltale %s\n\n%s\n", c.UsageLine, strings.TrimSpace(c.Long))
	fs := flag.NewFlagSet(c.Name, flag.ContinueOnError)
	c.Options().register(fs)
	fmt.Fprintln(w, "\nOptions:")
	fs.VisitAll(func(f *flag.Flag) {
		name, usage := flag.UnquoteUsage(f)
		if t, ok := f.Value.(interface{ typeName() string }); ok && !strings.Contains(f.Usage, "`") {
			name = t.typeName()
		}
		line := "  --" + f.Name
		if name != "" {
			line += " " + name
		}
		if f.DefValue != "" && f.DefValue != "false" && f.DefValue != "0" {
			usage += fmt.Sprintf(" (default %s)", f.DefValue)
		}
		fmt.Fprintf(w, "%s\n    \t%s\n", line, usage)
	})
}
