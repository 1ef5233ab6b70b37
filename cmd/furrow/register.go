package main

import (
	"errors"
	"fmt"
	iofs "io/fs"
	"os"
	"strconv"
	"time"

	"furrow/checker"
)

const registerUsage = `usage: furrow register PLAN

Registers the plan: writes (or extends) its registration record beside it,
PLAN with its extension replaced by ".registration.json". The first entry
holds the plan's canonical hash, the time, the furrow version and the last
git commit of the plan file (empty outside a repository). When the plan has
changed since its last registration, a new entry is appended: the plan must
carry a new trial.version and an amendment for that version (date and
reason), and the entry records the previous entry's hash, so history cannot
be rewritten without showing. A plan with errors (see "furrow lint") is
refused. Registering an unchanged plan changes nothing. Prints the plan
hash and the chain of entries, oldest first.

The registration time is the system clock; SOURCE_DATE_EPOCH, which sets
the time of reproducible builds and of run records, is ignored here (and
register says so), since a registration time must say when the plan was
fixed. An entry dated before the previous one is refused: check the
machine's clock.

Examples:
  furrow register examples/soil-nematodes/plan.yaml

` + exitCodesHelp

var registerCommand = &command{
	name:    "register",
	summary: "register a plan (or an amendment) before the data are seen",
	usage:   registerUsage,
	run:     runRegister,
}

// runClock is the time of a run record: SOURCE_DATE_EPOCH when set (for
// reproducible records: run_at is inside the content hash), else the
// wall clock.
func (e *env) runClock() time.Time {
	if s := os.Getenv("SOURCE_DATE_EPOCH"); s != "" {
		if n, err := strconv.ParseInt(s, 10, 64); err == nil {
			return time.Unix(n, 0).UTC()
		}
	}
	return e.wallClock().UTC()
}

func runRegister(e *env, c *command, args []string) int {
	fs := newFlags(c)
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	if os.Getenv("SOURCE_DATE_EPOCH") != "" {
		fmt.Fprintln(e.stderr, "furrow register: SOURCE_DATE_EPOCH is set; it is ignored for registration times, which come from the system clock")
	}
	res, ds, err := checker.Register(pos[0], checker.RegisterOptions{Now: e.wallClock().UTC(), ToolVersion: toolVersion()})
	if errors.Is(err, checker.ErrPlanDoesNotLint) {
		e.writeFindings(e.stderr, ds)
		fmt.Fprintf(e.stderr, "furrow register: %s: the plan has errors; nothing was registered\n", e.rel(pos[0]))
		return exitFindings
	}
	if errors.Is(err, iofs.ErrNotExist) || errors.Is(err, iofs.ErrPermission) {
		// An input that cannot be read: exit 2, as the help says.
		return fail(e, c, err)
	}
	if err != nil {
		fmt.Fprintf(e.stderr, "furrow register: %v\n", err)
		return exitFindings
	}
	switch {
	case res.Unchanged:
		fmt.Fprintf(e.stdout, "%s: already registered as version %s (entry %d), nothing changed\n", e.rel(pos[0]), res.Entry.PlanVersion, res.Entry.Seq)
	case res.Amendment:
		fmt.Fprintf(e.stdout, "%s: amendment registered as version %s (entry %d) in %s\n", e.rel(pos[0]), res.Entry.PlanVersion, res.Entry.Seq, e.rel(res.Path))
	default:
		fmt.Fprintf(e.stdout, "%s: registered version %s in %s\n", e.rel(pos[0]), res.Entry.PlanVersion, e.rel(res.Path))
	}
	fmt.Fprintf(e.stdout, "plan hash %s\n", res.Entry.PlanHash)
	reg, _, err := checker.ReadRegistration(res.Path)
	if err != nil {
		fmt.Fprintf(e.stderr, "furrow register: %v\n", err)
		return exitFindings
	}
	printChain(e, reg)
	return exitOK
}

// printChain lists the registration chain, oldest entry first: sequence,
// plan version, time, the start of the entry hash, the link to the
// previous entry and the reason.
func printChain(e *env, reg *checker.Registration) {
	short := func(h string) string {
		if len(h) > len("sha256:")+12 {
			return h[:len("sha256:")+12]
		}
		if h == "" {
			return "-"
		}
		return h
	}
	fmt.Fprintln(e.stdout, "registration chain, oldest first:")
	for _, en := range reg.Entries {
		fmt.Fprintf(e.stdout, "  %d  version %s  registered %s  entry %s  previous %s  %s\n",
			en.Seq, en.PlanVersion, en.RegisteredAt, short(en.EntryHash), short(en.Previous), en.Reason)
	}
}
