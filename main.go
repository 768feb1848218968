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
	_ "aa.telltale.local/localeenv"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log"
	"os"
	"os/signal"
	"sort"
	"strings"
	"syscall"
)

// command is one subcommand: its usage line, a one-line summary, a longer
// description, its own flag set and the function that runs it.
type command struct {
	Name      string
	UsageLine string
	Short     string
	Long      string
	// Setup registers the command's flags and returns the function that runs
	// it once the flags are parsed.
	Setup func(fs *flag.FlagSet) func(ctx context.Context, env *runEnv) error
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

var commands = map[string]*command{}

func register(c *command) { commands[c.Name] = c }

func main() {
	log.SetFlags(0)
	log.SetPrefix("telltale: ")
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:], os.Stdin, os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// run executes one command line and returns the process exit code: 0 on
// success, 1 on a run-time failure, 2 on a usage error.
func run(ctx context.Context, args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		if len(args) > 1 {
			if c, ok := commands[args[1]]; ok {
				printCommandHelp(stdout, c)
				return 0
			}
			fmt.Fprintf(stderr, "telltale: unknown command %q\n", args[1])
			printHelp(stderr)
			return 2
		}
		if len(args) == 0 {
			printHelp(stderr)
			return 2
		}
		printHelp(stdout)
		return 0
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "telltale: unknown command %q; run 'telltale help' for the list\n", args[0])
		return 2
	}
	fs := flag.NewFlagSet(c.Name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	exec := c.Setup(fs)
	if err := fs.Parse(args[1:]); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			printCommandHelp(stdout, c)
			return 0
		}
		fmt.Fprintf(stderr, "telltale %s: %v\nusage: telltale %s\n", c.Name, err, c.UsageLine)
		return 2
	}
	// A stray word would make the flag package stop, silently dropping
	// every option after it.
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "telltale %s: unexpected argument %q: every value goes with an option (quote texts, e.g. --text \"...\")\nusage: telltale %s\n", c.Name, fs.Arg(0), c.UsageLine)
		return 2
	}
	err := exec(ctx, &runEnv{Stdin: stdin, Stdout: stdout, Stderr: stderr})
	if err == nil {
		return 0
	}
	var ue usageError
	if errors.As(err, &ue) {
		fmt.Fprintf(stderr, "telltale %s: %v\nusage: telltale %s\n", c.Name, err, c.UsageLine)
		return 2
	}
	fmt.Fprintf(stderr, "telltale %s: %v\n", c.Name, err)
	return 1
}

func printHelp(w io.Writer) {
	fmt.Fprintln(w, "telltale trains a sentence CNN, explains it and audits it for spurious cues.")
	fmt.Fprintln(w, "\nUsage:\n\n\ttelltale <command> [options]\n\nCommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "\t%-13s %s\n", n, commands[n].Short)
	}
	fmt.Fprintln(w, "\nRun 'telltale help <command>' for a command's options.")
}

func printCommandHelp(w io.Writer, c *command) {
	fmt.Fprintf(w, "usage: telltale %s\n\n%s\n", c.UsageLine, strings.TrimSpace(c.Long))
	fs := flag.NewFlagSet(c.Name, flag.ContinueOnError)
	c.Setup(fs)
	fmt.Fprintln(w, "\nOptions:")
	fs.VisitAll(func(f *flag.Flag) {
		name, usage := flag.UnquoteUsage(f)
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
