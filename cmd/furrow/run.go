package main

import (
	"cmp"
	"crypto/ed25519"
	"errors"
	"fmt"
	"strings"

	"furrow/checker"
)

const runUsage = `usage: furrow run --out DIR [--unregistered] [--replace] [--sign KEY] [--max-data-size SIZE] [--allow-outside-data] PLAN [DATA]

Runs the registered plan on the final data (the plan's data.file, or DATA)
and writes the run folder DIR: the audit record DIR/audit.json with inputs with their hashes, every
excluded row and the rule that removed it, every executed step with its
model, checks (statistic, p, threshold, verdict) and the decision with the
plan line that caused it, the reported step's full results, and an
integrity hash. The analysis follows the plan's cascade exactly: a step is
accepted when all its checks pass, otherwise the plan's on-fail step is
run; a last step whose checks fail is reported with its assumptions unmet.

The plan must match its registration record (see "furrow register");
--unregistered runs anyway and marks the record as unregistered. Data
errors stop the run; data warnings are carried into the record. Inputs
are never modified.

DIR is written whole or not at all: the reports, the tables and the record
(last) go into a new folder beside it, .DIR.furrow-partial-*, which is
renamed to DIR when complete. DIR must not exist, and is claimed in one
step when the run is complete, so two runs into it cannot both succeed.
--replace replaces a run folder whole: the old one is renamed aside
(.DIR.furrow-old-*), the new one renamed in, the old one removed. A run
that is interrupted may leave these folders beside DIR; they are never
run folders (verify refuses them) and can be deleted.

Flags:
  --out DIR        run directory to create (required)
  --unregistered   run without a matching registration; the record says so
  --replace        replace the run folder DIR, whole, if it exists
  --sign KEY       sign the record with this private key (see "furrow keygen");
                   a key file that its group or others may read is refused
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
		var err error
		if key, err = checker.ReadPrivateKeyFile(*sign); err != nil {
			return fail(e, c, err)
		}
	}
	if err := checker.CheckRunDir(*out, *replace); err != nil {
		return failRunDir(e, c, err)
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
	if err := checker.WriteRun(*out, res, key, *replace); err != nil {
		return failRunDir(e, c, err)
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
	e.writeLostUnits(res)
	if res.Unregistered {
		fmt.Fprintln(e.stdout, "UNREGISTERED run: the record is marked as such")
	}
	fmt.Fprintf(e.stdout, "wrote %s/%s %s\n", e.rel(*out), checker.AuditFileName, res.Integrity.ContentHash)
	fmt.Fprintf(e.stdout, "wrote %s/%s, %s/%s and %s/%s/*.csv\n", e.rel(*out), checker.ReportHTMLName, e.rel(*out), checker.ReportMDName, e.rel(*out), checker.TablesDir)
	return exitOK
}

// maxLostListed is the most lost units run lists on the terminal; the
// record and the report list them all.
const maxLostListed = 5

// writeLostUnits says, after a run that went on with lost units, how many
// were lost, and lists the first few with their cell and block.
func (e *env) writeLostUnits(res *checker.Result) {
	n := len(res.LostUnits)
	if n == 0 {
		return
	}
	fmt.Fprintf(e.stdout, "%s lost, listed in the record and the report; the analysis went on with the units left, as the plan's least-units declares\n", plural(n, "unit"))
	for i, l := range res.LostUnits {
		if i == maxLostListed {
			fmt.Fprintf(e.stdout, "  and %d more\n", n-maxLostListed)
			break
		}
		var parts []string
		if res.Design != nil {
			for k, c := range res.Design.CellColumns {
				if k < len(l.Cell) {
					parts = append(parts, fmt.Sprintf("%s %q", c, l.Cell[k]))
				}
			}
		}
		if l.Block != "" {
			parts = append(parts, fmt.Sprintf("block %q", l.Block))
		}
		why := "no row in the data"
		if l.Rule != "" {
			why = fmt.Sprintf("unit %q, removed by exclusion %q", l.Unit, l.Rule)
		}
		fmt.Fprintf(e.stdout, "  %s: %s\n", strings.Join(parts, ", "), why)
	}
}

// failRunDir prints an error about the run folder, its path relative to
// the working folder.
func failRunDir(e *env, c *command, err error) int {
	var ee *checker.ExistsError
	if errors.As(err, &ee) {
		rel := *ee
		rel.Dir = e.rel(ee.Dir)
		err = &rel
	}
	return fail(e, c, err)
}

// buildInfo describes the build for the record (Go version).
func buildInfo() string {
	return goVersion()
}
