package main

import (
	"crypto/ed25519"
	"errors"
	"fmt"
	"runtime"
	"sort"
	"strings"

	"furrow/plan"

	"furrow/checker"
)

const verifyUsage = `usage: furrow verify [--json] [--key PUB] [--plan PLAN] [--data DATA] [--max-data-size SIZE] DIR

Confirms a run: checks the record's integrity hash (and its signature,
which must be by PUB when --key is given), every file of the run folder
against the SHA-256 the record lists for it, the plan against the record and
against its registration chain (registered before the run, no amendment
after it), the data file against its hash, then re-runs the analysis and
compares every number (relative tolerance 1e-9) and every decision
(exactly). The plan is looked for where the record says it was seen from
DIR, the data where the record puts them beside the plan; --plan and
--data say where they are instead (for a run folder moved without them).
A plan or data file that is not there stops verify (exit 2).

Prints one line when there is no deviation; otherwise one line per
deviation with its code and the record field concerned, then the count
(informational deviations are listed but not counted).

Deviation codes:
  unregistered-run                  the run was made without a matching registration
  plan-changed-after-registration   the plan differs from the record or its registration, or the chain is broken
  amendment-after-data-lock         an amendment was registered, or is dated, after the data were analysed
  data-changed                      the data file differs from the one analysed
  record-edited                     the record's content hash or signature does not match
  report-edited                     a report or table file differs from its hash in the record, is missing, or is not the run's
  results-differ                    the re-run gives a different number or decision
  step-not-declared                 the record holds a step the plan does not declare
  data-file-not-declared            the run analysed a file other than the plan's data.file (informational)
  plan-file-reformatted             the plan file's bytes differ, not the plan: comments or layout only (informational)
  plan-file-differs                 an unsigned record names another plan file than the one present (same plan hash): the recorded file hash may be the edit
  amendment-time-unchecked          an unsigned record: an amendment's date cannot be checked against its unprotected run time (informational)
  tool-version-differs              another furrow version or build wrote the record (informational)

Flags:
  --json        print the report as JSON
  --key PUB     require a signature by this public key
  --plan PLAN   the plan file, when it is not where the record puts it
  --data DATA   the data file, when it is not where the record puts it
  --max-data-size SIZE
                largest data file read, and for a workbook the most
                unpacked from it: bytes, or a number with kB, MB, GB
                (powers of 1000) or KiB, MiB, GiB (powers of 1024);
                default 2GiB
  --max-unpack-ratio N
                how many times its packed size a workbook part of more
                than 10 MiB may unpack to; default 100

` + verifyExitCodes

// verifyExitCodes are the exit codes as verify uses them.
const verifyExitCodes = `Exit codes (verify's own):
  0  no deviation, or informational ones only
  1  deviations: the record, the plan, its registration or the data differ
     from what the run recorded, or the re-run gives other results
  2  usage error, a record that cannot be read, or a plan or data file that
     cannot be found where the record says (point verify at them with
     --plan and --data)
`

var verifyCommand = &command{
	name:      "verify",
	summary:   "re-run a recorded analysis and list any undeclared deviation",
	usage:     verifyUsage,
	exitCodes: verifyExitCodes,
	run:       runVerify,
}

