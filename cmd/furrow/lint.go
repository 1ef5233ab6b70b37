package main

import (
	"fmt"

	"furrow/checker"
	"furrow/plan"
)

const lintUsage = `usage: furrow lint [--json] PLAN

Reads the analysis plan PLAN on its own and reports every problem: YAML
syntax, the plan schema (see "furrow schema"), and the rules that need the
whole plan, such as terms that name undeclared columns, a control level
that is not among the levels, fallback steps that do not form one chain,
a transform that does not suit the response's range, or repeated measures
with neither a random unit term nor a per-unit reduction.

Each finding is printed as
  FILE:LINE:COL: SEVERITY: SUMMARY [CODE]
with related positions indented below it, then a line with the totals.
When there is no error, lint prints a single line (after any warnings).

Flags:
  --json   print the result as one JSON object instead of text

Example:
  furrow lint examples/soil-nematodes/plan.yaml

` + exitCodesHelp

var lintCommand = &command{
	name:    "lint",
	summary: "check a plan on its own",
	usage:   lintUsage,
	run:     runLint,
}

func runLint(e *env, c *command, args []string) int {
	fs := newFlags(c)
	asJSON := fs.Bool(flagJSON, false, "")
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	path := pos[0]
	p, ds, err := checker.LoadPlan(path)
	if err != nil {
		return fail(e, c, err)
	}
	ds = ds.Sort()
	if *asJSON {
		if err := writeJSON(e.stdout, e.newReport(c.name, path, "", ds)); err != nil {
			return fail(e, c, err)
		}
		return exitCode(ds)
	}
	e.writeFindings(e.stdout, ds)
	errs, warns := counts(ds)
	if errs > 0 {
		fmt.Fprintf(e.stdout, "%s: %s\n", e.rel(path), totals(errs, warns))
		return exitCode(ds)
	}
	fmt.Fprintf(e.stdout, "%s: plan %s is sound: %s\n", e.rel(path), planName(p), planShape(p, warns))
	return exitOK
}

// unreadableCodes are the plan findings that mean the file is not a plan
// text at all (binary, oversized or empty): an input that cannot be read.
var unreadableCodes = map[string]bool{"not-text": true, "too-large": true, "empty": true}

// exitCode is 2 when a finding says the plan file cannot be read as a
// plan, 1 when the diagnostics hold another error, else 0.
func exitCode(ds plan.Diagnostics) int {
	for _, d := range ds {
		if d.Severity == plan.Error && unreadableCodes[d.Code] {
			return exitUsage
		}
	}
	if ds.HasErrors() {
		return exitFindings
	}
	return exitOK
}

// planName names a plan by trial id and version: "NEM-2026-03 v1.0".
func planName(p *plan.Plan) string {
	if p == nil {
		return "(unnamed)"
	}
	name := p.Trial.ID
	if name == "" {
		name = "(no id)"
	}
	if p.Trial.Version != "" {
		name += " v" + p.Trial.Version
	}
	return name
}

// planShape counts what a plan declares: "1 endpoint, 3 steps, 0 warnings".
func planShape(p *plan.Plan, warns int) string {
	steps := 0
	if p != nil {
		for _, ep := range p.Endpoints {
			steps += len(ep.Steps)
		}
	}
	n := 0
	if p != nil {
		n = len(p.Endpoints)
	}
	return fmt.Sprintf("%s, %s, %s", plural(n, "endpoint"), plural(steps, "step"), plural(warns, "warning"))
}
