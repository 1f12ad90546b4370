// Command spotloom turns the raw signals of a flying-spot scanner into
// calibrated images. Run "spotloom help" for the sub-commands.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"regexp"
	"sort"
	"strconv"
	"strings"

	_ "spotloom/app/internal/localefix" // before Fyne reads the locale
	"spotloom/app/ui"
)

// command is one sub-command. Each lives in its own file and registers
// itself from an init function, so the files can grow independently.
type command struct {
	name    string
	summary string // one line for the command list
	// run parses args (everything after the command name) and does the work.
	// Returning a usageError exits 2; any other error exits 1.
	run func(args []string, stdout, stderr io.Writer) error
}

var commands = map[string]command{}

func register(c command) {
	if _, dup := commands[c.name]; dup {
		panic("spotloom: command registered twice: " + c.name)
	}
	commands[c.name] = c
}

// oneLine shows an error whose text has several lines (a recipe with more
// than one bad key) on one line, keeping what it wraps for errors.As.
type oneLine struct{ err error }

func (e oneLine) Error() string {
	return strings.ReplaceAll(strings.TrimSpace(e.err.Error()), "\n", "; ")
}
func (e oneLine) Unwrap() error { return e.err }

// usageError marks bad usage (exit status 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error {
	return usageError{fmt.Sprintf(format, args...)}
}

// newFlagSet makes a flag set for a sub-command whose -help prints the
// command's description and its flags to stderr.
func newFlagSet(name, synopsis, description string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "usage: spotloom %s\n\n%s\n", synopsis, strings.TrimSpace(description))
		hasFlags := false
		fs.VisitAll(func(*flag.Flag) { hasFlags = true })
		if hasFlags {
			fmt.Fprintf(stderr, "\nflags:\n")
			printFlags(stderr, fs)
		}
	}
	return fs
}

// printFlags lists the flags of fs spelled as the usage lines spell them,
// "--name", where the flag package's PrintDefaults would print "-name".
func printFlags(w io.Writer, fs *flag.FlagSet) {
	fs.VisitAll(func(f *flag.Flag) {
		arg, usage := flag.UnquoteUsage(f)
		line := "  --" + f.Name
		if arg != "" {
			line += " " + arg
		}
		fmt.Fprintf(w, "%s\n    \t%s", line, strings.ReplaceAll(usage, "\n", "\n    \t"))
		switch def := f.DefValue; def {
		case "", "0", "false":
		default:
			if getter, ok := f.Value.(flag.Getter); ok {
				if _, isString := getter.Get().(string); isString {
					def = strconv.Quote(def)
				}
			}
			fmt.Fprintf(w, " (default %s)", def)
		}
		fmt.Fprintln(w)
	})
}

// singleDash finds a flag spelled with one dash in the flag package's
// errors ("flag provided but not defined: -x").
var singleDash = regexp.MustCompile(`(^|\s)-([A-Za-z][\w-]*)`)

// positiveFlags refuses any of the named flags given on the command line
// whose value is not a finite number above 0: the flag package takes 0,
// NaN and Inf, which would otherwise be read as "not given" or reach the
// work.
func positiveFlags(fs *flag.FlagSet, names ...string) error {
	return checkGivenFlags(fs, names, func(v float64) bool { return v > 0 && !math.IsInf(v, 0) }, "a number above 0")
}

// finiteFlags refuses any of the named flags given as NaN or Inf.
func finiteFlags(fs *flag.FlagSet, names ...string) error {
	return checkGivenFlags(fs, names, func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }, "a finite number")
}

// checkGivenFlags refuses the first of the named numeric flags given on
// the command line whose value ok rejects, saying what was expected.
// Flags not given, and flags that are not numbers, are passed over.
func checkGivenFlags(fs *flag.FlagSet, names []string, ok func(float64) bool, expected string) error {
	given := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { given[f.Name] = true })
	for _, name := range names {
		f := fs.Lookup(name)
		if f == nil || !given[name] {
			continue
		}
		getter, isGetter := f.Value.(flag.Getter)
		if !isGetter {
			continue
		}
		var v float64
		switch x := getter.Get().(type) {
		case float64:
			v = x
		case int:
			v = float64(x)
		case int64:
			v = float64(x)
		case uint64:
			v = float64(x)
		default:
			continue
		}
		if !ok(v) {
			return usagef("--%s %s: expected %s", name, f.Value.String(), expected)
		}
	}
	return nil
}

