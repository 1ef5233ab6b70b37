package main

import (
	"fmt"
	"path/filepath"

	"furrow/checker"
)

const checkUsage = `usage: furrow check [--json] [--summary] [--max-data-size SIZE] [--allow-outside-data] PLAN [DATA]

Checks the data against the plan: first the plan itself (as "furrow lint"
does), then the data file the plan names (data.file, relative to the plan's
folder) or DATA when given. When DATA's extension (.csv, .xlsx) names
another format than the plan's, DATA is read in the format its extension
names; delimiter, decimal mark and missing-value codes still come from the
plan.

Reports, with the row a user sees in the file or spreadsheet and the
column: missing columns, values that are not numbers, values outside the
declared plausible range, factor levels the plan does not declare, declared
levels never seen, duplicate unit and time records, units whose treatment
or site changes between times, cells whose replication differs from the
plan's, and missing values per column.

When there are errors, the findings are followed by a summary of the
design as seen in the data (units per cell, missing values per column).
When there is no error, check prints a single line (after any warnings).

The plan's data.file must lie in the plan's folder (after symbolic
links); only regular files are read (not pipes or devices), up to the
size limit.

Flags:
  --json           print the result as one JSON object instead of text
  --summary        print the design summary even when there is no error
` + maxDataSizeHelp + `
` + allowOutsideDataHelp + `

Examples:
  furrow check examples/soil-nematodes/plan.yaml
  furrow check examples/soil-nematodes/plan.yaml examples/soil-nematodes/plots.xlsx

` + exitCodesHelp

var checkCommand = &command{
	name:    "check",
	summary: "check the data against a plan",
	usage:   checkUsage,
	run:     runCheck,
}

func runCheck(e *env, c *command, args []string) int {
	fs := newFlags(c)
	asJSON := fs.Bool(flagJSON, false, "")
	withSummary := fs.Bool(flagSummary, false, "")
	df := addDataFlags(fs, true)
	pos, ok, code := parse(e, c, fs, args, 1, 2)
	if !ok {
		return code
	}
	planPath, dataPath := pos[0], ""
	if len(pos) == 2 {
		dataPath = pos[1]
	}
	p, ds, err := checker.LoadPlan(planPath)
	if err != nil {
		return fail(e, c, err)
	}
	shown := dataPath
	if shown == "" && p != nil && p.Data.File != "" {
		shown = filepath.Join(filepath.Dir(planPath), filepath.FromSlash(p.Data.File))
	}
	var sum *checker.DesignSummary
	planErrs := ds.HasErrors()
	if !planErrs {
		t, dds, err := checker.ReadTableWith(p, dataPath, df.options())
		if err != nil {
			return fail(e, c, err)
		}
		ds = append(ds, dds...)
		if t != nil {
			cds, s := checker.CheckData(p, t)
			ds = append(ds, cds...)
			sum = s
		}
	}
	ds = ds.Sort()
	if *asJSON {
		r := e.newReport(c.name, planPath, shown, ds)
		r.Design = e.newDesign(sum)
		if err := writeJSON(e.stdout, r); err != nil {
			return fail(e, c, err)
		}
		return exitCode(ds)
	}
	e.writeFindings(e.stdout, ds)
	errs, warns := counts(ds)
	if errs > 0 || *withSummary {
		if sum != nil {
			if errs > 0 {
				fmt.Fprintln(e.stdout)
			}
			if err := sum.WriteText(e.stdout); err != nil {
				return fail(e, c, err)
			}
			fmt.Fprintln(e.stdout)
		}
	}
	if errs > 0 {
		where := shown // the totals name the file the errors are in
		if planErrs {
			where = planPath
		}
		fmt.Fprintf(e.stdout, "%s: %s\n", e.rel(where), totals(errs, warns))
		return exitCode(ds)
	}
	fmt.Fprintf(e.stdout, "%s: data match plan %s: %s\n", e.rel(shown), planName(p), dataShape(sum, warns))
	return exitOK
}

// dataShape counts what the data hold: "144 rows, 72 units, 0 warnings".
func dataShape(s *checker.DesignSummary, warns int) string {
	if s == nil {
		return plural(warns, "warning")
	}
	out := plural(s.Rows, "row")
	if s.UnitColumn != "" {
		out += ", " + plural(s.Units, "unit")
	}
	return out + ", " + plural(warns, "warning")
}
