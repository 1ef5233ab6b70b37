package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"furrow/checker"
)

const simulateUsage = `usage: furrow simulate [--runs N] [--seed S] [--errors SHAPE] [--effect LEVEL=DELTA ...] [--json] PLAN

Runs the plan's cascades on data sets simulated from its declared design,
before any data exist, and prints how often each step is the one reported,
how often each check is not met, and how often each comparison is rejected
(the type I error under the null, the power under --effect), each with its
Monte Carlo standard error. A pre-test that switches between analyses
changes the error rates of the whole procedure; this shows by how much.

Each data set has the declared levels of every factor, design.replicates
units per treatment cell (per site), blocks filled in turn, a row per
repeat level and sub-sample. The response is a grand mean plus random
site, block and unit effects, the treatment shift and an error; a
response with min >= 0 that some step analyses on a log scale is made on
the log scale. Values stay inside the declared range. The defaults of the
model are printed with the results.

Flags:
  --runs N             number of simulated data sets (default 200)
  --seed S             seed of the generator (default 1); the same seed
                       gives the same output
  --errors SHAPE       error shape: normal (default), lognormal,
                       contaminated (10 % with 3 times the spread) or t3
  --effect LEVEL=DELTA shift the units of a treatment level by DELTA on the
                       generating scale (a log ratio on the log scale);
                       repeat for several levels; none: the null
  --json               print the results as JSON

Example:
  furrow simulate --runs 500 --effect Tavel=0.8 examples/wheat-varieties/plan.yaml

` + exitCodesHelp

var simulateCommand = &command{
	name:    "simulate",
	summary: "estimate the cascade's error rates and power on simulated data",
	usage:   simulateUsage,
	run:     runSimulate,
}

// effectFlags collects repeated --effect LEVEL=DELTA flags.
type effectFlags map[string]float64

// String is part of flag.Value; the flag has no printed default.
func (f effectFlags) String() string { return "" }

// Set parses one LEVEL=DELTA value (flag.Value).
func (f effectFlags) Set(s string) error {
	lev, num, ok := strings.Cut(s, "=")
	lev = strings.TrimSpace(lev)
	if !ok || lev == "" {
		return fmt.Errorf("want LEVEL=DELTA, got %q", s)
	}
	d, err := strconv.ParseFloat(strings.TrimSpace(num), 64)
	if err != nil || math.IsNaN(d) || math.IsInf(d, 0) {
		return fmt.Errorf("effect of %s: %q is not a number", lev, num)
	}
	if _, dup := f[lev]; dup {
		return fmt.Errorf("effect of %s given twice", lev)
	}
	f[lev] = d
	return nil
}

func runSimulate(e *env, c *command, args []string) int {
	fs := newFlags(c)
	runs := fs.Int("runs", checker.DefaultSimRuns, "")
	seed := fs.Uint64("seed", 1, "")
	shape := fs.String("errors", checker.SimNormal, "")
	effects := effectFlags{}
	fs.Var(effects, "effect", "")
	asJSON := fs.Bool(flagJSON, false, "")
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	if *runs < 1 || *runs > 1_000_000 {
		return usageError(e, c, fmt.Sprintf("--runs %d is outside 1 to 1000000", *runs))
	}
	p, ds, err := checker.LoadPlan(pos[0])
	if err != nil {
		return fail(e, c, err)
	}
	ds = ds.Sort()
	if ds.HasErrors() {
		e.writeFindings(e.stderr, ds)
		errs, warns := counts(ds)
		fmt.Fprintf(e.stderr, "%s: %s; fix the plan before simulating it\n", e.rel(pos[0]), totals(errs, warns))
		return exitFindings
	}
	res, err := checker.Simulate(p, checker.SimOptions{Runs: *runs, Seed: *seed, Errors: *shape, Effects: effects})
	if err != nil {
		return fail(e, c, err)
	}
	if *asJSON {
		if err := writeJSON(e.stdout, res); err != nil {
			return fail(e, c, err)
		}
		return exitOK
	}
	if err := checker.WriteSimulation(e.stdout, res); err != nil {
		return fail(e, c, err)
	}
	return exitOK
}
