package main

import (
	"fmt"

	"furrow/checker"
	"furrow/plan"
)

const explainUsage = `usage: furrow explain [--html] [--out FILE] [--replace] PLAN

Writes the plan out as the statistical-analysis-plan document a protocol
annex needs: identity and plan hash, objectives and hypotheses, the
experimental unit and design, the data and their checks, exclusions, each
endpoint's cascade in words ("if the Shapiro-Wilk test of the residuals
gives p < 0.05, the analysis moves to step 2"), multiplicity, margins and
amendments. The document carries the plan's canonical hash, so the
registered text and the executed plan can be shown to be the same.

Markdown goes to standard output unless --out is given; --html writes HTML
instead. With --out the format follows the file's extension (.html or
.htm: HTML; anything else: Markdown). An existing FILE is not replaced
unless --replace is given. A plan with errors is refused (run "furrow lint").

Flags:
  --html      write HTML instead of Markdown to standard output
  --out FILE  write the document to FILE
  --replace   allow --out to replace an existing file

Example:
  furrow explain --out sap.html examples/soil-nematodes/plan.yaml

` + exitCodesHelp

var explainCommand = &command{
	name:    "explain",
	summary: "write the plan out as an analysis-plan document",
	usage:   explainUsage,
	run:     runExplain,
}

func runExplain(e *env, c *command, args []string) int {
	fs := newFlags(c)
	asHTML := fs.Bool("html", false, "")
	out := fs.String("out", "", "")
	replace := fs.Bool("replace", false, "")
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	p, ds, err := checker.LoadPlan(pos[0])
	if err != nil {
		return fail(e, c, err)
	}
	ds = ds.Sort()
	if ds.HasErrors() {
		e.writeFindings(e.stderr, ds)
		errs, warns := counts(ds)
		fmt.Fprintf(e.stderr, "%s: %s; fix the plan before writing its document\n", e.rel(pos[0]), totals(errs, warns))
		return exitCode(ds)
	}
	doc := checker.Explain(p, plan.Hash(p))
	if *out != "" {
		if err := doc.WriteFile(*out, *replace); err != nil {
			return fail(e, c, err)
		}
		return exitOK
	}
	body := doc.Markdown()
	if *asHTML {
		body = doc.HTML()
	}
	if _, err := e.stdout.Write(body); err != nil {
		return fail(e, c, err)
	}
	return exitOK
}
