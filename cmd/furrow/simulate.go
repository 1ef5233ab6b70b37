package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"furrow/checker"
	"furrow/checker/method"
	"furrow/plan"
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
	p, ds, err := plan.Load(pos[0], method.Default)
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
	if err := writeSimulation(e.stdout, res); err != nil {
		return fail(e, c, err)
	}
	return exitOK
}

// pct formats a rate and its Monte Carlo standard error in percent.
func pct(r checker.SimRate) string {
	if r.Of == 0 {
		return "-"
	}
	return fmt.Sprintf("%.1f%% ± %.1f", 100*r.Rate, 100*r.SE)
}

// tests says how many comparisons and term tests a family holds.
func tests(n int) string {
	if n == 1 {
		return "1 comparison or term test"
	}
	return strconv.Itoa(n) + " comparisons and term tests"
}

// num formats a model parameter compactly.
func num(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }

// writeSimulation prints the results as text.
func writeSimulation(w io.Writer, r *checker.SimResult) error {
	var b strings.Builder
	truth := "no treatment effect (the null)"
	if len(r.Effects) > 0 {
		var parts []string
		for _, ef := range r.Effects {
			parts = append(parts, ef.Level+" "+num(ef.Delta))
		}
		truth = "treatment shifts " + strings.Join(parts, ", ")
	}
	fmt.Fprintf(&b, "%s: %d simulated data sets of %d rows, seed %d, %s errors, %s\n", r.Trial, r.Runs, r.Rows, r.Seed, r.Errors, truth)
	for _, m := range r.Responses {
		fmt.Fprintf(&b, "model of %s: %s scale, mean %s, residual sd %s", m.Column, m.Scale, num(m.Mean), num(m.ResidualSD))
		for _, sd := range []struct {
			name string
			v    float64
		}{{"site", m.SiteSD}, {"block", m.BlockSD}, {"unit", m.UnitSD}} {
			if sd.v > 0 {
				fmt.Fprintf(&b, ", %s sd %s", sd.name, num(sd.v))
			}
		}
		if m.GroupSD > 0 {
			fmt.Fprintf(&b, ", sd %s for each of %s", num(m.GroupSD), strings.Join(m.Groups, ", "))
		}
		if m.Redrawn > 0 {
			fmt.Fprintf(&b, "; %.2f%% of errors redrawn to stay in range", 100*m.Redrawn)
		}
		b.WriteString("\n")
	}
	fmt.Fprintf(&b, "rates are %% of runs ± Monte Carlo standard error (points); check rates are of the runs that ran the check\n")
	for _, ep := range r.Endpoints {
		fmt.Fprintf(&b, "\nendpoint %s (%s, alpha %s)\n", ep.ID, ep.Response, num(ep.Alpha))
		tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
		fmt.Fprintf(tw, "  step\tmodel\treached\treported\tchecks not met\n")
		for i, s := range ep.Steps {
			var checks []string
			for _, ck := range s.Checks {
				t := ck.Test + " " + pct(ck.NotMet)
				if ck.Errors > 0 {
					t += fmt.Sprintf(" (%d not computed)", ck.Errors)
				}
				checks = append(checks, t)
			}
			rep := pct(s.Reported)
			if s.Unmet.Count > 0 {
				rep += fmt.Sprintf(" (%s unmet)", pct(s.Unmet))
			}
			if s.FitFailed.Count > 0 {
				checks = append(checks, fmt.Sprintf("fit failed %s", pct(s.FitFailed)))
			}
			fmt.Fprintf(tw, "  %d %s\t%s\t%s\t%s\t%s\n", i+1, s.ID, s.Model, pct(s.Reached), rep, strings.Join(checks, "; "))
		}
		if ep.Failed.Count > 0 {
			fmt.Fprintf(tw, "  no step reported\t\t\t%s\t\n", pct(ep.Failed))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		if len(ep.Hypotheses) > 0 {
			b.WriteString("\n")
			tw = tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
			fmt.Fprintf(tw, "  hypothesis\ttrue delta\trejected\n")
			for _, h := range ep.Hypotheses {
				what := h.Kind
				if h.Sides != "" {
					what += ", " + h.Sides
				}
				if h.Adjust != "" {
					what += ", " + h.Adjust
				}
				extra := ""
				if h.Assessable.Count < h.Assessable.Of {
					extra = fmt.Sprintf("; assessable %s", pct(h.Assessable))
				}
				fmt.Fprintf(tw, "  %s (%s)\t\tany %s%s\n", h.ID, what, pct(h.Any), extra)
				for _, cm := range h.Comparisons {
					d := num(cm.Delta)
					if h.Kind == plan.HypTerm {
						d = "0"
						if !cm.TrueNull {
							d = "not 0"
						}
					}
					fmt.Fprintf(tw, "    %s\t%s\t%s\n", cm.Label, d, pct(cm.Rejected))
				}
			}
			if err := tw.Flush(); err != nil {
				return err
			}
		}
		b.WriteString("\n")
		switch {
		case ep.FamilyWiseOf == 0:
			b.WriteString("No comparison or term test of this endpoint has a zero true effect, so none can be falsely rejected.\n")
		case len(r.Effects) == 0:
			fmt.Fprintf(&b, "Under the null, the probability of at least one false rejection across the %s of %s (the family-wise error of the whole cascade; equivalence and non-inferiority not counted) is %s points, against alpha %s.\n",
				tests(ep.FamilyWiseOf), ep.ID, pct(ep.FamilyWise), num(ep.Alpha))
		default:
			fmt.Fprintf(&b, "The probability of at least one false rejection among the %s of %s whose true effect is zero (equivalence and non-inferiority not counted) is %s points, against alpha %s.\n",
				tests(ep.FamilyWiseOf), ep.ID, pct(ep.FamilyWise), num(ep.Alpha))
		}
	}
	// tabwriter pads empty last cells; no line ends in spaces
	lines := strings.Split(b.String(), "\n")
	for i, l := range lines {
		lines[i] = strings.TrimRight(l, " ")
	}
	_, err := io.WriteString(w, strings.Join(lines, "\n"))
	return err
}