// parseFlags parses args, allowing flags after positional arguments
// ("spotloom inspect FILE --json"). It returns the positional arguments.
func parseFlags(fs *flag.FlagSet, args []string) ([]string, error) {
	// The flag package prints its error and the whole usage on a bad flag;
	// keep it quiet so the error is one line, and show the usage only when
	// it was asked for.
	out := fs.Output()
	fs.SetOutput(io.Discard)
	usage := fs.Usage
	fs.Usage = func() {}
	defer func() { fs.SetOutput(out); fs.Usage = usage }()
	var positional []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fs.SetOutput(out)
				usage()
				return nil, flag.ErrHelp
			}
			return nil, usageError{singleDash.ReplaceAllString(err.Error(), "$1--$2")}
		}
		args = fs.Args()
		if len(args) == 0 {
			return positional, nil
		}
		if args[0] == "--" {
			return append(positional, args[1:]...), nil
		}
		positional = append(positional, args[0])
		args = args[1:]
	}
}

func printCommands(w io.Writer) {
	fmt.Fprintf(w, "spotloom turns flying-spot scanner traces into calibrated images.\n\n")
	fmt.Fprintf(w, "usage: spotloom [command] [arguments]\n\ncommands:\n")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].summary)
	}
	fmt.Fprintf(w, "\nWith no command, spotloom opens the workstation on the built-in demo.\n")
	fmt.Fprintf(w, "Run \"spotloom COMMAND --help\" for the flags of a command,\n")
	fmt.Fprintf(w, "\"spotloom --version\" for the version and the libraries it was built with.\n")
}

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// run dispatches to a sub-command and turns its error into an exit status.
func run(args []string, stdout, stderr io.Writer) int {
	name := "open"
	if len(args) > 0 {
		switch a := args[0]; {
		case a == "help" || a == "-h" || a == "-help" || a == "--help":
			if len(args) > 1 {
				c, ok := commands[args[1]]
				if !ok {
					fmt.Fprintf(stderr, "spotloom: unknown command %q (see \"spotloom help\")\n", args[1])
					return 2
				}
				return finish(c.name, c.run([]string{"--help"}, stdout, stderr), stderr)
			}
			printCommands(stdout)
			return 0
		case a == "--version" || a == "-version":
			fmt.Fprintln(stdout, ui.BuildVersion())
			return 0
		case strings.HasPrefix(a, "-"):
			// flags for the default command: "spotloom --snapshot x.png"
		default:
			if _, isCommand := commands[a]; !isCommand && isFile(a) {
				// "spotloom capture.wav", as a file manager starts it:
				// open that capture.
				break
			}
			name, args = a, args[1:]
		}
	}
	c, ok := commands[name]
	if !ok {
		fmt.Fprintf(stderr, "spotloom: unknown command %q\n\n", name)
		printCommands(stderr)
		return 2
	}
	return finish(c.name, c.run(args, stdout, stderr), stderr)
}

// isFile says path names an existing file that is not a folder.
func isFile(path string) bool {
	st, err := os.Stat(path)
	return err == nil && !st.IsDir()
}

func finish(name string, err error, stderr io.Writer) int {
	if err != nil && !errors.Is(err, flag.ErrHelp) {
		// One line on stderr, however many problems the error lists.
		err = oneLine{err}
	}
	var ue usageError
	switch {
	case err == nil, errors.Is(err, flag.ErrHelp):
		return 0
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "spotloom %s: %s (see \"spotloom %s --help\")\n", name, strings.ReplaceAll(ue.msg, "\n", "; "), name)
		return 2
	default:
		fmt.Fprintf(stderr, "spotloom %s: %s\n", name, err)
		return 1
	}
}
