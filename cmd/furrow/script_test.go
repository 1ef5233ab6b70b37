package main

import (
	"encoding/json"
	"errors"
	"flag"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rogpeppe/go-internal/testscript"
)

// update rewrites the expected sections of failing scripts:
//
//	go test ./cmd/furrow -update
var update = flag.Bool("update", false, "rewrite the expected output in testdata/script/*.txtar")

func TestMain(m *testing.M) {
	if a := os.Getenv(killChildEnv); a != "" {
		var args []string
		if err := json.Unmarshal([]byte(a), &args); err != nil {
			panic(err)
		}
		os.Exit(runWithClock(args, os.Stdin, os.Stdout, os.Stderr, testClock))
	}
	testscript.Main(m, map[string]func(){
		"furrow": func() { os.Exit(runWithClock(os.Args[1:], os.Stdin, os.Stdout, os.Stderr, testClock)) },
	})
}

// testClock is the registration clock of the command tests: the Unix time
// in FURROW_TEST_CLOCK (a variable only this test binary reads), else now.
func testClock() time.Time {
	if n, err := strconv.ParseInt(os.Getenv("FURROW_TEST_CLOCK"), 10, 64); err == nil {
		return time.Unix(n, 0).UTC()
	}
	return time.Now()
}

// TestScripts runs every testdata/script/*.txtar against the real command.
func TestScripts(t *testing.T) {
	testscript.Run(t, testscript.Params{
		Dir:                 filepath.Join("testdata", "script"),
		UpdateScripts:       *update,
		RequireExplicitExec: true,
		RequireUniqueNames:  true,
		Cmds:                map[string]func(ts *testscript.TestScript, neg bool, args []string){"exits": cmdExits},
		Setup: func(env *testscript.Env) error {
			// The bundled examples, for scripts that check them as shipped.
			root, err := filepath.Abs(filepath.Join("..", ".."))
			if err != nil {
				return err
			}
			env.Setenv("EXAMPLES", filepath.Join(root, "examples"))
			return nil
		},
	})
}

// TestEveryCommandHasHelpGolden requires a golden -h script per command,
// so a new command cannot land without its help being pinned.
func TestEveryCommandHasHelpGolden(t *testing.T) {
	for _, c := range append(commands, &command{name: "help"}) {
		name := filepath.Join("testdata", "script", c.name+"_help.txtar")
		b, err := os.ReadFile(name)
		if err != nil {
			t.Errorf("command %s: no golden help script %s: %v", c.name, name, err)
			continue
		}
		if !strings.Contains(string(b), "exec furrow "+c.name+" -h") && !strings.Contains(string(b), "exec furrow help") {
			t.Errorf("%s does not run furrow %s -h", name, c.name)
		}
	}
}

// TestCommandTable checks the dispatch table: unique names, a summary, a
// usage text that starts with its own usage line and documents the exit
// codes, and a run function.
func TestCommandTable(t *testing.T) {
	seen := map[string]bool{"help": true}
	for _, c := range commands {
		if seen[c.name] {
			t.Errorf("command %q listed twice (or shadows help)", c.name)
		}
		seen[c.name] = true
		if c.summary == "" || strings.Contains(c.summary, "\n") {
			t.Errorf("command %q: summary must be one non-empty line", c.name)
		}
		if !strings.HasPrefix(c.usage, "usage: furrow "+c.name) {
			t.Errorf("command %q: usage must start with %q", c.name, "usage: furrow "+c.name)
		}
		exits := exitCodesHelp
		if c.exitCodes != "" {
			exits = c.exitCodes
			if !strings.HasPrefix(exits, "Exit codes") || !strings.Contains(exits, "\n  0  ") || !strings.Contains(exits, "\n  1  ") || !strings.Contains(exits, "\n  2  ") {
				t.Errorf("command %q: its own exit codes must state 0, 1 and 2", c.name)
			}
		}
		if !strings.HasSuffix(c.usage, exits) {
			t.Errorf("command %q: usage must end with its exit codes", c.name)
		}
		if c.run == nil {
			t.Errorf("command %q: no run function", c.name)
		}
	}
}

// cmdExits is the script command "exits CODE PROGRAM [ARGS...]": it runs
// the program like exec and requires that exact exit code, so scripts pin
// the documented codes rather than only "failed".
func cmdExits(ts *testscript.TestScript, neg bool, args []string) {
	if neg {
		ts.Fatalf("unsupported: ! exits")
	}
	if len(args) < 2 {
		ts.Fatalf("usage: exits CODE PROGRAM [ARGS...]")
	}
	want, err := strconv.Atoi(args[0])
	if err != nil {
		ts.Fatalf("exits: bad code %q", args[0])
	}
	got := 0
	if err := ts.Exec(args[1], args[2:]...); err != nil {
		var ee *exec.ExitError
		if !errors.As(err, &ee) {
			ts.Fatalf("exits: %v", err)
		}
		got = ee.ExitCode()
	}
	if got != want {
		ts.Fatalf("%s exited with %d, want %d", args[1], got, want)
	}
}
