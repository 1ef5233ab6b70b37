package main

import (
	"crypto/ed25519"
	"fmt"
	"os"
	"runtime"
	"sort"
	"strings"

	"furrow/checker"
)

const verifyUsage = `usage: furrow verify [--json] [--key PUB] [--plan PLAN] [--data DATA] DIR

Confirms a run: checks the record's integrity hash (and its signature,
which must be by PUB when --key is given), the plan against the record and
against its registration chain (registered before the run, no amendment
after it), the data file against its hash, then re-runs the analysis and
compares every number (relative tolerance 1e-9) and every decision
(exactly). Plan and data paths come from the record unless given.

Prints one line when there is no deviation; otherwise one line per
deviation with its code and the record field concerned, then the count
(informational deviations are listed but not counted).

Deviation codes:
  unregistered-run                  the run was made without a matching registration
  plan-changed-after-registration   the plan differs from the record or its registration, or the chain is broken
  amendment-after-data-lock         an amendment was registered after the data were analysed
  data-changed                      the data file differs from the one analysed
  record-edited                     the record's content hash or signature does not match
  results-differ                    the re-run gives a different number or decision
  step-not-declared                 the record holds a step the plan does not declare
  data-file-not-declared            the run analysed a file other than the plan's data.file (informational)
  tool-version-differs              another furrow version wrote the record (informational)

Flags:
  --json        print the report as JSON
  --key PUB     require a signature by this public key
  --plan PLAN   use this plan file instead of the recorded path
  --data DATA   use this data file instead of the recorded path

` + exitCodesHelp

var verifyCommand = &command{
	name:    "verify",
	summary: "re-run a recorded analysis and list any undeclared deviation",
	usage:   verifyUsage,
	run:     runVerify,
}

func runVerify(e *env, c *command, args []string) int {
	fs := newFlags(c)
	asJSON := fs.Bool(flagJSON, false, "")
	keyPath := fs.String("key", "", "")
	planPath := fs.String("plan", "", "")
	dataPath := fs.String("data", "", "")
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	var pub ed25519.PublicKey
	if *keyPath != "" {
		b, err := os.ReadFile(*keyPath)
		if err != nil {
			return fail(e, c, err)
		}
		if pub, err = checker.ParsePublicKey(string(b)); err != nil {
			return fail(e, c, fmt.Errorf("%s: %w", e.rel(*keyPath), err))
		}
	}
	rep, err := checker.Verify(checker.VerifyOptions{Dir: pos[0], PlanPath: *planPath, DataPath: *dataPath, PublicKey: pub,
		Tool: checker.ToolInfo{Name: "furrow", Version: toolVersion()}})
	if err != nil {
		return fail(e, c, err)
	}
	if *asJSON {
		if err := writeJSON(e.stdout, rep); err != nil {
			return fail(e, c, err)
		}
	} else if len(rep.Deviations) == 0 {
		fmt.Fprintf(e.stdout, "%s: no undeclared deviation\n", e.rel(pos[0]))
	} else {
		writeDeviations(e, pos[0], rep.Deviations)
	}
	if !rep.OK() {
		return exitFindings
	}
	return exitOK
}

func goVersion() string { return runtime.Version() }

// maxShownPerCode is how many deviations of one code the text output lists
// before it summarises the rest; --json lists all.
const maxShownPerCode = 6

// codeOrder is the order in which deviation codes are printed: what
// invalidates the record first, informational last.
var codeOrder = []checker.DeviationCode{
	checker.DevRecordEdited, checker.DevPlanChanged, checker.DevAmendmentAfterLock, checker.DevDataChanged,
	checker.DevUnregisteredRun, checker.DevStepNotDeclared, checker.DevResultsDiffer, checker.DevDataNotDeclared, checker.DevToolVersion,
}

// fieldWeight orders differing fields so that decisions and verdicts come
// before statistics, and the data behind figures last.
func fieldWeight(field string) int {
	switch {
	case strings.Contains(field, "decision") || strings.Contains(field, "verdict") ||
		strings.HasSuffix(field, ".status") || strings.HasSuffix(field, ".reported"):
		return 0
	case strings.Contains(field, ".checks["):
		return 1
	case strings.Contains(field, ".figures") || strings.Contains(field, ".observed"):
		return 3
	}
	return 2
}

// writeDeviations prints the deviations grouped by code, each group's
// most telling fields first, at most maxShownPerCode lines per code.
func writeDeviations(e *env, dir string, devs []checker.Deviation) {
	byCode := map[checker.DeviationCode][]checker.Deviation{}
	seen := map[string]bool{}
	for _, d := range devs {
		key := string(d.Code) + "\x00" + d.Field
		if seen[key] {
			continue
		}
		seen[key] = true
		byCode[d.Code] = append(byCode[d.Code], d)
	}
	n, info := 0, 0
	for _, code := range codeOrder {
		list := byCode[code]
		sort.SliceStable(list, func(i, j int) bool { return fieldWeight(list[i].Field) < fieldWeight(list[j].Field) })
		for i, d := range list {
			if code.Informational() {
				info++
			} else {
				n++
			}
			if i == maxShownPerCode {
				fmt.Fprintf(e.stdout, "%s: and %d more fields (all of them with --json)\n", code, len(list)-maxShownPerCode)
			}
			if i >= maxShownPerCode {
				continue
			}
			where := d.Field
			if where == "" {
				where = "-"
			}
			line := fmt.Sprintf("%s: %s: %s", d.Code, where, d.Summary)
			if d.Recorded != "" || d.Now != "" {
				line += fmt.Sprintf(" (recorded %s, now %s)", d.Recorded, d.Now)
			}
			fmt.Fprintln(e.stdout, line)
		}
	}
	if n == 0 {
		fmt.Fprintf(e.stdout, "%s: no undeclared deviation (%d informational)\n", e.rel(dir), info)
		return
	}
	fmt.Fprintf(e.stdout, "%s: %s\n", e.rel(dir), plural(n, "deviation"))
}
