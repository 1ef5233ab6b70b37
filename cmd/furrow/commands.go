package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// Exit codes, the same for every command.
const (
	exitOK       = 0 // clean; warnings alone still exit 0
	exitFindings = 1 // errors in the plan or the data
	exitUsage    = 2 // usage error or unreadable input
)

// exitCodesHelp documents the exit codes; it ends every help text.
const exitCodesHelp = `Exit codes:
  0  clean (warnings alone still exit 0)
  1  findings: errors in the plan or the data
  2  usage error, or an input that cannot be read
`

// command is one furrow subcommand. To add a command, write its file and
// add one entry to commands.
type command struct {
	name    string // as typed after "furrow"
	summary string // one line for "furrow help"
	usage   string // full help text printed by -h; starts with "usage: furrow NAME ..."
	// exitCodes is the command's own "Exit codes" section, which its usage
	// ends with, when its codes mean more than exitCodesHelp says ("" =
	// exitCodesHelp). The codes themselves are the same for every command.
	exitCodes string
	// run executes the command on its arguments (flags not yet parsed) and
	// returns the exit code; c is the command itself.
	run func(e *env, c *command, args []string) int
}

// commands is the dispatch table, in the order "furrow help" lists them.
var commands = []*command{
	lintCommand,
	checkCommand,
	schemaCommand,
	registerCommand,
	runCommand,
	verifyCommand,
	explainCommand,
	simulateCommand,
	keygenCommand,
	versionCommand,
}

// env is what a command may touch: its streams and the working folder
// that printed paths are made relative to.
type env struct {
	stdin          io.Reader
	stdout, stderr io.Writer
	cwd            string
	// wallClock is the time of registrations: the system clock in the
	// program, a fixed time in the command tests. It never reads
	// SOURCE_DATE_EPOCH (see register).
	wallClock func() time.Time
}

// run is the whole program: it dispatches to a command and returns the
// process exit code.
func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	return runWithClock(args, stdin, stdout, stderr, time.Now)
}

// runWithClock is run with the registration clock injected.
func runWithClock(args []string, stdin io.Reader, stdout, stderr io.Writer, wallClock func() time.Time) int {
	cwd, err := os.Getwd()
	if err != nil {
		cwd = ""
	}
	e := &env{stdin: stdin, stdout: stdout, stderr: stderr, cwd: cwd, wallClock: wallClock}
	if len(args) == 0 {
		fmt.Fprint(stderr, mainUsage())
		return exitUsage
	}
	name, rest := args[0], args[1:]
	switch name {
	case "help", "-h", "-help", "--help":
		return runHelp(e, rest)
	}
	c := lookup(name)
	if c == nil {
		fmt.Fprintf(stderr, "furrow: unknown command %q\nrun 'furrow help' for the list of commands\n", name)
		return exitUsage
	}
	return c.run(e, c, rest)
}

func lookup(name string) *command {
	for _, c := range commands {
		if c.name == name {
			return c
		}
	}
	return nil
}

const helpUsage = `usage: furrow help [COMMAND]

Prints the list of commands, or the help of one command (the same text as
"furrow COMMAND -h").

` + exitCodesHelp

// runHelp prints the command list or one command's help to stdout.
func runHelp(e *env, args []string) int {
	switch len(args) {
	case 0:
		fmt.Fprint(e.stdout, mainUsage())
		return exitOK
	case 1:
		if args[0] == "help" {
			fmt.Fprint(e.stdout, helpUsage)
			return exitOK
		}
		if c := lookup(args[0]); c != nil {
			fmt.Fprint(e.stdout, c.usage)
			return exitOK
		}
		fmt.Fprintf(e.stderr, "furrow help: unknown command %q\nrun 'furrow help' for the list of commands\n", args[0])
		return exitUsage
	}
	fmt.Fprint(e.stderr, "furrow help: at most one command name expected\n"+usageLine(helpUsage)+"\n")
	return exitUsage
}

// mainUsage is the top-level help: what furrow is, the commands, and the
// exit codes.
func mainUsage() string {
	var b strings.Builder
	b.WriteString(`furrow makes a trial's statistical analysis plan executable and checkable.

usage: furrow COMMAND [flags] [arguments]

Commands:
`)
	width := len("help")
	for _, c := range commands {
		width = max(width, len(c.name))
	}
	for _, c := range commands {
		fmt.Fprintf(&b, "  %-*s  %s\n", width, c.name, c.summary)
	}
	fmt.Fprintf(&b, "  %-*s  %s\n", width, "help", "print this list, or the help of one command")
	b.WriteString(`
Run "furrow COMMAND -h" for the flags and arguments of one command.

`)
	b.WriteString(exitCodesHelp)
	return b.String()
}

// usageLine returns the first line of a help text ("usage: ...").
func usageLine(usage string) string {
	line, _, _ := strings.Cut(usage, "\n")
	return line
}

// newFlags returns a flag set that prints nothing itself: parse reports
// errors and help in one place.
func newFlags(c *command) *flag.FlagSet {
	fs := flag.NewFlagSet(c.name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return fs
}

// parse parses a command's flags, which may come before, between or
// after the positional arguments ("--" ends the flags). It returns the
// positional arguments. When ok is false the caller returns code: help
// was printed (exit 0) or a usage error was (exit 2). minArgs and maxArgs
// bound the number of positional arguments.
func parse(e *env, c *command, fs *flag.FlagSet, args []string, minArgs, maxArgs int) (pos []string, ok bool, code int) {
	rest := args
	for {
		if err := fs.Parse(rest); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fmt.Fprint(e.stdout, c.usage)
				return nil, false, exitOK
			}
			return nil, false, usageError(e, c, err.Error())
		}
		left := fs.Args()
		if len(left) == 0 {
			break
		}
		if n := len(rest) - len(left); n > 0 && rest[n-1] == "--" {
			pos = append(pos, left...)
			break
		}
		pos = append(pos, left[0])
		rest = left[1:]
	}
	switch {
	case len(pos) < minArgs:
		return nil, false, usageError(e, c, "too few arguments")
	case len(pos) > maxArgs:
		return nil, false, usageError(e, c, fmt.Sprintf("unexpected argument %q", pos[maxArgs]))
	}
	return pos, true, exitOK
}

// usageError prints a one-line problem, the usage line and a hint, and
// returns the usage exit code.
func usageError(e *env, c *command, msg string) int {
	fmt.Fprintf(e.stderr, "furrow %s: %s\n%s\nrun 'furrow %s -h' for help\n", c.name, msg, usageLine(c.usage), c.name)
	return exitUsage
}

// fail prints an error that stops the command (an unreadable input) and
// returns the usage/input exit code.
func fail(e *env, c *command, err error) int {
	fmt.Fprintf(e.stderr, "furrow %s: %v\n", c.name, hint(err))
	return exitUsage
}

// rel makes a path printable: relative to the working folder when it is
// inside it, with forward slashes.
func (e *env) rel(path string) string {
	if path == "" {
		return path
	}
	if filepath.IsAbs(path) && e.cwd != "" {
		if r, err := filepath.Rel(e.cwd, path); err == nil && !strings.HasPrefix(r, "..") {
			path = r
		}
	}
	return filepath.ToSlash(filepath.Clean(path))
}
