package main

import (
	"cmp"
	"crypto/ed25519"
	"errors"
	"fmt"
	"os"

	"furrow/checker"
)

const runUsage = `usage: furrow run --out DIR [--unregistered] [--replace] [--sign KEY] [--max-data-size SIZE] [--allow-outside-data] PLAN [DATA]

Runs the registered plan on the final data (the plan's data.file, or DATA)
and writes the audit record DIR/audit.json: inputs with their hashes, every
excluded row and the rule that removed it, every executed step with its
model, checks (statistic, p, threshold, verdict) and the decision with the
plan line that caused it, the reported step's full results, and an
integrity hash. The analysis follows the plan's cascade exactly: a step is
accepted when all its checks pass, otherwise the plan's on-fail step is
run; a last step whose checks fail is reported with its assumptions unmet.

The plan must match its registration record (see "furrow register");
--unregistered runs anyway and marks the record as unregistered. Data
errors stop the run; data warnings are carried into the record. Inputs
are never modified. DIR must not exist unless --replace is given.

Flags:
  --out DIR        run directory to create (required)
  --unregistered   run without a matching registration; the record says so
  --replace        replace the record in an existing DIR
  --sign KEY       sign the record with this private key (see "furrow keygen")
` + maxDataSizeHelp + `
` + allowOutsideDataHelp + `

Examples:
  furrow run --out run1 examples/soil-nematodes/plan.yaml

` + exitCodesHelp

var runCommand = &command{
	name:    "run",
	summary: "run the registered analysis and write the audit record",
	usage:   runUsage,
	run:     runRun,
}

func runRun(e *env, c *command, args []string) int {
	fs := newFlags(c)
	out := fs.String("out", "", "")
	unreg := fs.Bool("unregistered", false, "")
	replace := fs.Bool("replace", false, "")
	sign := fs.String("sign", "", "")
	df := addDataFlags(fs, true)
	pos, ok, code := parse(e, c, fs, args, 1, 2)
	if !ok {
		return code
	}
	if *out == "" {
		return usageError(e, c, "--out DIR is required")
	}
	var key ed25519.PrivateKey
	if *sign != "" {
		b, err := os.ReadFile(*sign)
		if err != nil {
			return fail(e, c, err)
		}
		if key, err = checker.ParsePrivateKey(string(b)); err != nil {
			return fail(e, c, fmt.Errorf("%s: %w", e.rel(*sign), err))
		}
	}
	if _, err := os.Stat(*out); err == nil && !*replace {
		return fail(e, c, fmt.Errorf("%s exists; choose a new run directory or pass --replace", e.rel(*out)))
	}
	dataPath := ""
	if len(pos) == 2 {
		dataPath = pos[1]
	}
	res, err := checker.Run(checker.RunOptions{PlanPath: pos[0], DataPath: dataPath, OutDir: *out, Now: e.runClock(),
		Tool: checker.ToolInfo{Name: "furrow", Version: toolVersion(), Build: buildInfo()}, Unregistered: *unreg,
		Data: df.options()})
	var de *checker.DataError
	var pe *checker.PlanError
	switch {
	case errors.As(err, &de):
		e.writeFindings(e.stderr, de.Diagnostics)
		fmt.Fprintf(e.stderr, "furrow run: %v; nothing was run\n", err)
		return exitFindings
	case errors.As(err, &pe):
		e.writeFindings(e.stderr, pe.Diagnostics)
		fmt.Fprintf(e.stderr, "furrow run: %s: the plan has errors; nothing was run\n", e.rel(pos[0]))
		return exitFindings
	case errors.Is(err, checker.ErrNotRegistered):
		fmt.Fprintf(e.stderr, "furrow run: %v\n", err)
		return exitFindings
	case err != nil:
		return fail(e, c, err)
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return fail(e, c, err)
	}
	if err := checker.WriteRecord(*out, res, key); err != nil {
		return fail(e, c, err)
	}
	if err := checker.WriteReports(*out, res); err != nil {
		return fail(e, c, err)
	}
	for _, ep := range res.Endpoints {
		line := fmt.Sprintf("%s: %s (step %s)", ep.ID, ep.Status, ep.Reported)
		if ep.Reported == "" {
			// Nothing is reported (failed, stopped): say at which step the
			// cascade ended, and why.
			line = fmt.Sprintf("%s: %s", ep.ID, ep.Status)
			for i := len(ep.Steps) - 1; i >= 0; i-- {
				if s := ep.Steps[i]; s.Executed {
					line += fmt.Sprintf(" at step %s: %s", s.ID, cmp.Or(s.Error, s.Decision.Detail))
					break
				}
			}
		}
		fmt.Fprintln(e.stdout, line)
	}
	if res.Unregistered {
		fmt.Fprintln(e.stdout, "UNREGISTERED run: the record is marked as such")
	}
	fmt.Fprintf(e.stdout, "wrote %s/%s %s\n", e.rel(*out), checker.AuditFileName, res.Integrity.ContentHash)
	fmt.Fprintf(e.stdout, "wrote %s/%s, %s/%s and %s/%s/*.csv\n", e.rel(*out), checker.ReportHTMLName, e.rel(*out), checker.ReportMDName, e.rel(*out), checker.TablesDir)
	return exitOK
}

// buildInfo describes the build for the record (Go version).
func buildInfo() string {
	return goVersion()
}