func runVerify(e *env, c *command, args []string) int {
	fs := newFlags(c)
	asJSON := fs.Bool(flagJSON, false, "")
	keyPath := fs.String("key", "", "")
	planPath := fs.String("plan", "", "")
	dataPath := fs.String("data", "", "")
	df := addDataFlags(fs, false)
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	var pub ed25519.PublicKey
	if *keyPath != "" {
		b, err := plan.ReadFile(*keyPath, checker.MaxKeySize)
		if err != nil {
			return fail(e, c, fmt.Errorf("reading public key %s: %w", e.rel(*keyPath), err))
		}
		if pub, err = checker.ParsePublicKey(string(b)); err != nil {
			return fail(e, c, fmt.Errorf("%s: %w", e.rel(*keyPath), err))
		}
	}
	rep, err := checker.Verify(checker.VerifyOptions{Dir: pos[0], PlanPath: *planPath, DataPath: *dataPath, PublicKey: pub,
		Tool: checker.ToolInfo{Name: "furrow", Version: toolVersion(), Build: buildInfo()}, MaxDataSize: df.options().MaxSize, MaxUnpackRatio: df.options().MaxUnpackRatio})
	var missing *checker.MissingInputError
	if errors.As(err, &missing) {
		fmt.Fprintf(e.stderr, "furrow verify: %s\n", missingText(e, missing, *planPath, *dataPath))
		return exitUsage
	}
	if err != nil {
		return fail(e, c, err)
	}
	switch {
	case *asJSON:
		if err := writeJSON(e.stdout, rep); err != nil {
			return fail(e, c, err)
		}
	case len(rep.Deviations) == 0:
		writeSignature(e, pos[0], rep.Signature)
		fmt.Fprintf(e.stdout, "%s: no undeclared deviation\n", e.rel(pos[0]))
	default:
		writeSignature(e, pos[0], rep.Signature)
		writeDeviations(e, pos[0], rep.Deviations)
	}
	if !rep.OK() {
		return exitFindings
	}
	return exitOK
}

// missingText says which input of a run was not found, where it was
// looked for, and which flags point verify at it. planFlag and dataFlag
// are the values of --plan and --data.
func missingText(e *env, m *checker.MissingInputError, planFlag, dataFlag string) string {
	dir := e.rel(m.Dir)
	switch {
	case m.Plan != "" && planFlag != "":
		return fmt.Sprintf("%s: no plan file %s (given with --plan)", dir, e.rel(m.Plan))
	case m.Data != "" && dataFlag != "":
		return fmt.Sprintf("%s: no data file %s (given with --data)", dir, e.rel(m.Data))
	case m.Plan != "" && m.DataUnknown:
		return fmt.Sprintf("%s: the record's plan and data are not where it puts them (no file %s); if the run folder was moved without them, point verify at them with --plan PLAN and --data DATA", dir, e.rel(m.Plan))
	case m.Plan != "":
		return fmt.Sprintf("%s: the record's plan is not where it puts it (no file %s); if it was moved, point verify at it with --plan PLAN", dir, e.rel(m.Plan))
	}
	return fmt.Sprintf("%s: the record's data are not where it puts them (no file %s); if they were moved, point verify at them with --data DATA", dir, e.rel(m.Data))
}

// writeSignature prints whether the record is signed and by which key,
// or that it is not and what that means.
func writeSignature(e *env, dir string, s *checker.SignatureInfo) {
	switch {
	case s == nil:
	case !s.Signed:
		fmt.Fprintf(e.stdout, "%s: %s\n", e.rel(dir), checker.UnsignedNotice)
	case s.Valid && s.KeyGiven:
		fmt.Fprintf(e.stdout, "%s: signed by key %s (%s), the key given with --key\n", e.rel(dir), s.Key, s.Algorithm)
	case s.Valid:
		fmt.Fprintf(e.stdout, "%s: signed by key %s (%s); give --key with the signer's public key to require it\n", e.rel(dir), s.Key, s.Algorithm)
	default:
		key := s.Key
		if key == "" {
			key = "that cannot be read"
		}
		fmt.Fprintf(e.stdout, "%s: carries a signature by key %s that does not hold for this record\n", e.rel(dir), key)
	}
}

func goVersion() string { return runtime.Version() }

// maxShownPerCode is how many deviations of one code the text output lists
// before it summarises the rest; --json lists all.
const maxShownPerCode = 6

// codeOrder is the order in which deviation codes are printed: what
// invalidates the record first, informational last.
var codeOrder = []checker.DeviationCode{
	checker.DevRecordEdited, checker.DevReportEdited, checker.DevPlanChanged, checker.DevAmendmentAfterLock, checker.DevDataChanged,
	checker.DevUnregisteredRun, checker.DevStepNotDeclared, checker.DevResultsDiffer, checker.DevPlanFileDiffers, checker.DevDataNotDeclared, checker.DevPlanReformatted, checker.DevAmendmentUnchecked, checker.DevToolVersion,
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
			if d.Recorded != "" && d.Now != "" && d.Recorded != d.Now {
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
