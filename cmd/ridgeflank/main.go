// Each subcommand lives in its own file and registers itself from init()
// with register; main.go holds only the registry, flag and environment
// handling, and the exit-status rules:
//
//	0  success (including --help)
//	2  bad usage or bad input (a usageError, or a *fault.Error from the layers below)
//	1  any other failure
//
// Errors are printed on stderr as one plain sentence.

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
	"strings"
	"syscall"

	"ridgeflank/fault"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "dev"

// command is one ridgeflank subcommand.
type command struct {
	// Name is the word after "ridgeflank".
	Name string
	// Summary is one line for the command list.
	Summary string
	// Usage is the synopsis and description printed by --help, above the
	// flag list, e.g. "ridgeflank predict --age LIST [flags]\n\nPredicts ...".
	Usage string
	// Run executes the command. args excludes the command name. Return a
	// usageError (see usagef) for bad usage or input, errHelpShown after
	// printing help, any other error for failures.
	Run func(ctx context.Context, args []string, stdout, stderr io.Writer) error
}

var commands = map[string]*command{}

// register adds c to the registry; call it from init() in the command's file.
func register(c *command) {
	if c.Name == "" || c.Run == nil {
		panic("ridgeflank: command without a name or Run")
	}
	if _, dup := commands[c.Name]; dup {
		panic("ridgeflank: command " + c.Name + " registered twice")
	}
	commands[c.Name] = c
}

// usageError marks bad usage or bad input: exit status 2.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

// usagef returns a usageError with a formatted message.
func usagef(format string, a ...any) error { return &usageError{msg: fmt.Sprintf(format, a...)} }

// errHelpShown is returned by parseFlags after printing help: exit status 0.
var errHelpShown = errors.New("help shown")

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// run dispatches args to a command and returns the exit status.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		printCommands(stderr)
		return 2
	}
	name := args[0]
	switch name {
	case "help", "-h", "-help", "--help":
		if len(args) > 1 && name == "help" {
			c, ok := commands[args[1]]
			if !ok {
				return report(stderr, "ridgeflank help", usagef("unknown command %q; run 'ridgeflank help' for the list", args[1]))
			}
			return report(stderr, "ridgeflank "+c.Name, c.Run(ctx, []string{"--help"}, stdout, stderr))
		}
		printCommands(stdout)
		return 0
	}
	c, ok := commands[name]
	if !ok {
		return report(stderr, "ridgeflank", usagef("unknown command %q; run 'ridgeflank help' for the list", name))
	}
	return report(stderr, "ridgeflank "+c.Name, c.Run(ctx, args[1:], stdout, stderr))
}

// report prints err as one sentence and maps it to an exit status.
func report(stderr io.Writer, prefix string, err error) int {
	if err == nil || errors.Is(err, errHelpShown) {
		return 0
	}
	fmt.Fprintf(stderr, "%s: %s\n", prefix, sentence(err.Error()))
	var ue *usageError
	if errors.As(err, &ue) {
		return 2
	}
	if _, ok := fault.As(err); ok {
		return 2
	}
	return 1
}

// sentence flattens msg onto one line and ends it with a full stop.
func sentence(msg string) string {
	msg = strings.Join(strings.Fields(msg), " ")
	if msg == "" {
		return "failed."
	}
	if !strings.HasSuffix(msg, ".") {
		msg += "."
	}
	return msg
}

func printCommands(w io.Writer) {
	names := make([]string, 0, len(commands))
	width := 0
	for n := range commands {
		names = append(names, n)
		width = max(width, len(n))
	}
	sort.Strings(names)
	fmt.Fprintf(w, "ridgeflank %s: seafloor depth, heat flow and lithosphere thickness from seafloor age.\n\n", version)
	fmt.Fprintln(w, "Usage: ridgeflank COMMAND [flags]")
	fmt.Fprintln(w, "\nCommands:")
	for _, n := range names {
		fmt.Fprintf(w, "  %-*s  %s\n", width, n, commands[n].Summary)
	}
	fmt.Fprintln(w, "\nRun 'ridgeflank COMMAND --help' for a command's flags.")
	fmt.Fprintln(w, "Every flag can also be set with an environment variable RIDGEFLANK_<FLAG>")
	fmt.Fprintln(w, "(upper case, '-' as '_', e.g. RIDGEFLANK_STEP_KM); the command line wins.")
}

// printUsage writes c.Usage and the flags of fs.
func printUsage(w io.Writer, c *command, fs *flag.FlagSet) {
	fmt.Fprintln(w, strings.TrimRight(c.Usage, "\n"))
	has := false
	fs.VisitAll(func(*flag.Flag) { has = true })
	if has {
		fmt.Fprintln(w, "\nFlags:")
		fs.SetOutput(w)
		fs.PrintDefaults()
		fs.SetOutput(io.Discard)
		fmt.Fprintf(w, "\nEach flag may also come from RIDGEFLANK_<FLAG> (e.g. %s); the command line wins.\n", envName(firstFlag(fs)))
	}
}

func firstFlag(fs *flag.FlagSet) string {
	name := "model"
	found := false
	fs.VisitAll(func(f *flag.Flag) {
		if !found {
			name, found = f.Name, true
		}
	})
	return name
}

// newFlags returns a silent FlagSet for c: errors are reported by run and
// help is printed by parseFlags.
func newFlags(c *command) *flag.FlagSet {
	fs := flag.NewFlagSet(c.Name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return fs
}

// envKey is the context key of the environment lookup function (tests set one; see withEnv).
type envKey struct{}

func envLookup(ctx context.Context) func(string) (string, bool) {
	if f, ok := ctx.Value(envKey{}).(func(string) (string, bool)); ok {
		return f
	}
	return os.LookupEnv
}

// envName is the environment variable for a flag: RIDGEFLANK_ + the flag
// name in upper case with '-' as '_'.
func envName(flagName string) string {
	return "RIDGEFLANK_" + strings.ToUpper(strings.ReplaceAll(flagName, "-", "_"))
}

// applyEnv sets every flag of fs that has a RIDGEFLANK_<FLAG> variable. A
// value the flag rejects is a usageError naming the variable.
func applyEnv(fs *flag.FlagSet, lookup func(string) (string, bool)) error {
	var first error
	fs.VisitAll(func(f *flag.Flag) {
		if first != nil {
			return
		}
		name := envName(f.Name)
		v, ok := lookup(name)
		if !ok {
			return
		}
		if err := fs.Set(f.Name, v); err != nil {
			first = usagef("environment variable %s=%q is not a valid value for --%s: %v", name, v, f.Name, err)
		}
	})
	return first
}

// parseFlags applies RIDGEFLANK_<FLAG> environment variables and then the
// command line to fs. On -h/--help it prints c's usage to stdout and returns
// errHelpShown; parse errors and leftover positional arguments (when
// positional is false) are usageErrors.
func parseFlags(ctx context.Context, c *command, fs *flag.FlagSet, args []string, stdout io.Writer, positional bool) error {
	if err := applyEnv(fs, envLookup(ctx)); err != nil {
		return err
	}
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			printUsage(stdout, c, fs)
			return errHelpShown
		}
		return usagef("%v; run 'ridgeflank %s --help' for usage", err, c.Name)
	}
	if !positional && fs.NArg() > 0 {
		return usagef("unexpected argument %q; run 'ridgeflank %s --help' for usage", fs.Arg(0), c.Name)
	}
	return nil
}
