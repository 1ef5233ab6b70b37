package verify

import (
	"bytes"
	"crypto/ed25519"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"furrow/checker/engine"
	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// DeviationCode is a stable code of a kind of deviation found by Verify.
type DeviationCode string

// Deviation vocabulary. Codes are stable; they are what --json prints.
const (
	// DevUnregisteredRun: the record says the run was not checked against a registration.
	DevUnregisteredRun DeviationCode = "unregistered-run"
	// DevPlanChanged: the plan differs from the one recorded, or from its
	// registration, or the registration chain is broken or postdates the run.
	DevPlanChanged DeviationCode = "plan-changed-after-registration"
	// DevAmendmentAfterLock: a registration entry was added after the run
	// (the data were analysed before the amendment was registered), or an
	// amendment the run was made under is dated after the day of the run.
	DevAmendmentAfterLock DeviationCode = "amendment-after-data-lock"
	// DevDataChanged: the data file's hash differs from the recorded one.
	DevDataChanged DeviationCode = "data-changed"
	// DevRecordEdited: the content hash or the signature does not match.
	DevRecordEdited DeviationCode = "record-edited"
	// DevReportEdited: a file of the run folder (report, table) differs
	// from the SHA-256 the record lists for it, is missing, or is in the
	// folder without being one of the files the run wrote.
	DevReportEdited DeviationCode = "report-edited"
	// DevResultsDiffer: re-running the analysis gives a different number or decision.
	DevResultsDiffer DeviationCode = "results-differ"
	// DevStepNotDeclared: the record contains a step the plan does not declare.
	DevStepNotDeclared DeviationCode = "step-not-declared"
	// DevToolVersion: the record was made by another tool version (informational).
	DevToolVersion DeviationCode = "tool-version-differs"
	// DevDataNotDeclared: the run analysed a data file other than the
	// plan's data.file. Informational: a plan declares no data hash that
	// could hold another file to the registered data, so what was
	// analysed is only shown (its hash is still checked, see DevDataChanged).
	DevDataNotDeclared DeviationCode = "data-file-not-declared"
)

// DevAmendmentUnchecked: the record is not signed, so its run time is
// covered by nothing, and that an amendment the run was made under came
// before the data were analysed rests on that unprotected time.
// Informational: it cannot be checked, and verify says so.
const DevAmendmentUnchecked DeviationCode = "amendment-time-unchecked"

// DevPlanReformatted: the plan file's bytes differ from the file that was
// run but the plan does not: its canonical hash is the same (comments or
// layout only). Informational: the plan hash is what is registered.
const DevPlanReformatted DeviationCode = "plan-file-reformatted"

// Informational reports whether the code does not by itself fail verification.
func (c DeviationCode) Informational() bool {
	return c == DevToolVersion || c == DevDataNotDeclared || c == DevPlanReformatted || c == DevAmendmentUnchecked
}

// Deviation is one finding of Verify.
type Deviation struct {
	Code DeviationCode `json:"code"`
	// Field is the record field concerned, as a path like
	// "endpoints[0].steps[1].checks[0].p"; empty when the finding is about a file.
	Field string `json:"field"`
	// Recorded and Now are the recorded value and the value found now (when they apply).
	Recorded string `json:"recorded"`
	Now      string `json:"now"`
	Summary  string `json:"summary"`
}

// VerifyOptions are the inputs of Verify.
type VerifyOptions struct {
	// Dir is the run directory (or the audit.json path).
	Dir string
	// PlanPath and DataPath override the paths in the record ("" = from the record).
	PlanPath, DataPath string
	// PublicKey, when set, requires a signature by that key.
	PublicKey ed25519.PublicKey
	// Tool is the running tool, to compare versions.
	Tool record.ToolInfo
	// RelTol is the relative tolerance for re-computed numbers (0 = DefaultRelTol).
	RelTol float64
	// MaxDataSize is the largest data file read, in bytes (0 =
	// table.DefaultMaxSize).
	MaxDataSize int64
	// MaxUnpackRatio is the unpack ratio limit on workbook parts (0 =
	// table.DefaultMaxUnpackRatio).
	MaxUnpackRatio int
}

// MissingInputError is returned by Verify when the plan or the data file
// is not where the record puts them (plan_location from the run
// directory, inputs.data_path from the plan's folder) or where the options
// say: typically a run directory moved without its inputs. Nothing is
// compared then; VerifyOptions.PlanPath and DataPath point Verify at them.
type MissingInputError struct {
	// Dir is the run directory.
	Dir string
	// Plan and Data are the paths looked at and not found; "" for one
	// that was found or not looked for.
	Plan, Data string
	// DataUnknown is true when the data could not be looked for: they are
	// found from the plan's folder, and the plan was not found.
	DataUnknown bool
}

// Error names what is missing and the options that point at it.
func (e *MissingInputError) Error() string {
	var miss, opts []string
	if e.Plan != "" {
		miss, opts = append(miss, "no plan at "+e.Plan), append(opts, "PlanPath")
	}
	if e.Data != "" {
		miss = append(miss, "no data at "+e.Data)
	}
	if e.Data != "" || e.DataUnknown {
		opts = append(opts, "DataPath")
	}
	return fmt.Sprintf("%s: %s (give %s)", e.Dir, strings.Join(miss, ", "), strings.Join(opts, " and "))
}

// DefaultRelTol is the tolerance verify uses for floating-point numbers:
// the recorded a and the re-computed b match when they have the same sign
// and |a-b| <= RelTol*max(|a|,|b|), a relative comparison that works at
// every scale (a response measured around 1e-11 is held to the same nine
// digits as one around 1e3). There is no absolute floor, except that a
// recorded zero must be re-computed as zero (|b| <= 1e-300). Integers,
// strings, decisions and counts are compared exactly.
const DefaultRelTol = 1e-9

// VerifyReport is the outcome of Verify.
type VerifyReport struct {
	Record string `json:"record"`
	// Signature says whether the record is signed and by which key; nil
	// when the record could not be read as a record.
	Signature  *SignatureInfo `json:"signature"`
	Deviations []Deviation    `json:"deviations"`
}

// SignatureInfo says whether a record is signed, by which key, and
// whether the signature holds.
type SignatureInfo struct {
	// Signed is true when the record carries a signature.
	Signed bool `json:"signed"`
	// Algorithm is the signature's algorithm ("ed25519").
	Algorithm string `json:"algorithm"`
	// Key is the fingerprint of the signer's public key (record.Fingerprint:
	// "sha256:" and 16 hex digits); empty when the key cannot be read.
	Key string `json:"key"`
	// Valid is true when the signature holds for the record's content
	// hash and run time, and the content matches that hash.
	Valid bool `json:"valid"`
	// KeyGiven is true when the signer's key is VerifyOptions.PublicKey.
	KeyGiven bool `json:"key_given"`
}

// OK reports whether no deviation other than informational ones was found.
func (v *VerifyReport) OK() bool {
	for _, d := range v.Deviations {
		if !d.Code.Informational() {
			return false
		}
	}
	return true
}

// Verify checks a run directory: the record's integrity hash and signature,
// the plan against the record and the registration chain, the data file
// against its hash, and re-runs the analysis to compare every number and
// decision. Plan positions (file:line:col) are compared by the plan data
// path each record's plan_paths gives them, not by their text, so that an
// edit or amendment that only moves lines is not a results difference.
// The error is for problems that stop the check itself (an unreadable
// record, a *MissingInputError); deviations are in the report.
func Verify(opt VerifyOptions) (*VerifyReport, error) {
	rep, err := check(opt)
	if rep != nil {
		plainPairs(rep)
	}
	return rep, err
}

// check is Verify before the deviations' pairs are made plain.
func check(opt VerifyOptions) (*VerifyReport, error) {
	recPath := opt.Dir
	dir := opt.Dir
	if st, err := os.Stat(recPath); err == nil && st.IsDir() {
		recPath = filepath.Join(recPath, record.AuditFileName)
	} else {
		dir = filepath.Dir(recPath)
	}
	if err := notScratch(dir); err != nil {
		return nil, err
	}
	raw, err := plan.ReadFile(recPath, record.MaxRecordSize)
	if err != nil {
		return nil, fmt.Errorf("reading audit record %s: %w", recPath, err)
	}
	rep := &VerifyReport{Record: filepath.ToSlash(recPath), Deviations: []Deviation{}}
	add := func(code DeviationCode, field, rec, now, summary string) {
		rep.Deviations = append(rep.Deviations, Deviation{Code: code, Field: field, Recorded: rec, Now: now, Summary: summary})
	}
	if err := record.ValidateRecord(raw); err != nil {
		add(DevRecordEdited, "", "", "", err.Error())
		return rep, nil
	}
	var rec record.Result
	if err := json.Unmarshal(raw, &rec); err != nil {
		add(DevRecordEdited, "", "", "", "the record cannot be decoded: "+err.Error())
		return rep, nil
	}
	// 1. Integrity.
	h, err := record.ContentHash(raw)
	if err != nil {
		return nil, err
	}
	if h != rec.Integrity.ContentHash {
		add(DevRecordEdited, "integrity.content_hash", rec.Integrity.ContentHash, h, "the record's content does not match its hash: it was edited after it was written")
	}
	rep.Signature = &SignatureInfo{}
	if sig := rec.Integrity.Signature; sig != nil {
		rep.Signature.Signed, rep.Signature.Algorithm = true, sig.Algorithm
		if pub, err := record.ParsePublicKey(sig.PublicKey); err == nil {
			rep.Signature.Key = record.Fingerprint(pub)
			rep.Signature.KeyGiven = opt.PublicKey != nil && pub.Equal(opt.PublicKey)
		}
		if err := record.VerifySignature(sig, rec.Integrity.ContentHash, rec.RunAt, opt.PublicKey); err != nil {
			add(DevRecordEdited, "integrity.signature", "", "", err.Error())
		} else {
			rep.Signature.Valid = h == rec.Integrity.ContentHash
		}
	} else if opt.PublicKey != nil {
		add(DevRecordEdited, "integrity.signature", "", "", "the record is not signed, but a public key was given")
	}
	verifyFiles(dir, &rec, add)
	if rec.Unregistered {
		add(DevUnregisteredRun, "unregistered", "", "", "the run was made without a matching registration")
	}
	if !rec.Inputs.DataAsDeclared() {
		add(DevDataNotDeclared, "inputs.data_path", "", "", fmt.Sprintf("the analysis ran on %s, not on the plan's data.file %s (informational: no data hash is registered to hold another file to)",
			rec.Inputs.DataPath, rec.Inputs.DataDeclared))
	}
	if rec.Tool.Version != opt.Tool.Version {
		add(DevToolVersion, "tool.version", rec.Tool.Version, opt.Tool.Version, "the record was written by another furrow version")
	}
	if opt.Tool.Name != "" && rec.Tool.Name != opt.Tool.Name {
		add(DevToolVersion, "tool.name", rec.Tool.Name, opt.Tool.Name, "the record names another program than the one checking it")
	}
	if opt.Tool.Build != "" && rec.Tool.Build != opt.Tool.Build {
		add(DevToolVersion, "tool.build", rec.Tool.Build, opt.Tool.Build, "the record was written by another build of furrow")
	}
	// 2. Plan and data files.
	// The plan is where the record says it was seen from the run directory
	// (plan_location, a hint outside the content hash); the data and the
	// registration are relative to the plan's folder, as recorded.
	planPath := opt.PlanPath
	if planPath == "" {
		planPath = filepath.Join(dir, filepath.FromSlash(rec.PlanLocation))
	}
	dataPath := opt.DataPath
	if dataPath == "" {
		dataPath = filepath.Join(filepath.Dir(planPath), filepath.FromSlash(rec.Inputs.DataPath))
	}
	// A missing plan or data file is not evidence of a change: it stops
	// the check, and the error says how to point verify at them.
	missing := &MissingInputError{Dir: filepath.ToSlash(dir)}
	if _, err := os.Stat(planPath); errors.Is(err, fs.ErrNotExist) {
		missing.Plan = filepath.ToSlash(filepath.Clean(planPath))
		if opt.DataPath == "" {
			missing.DataUnknown = true
		} else if _, err := os.Stat(dataPath); errors.Is(err, fs.ErrNotExist) {
			missing.Data = filepath.ToSlash(filepath.Clean(dataPath))
		}
		return nil, missing
	} else if err != nil {
		return nil, fmt.Errorf("reading plan: %w", err)
	}
	dataRaw, err := readData(dataPath, opt.MaxDataSize)
	if errors.Is(err, fs.ErrNotExist) {
		missing.Data = filepath.ToSlash(filepath.Clean(dataPath))
		return nil, missing
	} else if err != nil {
		return nil, err
	}
	if got := record.SHA256Hex(dataRaw); got != rec.Inputs.DataFileSHA256 {
		add(DevDataChanged, "inputs.data_file_sha256", rec.Inputs.DataFileSHA256, got, "the data file differs from the one analysed")
	}
	// 3. Registration chain (read fresh, next to the plan).
	if !rec.Unregistered {
		verifyRegistration(planPath, &rec, add)
	} else if ref := rec.Inputs.Registration; ref != nil {
		// An unregistered run may name a registration it did not match;
		// the record's copy of it must still be the file's.
		if reg, raw, err := record.ReadRegistration(record.RegistrationPath(planPath)); err == nil && len(reg.CheckChain()) == 0 {
			if found := entryIndex(reg, ref.Head); found >= 0 {
				compareRegistrationCopy(reg, raw, found, &rec, add)
			}
		}
	}
	// 4. Re-run and compare.
	now, err := engine.Run(engine.RunOptions{PlanPath: planPath, DataPath: dataPath, OutDir: dir, Tool: rec.Tool,
		Unregistered: true, Now: time.Time{}, Data: table.Options{MaxSize: opt.MaxDataSize, MaxUnpackRatio: opt.MaxUnpackRatio}})
	if err != nil {
		add(DevResultsDiffer, "", "", "", "the analysis could not be re-run: "+err.Error())
		return rep, nil
	}
	now.Unregistered = rec.Unregistered
	now.Inputs.Registration = rec.Inputs.Registration // compared above from the file itself
	if opt.PlanPath != "" {
		now.Inputs.PlanPath = rec.Inputs.PlanPath
	}
	if opt.DataPath != "" {
		now.Inputs.DataPath = rec.Inputs.DataPath
	}
	planChanged := now.Inputs.PlanHash != rec.Inputs.PlanHash
	if planChanged {
		summary := "the plan differs from the one the record was made with"
		if rec.Trial.PlanVersion != now.Trial.PlanVersion {
			summary += fmt.Sprintf(" (version %s recorded, %s now)", rec.Trial.PlanVersion, now.Trial.PlanVersion)
		} else {
			summary += fmt.Sprintf(" (both say version %s)", rec.Trial.PlanVersion)
		}
		add(DevPlanChanged, "inputs.plan_hash", rec.Inputs.PlanHash, now.Inputs.PlanHash, summary)
	}
	declared := map[string]map[string]bool{}
	for _, ep := range now.Endpoints {
		declared[ep.ID] = map[string]bool{}
		for _, s := range ep.Steps {
			declared[ep.ID][s.ID] = true
		}
	}
	for i, ep := range rec.Endpoints {
		for j, s := range ep.Steps {
			if !declared[ep.ID][s.ID] {
				add(DevStepNotDeclared, fmt.Sprintf("endpoints[%d].steps[%d].id", i, j), "", "", fmt.Sprintf("step %s of endpoint %s is not declared in the plan", s.ID, ep.ID))
			}
		}
	}
	nb, err := record.EncodeRecord(now)
	if err != nil {
		return nil, err
	}
	tol := opt.RelTol
	if tol == 0 {
		tol = DefaultRelTol
	}
	var a, b any
	if err := decodeNumbers(raw, &a); err != nil {
		return nil, err
	}
	if err := decodeNumbers(nb, &b); err != nil {
		return nil, err
	}
	am, bm := a.(map[string]any), b.(map[string]any)
	// plan_paths is not compared as such: positions are compared through
	// it (by the plan data path each stands for), so lines that moved in
	// the plan are not a difference.
	// files is checked against the folder above.
	for _, k := range []string{"run_at", "plan_location", "integrity", "tool", "unregistered", "plan_paths", "files"} {
		delete(am, k)
		delete(bm, k)
	}
	var diffs []Deviation
	c := comparer{tol: tol, pathsA: rec.PlanPaths, pathsB: now.PlanPaths}
	c.compare("", am, bm, &diffs)
	if now.Inputs.PlanFileSHA256 == rec.Inputs.PlanFileSHA256 {
		// The very plan file that was run: every position the record
		// holds stands for the plan value it stands for now (matched by
		// line and column: the file's name may differ under --plan).
		comparePlanPaths(rec.PlanPaths, now.PlanPaths, &diffs)
	}
	for _, d := range diffs {
		code := DevResultsDiffer
		switch {
		case d.Field == "inputs.data_file_sha256" || d.Field == "inputs.table_hash":
			code = DevDataChanged
		case d.Field == "inputs.plan_file_sha256" && !planChanged && !signedValid(rep.Signature):
			// Unsigned (or a signature that does not hold): the recorded
			// file hash may itself be the edit, so the file present is
			// not shown to be the one that was run.
			code = DevPlanFileDiffers
			d.Summary = "the plan file present is not the file the record says was run (its SHA-256 differs), and the record is not signed, so nothing shows the difference is only comments or layout; give the plan file that was run with --plan"
			d.Recorded, d.Now = rec.Inputs.PlanFileSHA256, now.Inputs.PlanFileSHA256
		case d.Field == "inputs.plan_file_sha256" && !planChanged:
			code = DevPlanReformatted
			d.Summary = "the plan file's bytes are not the ones that were run, but the plan is the same plan: its canonical hash is unchanged (comments or layout only)"
			d.Recorded, d.Now = rec.Inputs.PlanFileSHA256, now.Inputs.PlanFileSHA256
		case d.Field == "inputs.plan_hash" || d.Field == "inputs.plan_file_sha256":
			continue // reported above from the plan itself
		case planChanged && strings.HasPrefix(d.Field, "trial."):
			continue // the plan's own identification: part of the plan change above
		}
		d.Code = code
		if d.Summary == "" {
			d.Summary = "the re-run gives a different value"
		}
		rep.Deviations = append(rep.Deviations, d)
	}
	return rep, nil
}

// verifyFiles holds the run folder to the record's list of the files the
// run wrote: every one there with the bytes hashed, and no other file
// beside the record.
func verifyFiles(dir string, rec *record.Result, add func(DeviationCode, string, string, string, string)) {
	listed := map[string]bool{}
	for i, f := range rec.Files {
		if !record.LocalPath(f.Path) {
			add(DevRecordEdited, fmt.Sprintf("files[%d].path", i), "", "", fmt.Sprintf("the record lists %q among the files the run wrote, which is not a file inside the run folder", f.Path))
			continue
		}
		listed[f.Path] = true
		field := fmt.Sprintf("files[%d].sha256", i)
		b, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(f.Path)))
		switch {
		case errors.Is(err, fs.ErrNotExist):
			add(DevReportEdited, field, "", "", fmt.Sprintf("%s, which the run wrote, is not in the run folder", f.Path))
		case err != nil:
			add(DevReportEdited, field, "", "", fmt.Sprintf("%s, which the run wrote, cannot be read: %v", f.Path, err))
		default:
			if got := record.SHA256Hex(b); got != f.SHA256 {
				add(DevReportEdited, field, f.SHA256, got, fmt.Sprintf("%s is not the file the run wrote: its SHA-256 is not the one the record lists", f.Path))
			}
		}
	}
	var extra []string
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return nil
		}
		rel, err := filepath.Rel(dir, p)
		if err != nil {
			return nil
		}
		if rel = filepath.ToSlash(rel); rel != record.AuditFileName && !listed[rel] {
			extra = append(extra, rel)
		}
		return nil
	})
	for _, rel := range extra {
		add(DevReportEdited, "files", "", "", fmt.Sprintf("%s is in the run folder but is not one of the files the run wrote", rel))
	}
}

// notScratch refuses the folders furrow run keeps beside a run folder
// while it works: whatever they hold, they are not run folders.
func notScratch(dir string) error {
	abs, err := filepath.Abs(dir)
	if err != nil {
		abs = dir
	}
	switch record.ScratchKind(filepath.Base(abs)) {
	case "partial":
		return fmt.Errorf("%s is the unfinished folder of a furrow run, not a run folder: a run is written there and renamed into place only when complete, so this one was interrupted (or is still being written); delete it", filepath.ToSlash(dir))
	case "old":
		return fmt.Errorf("%s is a run folder that furrow run --replace set aside to delete, not a run folder: the run that replaced it was interrupted or could not remove it; delete it", filepath.ToSlash(dir))
	}
	return nil
}

// plainPairs keeps a deviation's recorded / now pair only when it says
// something: both sides present and different. Every deviation's summary
// says what differs on its own, so nothing is lost.
func plainPairs(rep *VerifyReport) {
	for i := range rep.Deviations {
		d := &rep.Deviations[i]
		if d.Recorded == "" || d.Now == "" || d.Recorded == d.Now {
			d.Recorded, d.Now = "", ""
		}
	}
}

// verifyRegistration checks the plan's registration record against the
// record: chain intact, the plan registered as run, registration before the run.
func verifyRegistration(planPath string, rec *record.Result, add func(DeviationCode, string, string, string, string)) {
	rp := record.RegistrationPath(planPath)
	reg, raw, err := record.ReadRegistration(rp)
	if err != nil {
		add(DevPlanChanged, "inputs.registration", "", "", "the registration record cannot be read: "+err.Error())
		return
	}
	for _, ce := range reg.CheckChain() {
		add(DevPlanChanged, fmt.Sprintf("registration.entries[%d].%s", ce.Seq-1, ce.Field), "", "", "broken registration chain: "+ce.Summary)
	}
	ref := rec.Inputs.Registration
	if ref == nil {
		add(DevPlanChanged, "inputs.registration", "", "", "the record names no registration")
		return
	}
	// The entry the run was checked against must still be in the chain, unchanged.
	found := entryIndex(reg, ref.Head)
	if found < 0 {
		add(DevPlanChanged, "inputs.registration.head", "", "", fmt.Sprintf("the registration entry the run was checked against (%s) is no longer in the registration record (history rewritten)", ref.Head))
		return
	}
	if len(reg.CheckChain()) == 0 {
		compareRegistrationCopy(reg, raw, found, rec, add)
	}
	e := reg.Entries[found]
	if e.PlanHash != rec.Inputs.PlanHash {
		add(DevPlanChanged, "inputs.plan_hash", "", "", fmt.Sprintf("the plan that was run (%s) is not the one registered in entry %d, version %s (%s)", rec.Inputs.PlanHash, e.Seq, e.PlanVersion, e.PlanHash))
	}
	// Times are compared as instants, not as strings. run_at is outside
	// the content hash and covered only by a signature, so an unsigned
	// record's run_at may hold anything that parses: verify says so for
	// every unsigned record. An amendment appended after the run is caught
	// without it, by the record's own copy of the registration chain.
	runAt, err := time.Parse(time.RFC3339, rec.RunAt)
	if err != nil {
		add(DevRecordEdited, "run_at", "", "", fmt.Sprintf("the run time %q is not an RFC 3339 time, so it cannot be compared with the registration", rec.RunAt))
		return
	}
	regAt := func(i int, s string) (time.Time, bool) {
		t, err := time.Parse(time.RFC3339, s)
		if err != nil {
			add(DevPlanChanged, fmt.Sprintf("registration.entries[%d].registered_at", i), "", "", fmt.Sprintf("the registration time %q of entry %d is not an RFC 3339 time", s, i+1))
			return time.Time{}, false
		}
		return t, true
	}
	if at, ok := regAt(found, e.RegisteredAt); ok && at.After(runAt) {
		add(DevPlanChanged, fmt.Sprintf("registration.entries[%d].registered_at", found), "", "",
			fmt.Sprintf("the run (%s) is dated before the registration it was checked against (entry %d, version %s, registered %s)", rec.RunAt, e.Seq, e.PlanVersion, e.RegisteredAt))
	}
	// An amendment the run was made under must be dated no later than the
	// day the data were analysed (amendment dates are calendar days, the
	// run time is compared as its UTC day).
	runDay := runAt.UTC().Format(time.DateOnly)
	for i, en := range reg.Entries[:found+1] {
		if en.AmendmentDate == "" {
			continue
		}
		if d, err := time.Parse(time.DateOnly, en.AmendmentDate); err != nil {
			add(DevPlanChanged, fmt.Sprintf("registration.entries[%d].amendment_date", i), "", "",
				fmt.Sprintf("the amendment date %q of entry %d is not a calendar date written YYYY-MM-DD", en.AmendmentDate, i+1))
		} else if d.Format(time.DateOnly) > runDay {
			add(DevAmendmentAfterLock, fmt.Sprintf("registration.entries[%d].amendment_date", i), "", "",
				fmt.Sprintf("the amendment to version %s is dated %s, after the data were analysed (%s)", en.PlanVersion, en.AmendmentDate, rec.RunAt))
		} else if rec.Integrity.Signature == nil {
			add(DevAmendmentUnchecked, fmt.Sprintf("registration.entries[%d].amendment_date", i), "", "",
				fmt.Sprintf("the record is not signed, so its run time (%s) is covered by nothing: that the amendment to version %s, dated %s, came before the data were analysed cannot be checked (sign runs to anchor the time)", rec.RunAt, en.PlanVersion, en.AmendmentDate))
		}
	}
	// Every entry after the one the run was checked against (the head at
	// run time) was appended after the run, whatever time it gives itself.
	for k, later := range reg.Entries[found+1:] {
		at, ok := regAt(found+1+k, later.RegisteredAt)
		if !ok {
			continue
		}
		field := fmt.Sprintf("registration.entries[%d]", found+1+k)
		if !at.Before(runAt) {
			add(DevAmendmentAfterLock, field, "", "",
				fmt.Sprintf("plan version %s was registered %s, after the data were analysed (%s): %s", later.PlanVersion, later.RegisteredAt, rec.RunAt, later.Reason))
			continue
		}
		add(DevAmendmentAfterLock, field, "", "",
			fmt.Sprintf("plan version %s was appended to the registration after the entry the run was checked against (entry %d), so after the data were analysed (%s), though it says it was registered %s: %s",
				later.PlanVersion, e.Seq, rec.RunAt, later.RegisteredAt, later.Reason))
	}
}

// entryIndex is the index of the registration entry with entry hash
// head, -1 when there is none.
func entryIndex(reg *record.Registration, head string) int {
	for i, e := range reg.Entries {
		if e.EntryHash == head {
			return i
		}
	}
	return -1
}

// compareRegistrationCopy holds the record's copy of the registration
// (inputs.registration) to the registration record, whose chain is
// intact: the path, every field of every entry up to the one the run was
// checked against (entries[found], the head at run time), whether that
// entry registers the plan that was run, and the file's SHA-256 as it was
// at run time (the file now, or, when entries were appended since, the
// file register wrote with the entries up to the head).
func compareRegistrationCopy(reg *record.Registration, raw []byte, found int, rec *record.Result, add func(DeviationCode, string, string, string, string)) {
	ref := rec.Inputs.Registration
	edited := func(field, recorded, now, what string) {
		add(DevRecordEdited, "inputs.registration."+field, recorded, now,
			"the record's copy of the registration differs from the registration record: "+what)
	}
	if want := record.RegistrationPath(rec.Inputs.PlanPath); ref.Path != want {
		edited("path", ref.Path, want, fmt.Sprintf("it names %s, but the registration record of %s is %s", ref.Path, rec.Inputs.PlanPath, want))
	}
	if len(ref.Chain) != found+1 {
		edited("chain", fmt.Sprintf("%d entries", len(ref.Chain)), fmt.Sprintf("%d entries", found+1),
			fmt.Sprintf("the run was checked against entry %d, so the copy must hold entries 1 to %d", found+1, found+1))
	}
	for i := 0; i < len(ref.Chain) && i <= found; i++ {
		c, e := ref.Chain[i], reg.Entries[i]
		for _, f := range []struct{ name, rec, file string }{
			{"seq", strconv.Itoa(c.Seq), strconv.Itoa(e.Seq)},
			{"plan_version", c.PlanVersion, e.PlanVersion},
			{"plan_hash", c.PlanHash, e.PlanHash},
			{"registered_at", c.RegisteredAt, e.RegisteredAt},
			{"reason", c.Reason, e.Reason},
			{"previous", c.Previous, e.Previous},
			{"entry_hash", c.EntryHash, e.EntryHash},
		} {
			if f.rec != f.file {
				edited(fmt.Sprintf("chain[%d].%s", i, f.name), f.rec, f.file, fmt.Sprintf("entry %d's %s", i+1, f.name))
			}
		}
	}
	if want := reg.Entries[found].PlanHash == rec.Inputs.PlanHash; ref.Matches != want {
		edited("matches", strconv.FormatBool(ref.Matches), strconv.FormatBool(want),
			fmt.Sprintf("entry %d does%s register the plan that was run", found+1, map[bool]string{true: "", false: " not"}[want]))
	}
	then := raw
	if found < len(reg.Entries)-1 {
		prefix := *reg
		prefix.Entries = reg.Entries[:found+1]
		if b, err := json.MarshalIndent(prefix, "", "  "); err == nil {
			then = append(b, '\n')
		}
	}
	if got := record.SHA256Hex(then); got != ref.FileSHA256 {
		what := "the registration record"
		if found < len(reg.Entries)-1 {
			what = fmt.Sprintf("the registration record up to entry %d", found+1)
		}
		add(DevPlanChanged, "inputs.registration.file_sha256", ref.FileSHA256, got,
			fmt.Sprintf("%s is not, byte for byte, the file the run was checked against, though its entries are", what))
	}
}

// comparePlanPaths appends a deviation for every plan position whose plan
// value differs between the record (a) and the re-run (b), positions
// matched by line and column.
func comparePlanPaths(a, b map[string]string, out *[]Deviation) {
	lineCol := func(pos string) string {
		parts := strings.Split(pos, ":")
		if len(parts) < 3 {
			return pos
		}
		return strings.Join(parts[len(parts)-2:], ":")
	}
	now := map[string]string{}
	for k, v := range b {
		now[lineCol(k)] = v
	}
	keys := make([]string, 0, len(a))
	for k := range a {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		if v, ok := now[lineCol(k)]; !ok || v != a[k] {
			*out = append(*out, Deviation{Field: fmt.Sprintf("plan_paths[%q]", k), Recorded: a[k], Now: v,
				Summary: "the plan position stands for another plan value in the re-run"})
		}
	}
	if len(a) != len(b) {
		*out = append(*out, Deviation{Field: "plan_paths", Recorded: fmt.Sprintf("%d positions", len(a)), Now: fmt.Sprintf("%d positions", len(b)),
			Summary: "the re-run holds another number of plan positions"})
	}
}

func decodeNumbers(b []byte, v *any) error {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	return dec.Decode(v)
}

// compareJSON walks two decoded records and appends one deviation per
// differing leaf, named by its field path; positions are compared as text.
func compareJSON(path string, a, b any, tol float64, out *[]Deviation) {
	(&comparer{tol: tol}).compare(path, a, b, out)
}

// comparer compares two decoded records: numbers within tol, plan
// positions by the plan data path their record's plan_paths gives them
// (pathsA for a, pathsB for b), everything else exactly.
type comparer struct {
	tol            float64
	pathsA, pathsB map[string]string
}

// samePlace reports whether two different texts are plan positions of
// the same plan value.
func (c *comparer) samePlace(a, b string) bool {
	pa, okA := c.pathsA[a]
	pb, okB := c.pathsB[b]
	return okA && okB && pa == pb
}

// compare appends one deviation per differing leaf of a and b, named by
// its field path.
func (c *comparer) compare(path string, a, b any, out *[]Deviation) {
	switch x := a.(type) {
	case map[string]any:
		y, ok := b.(map[string]any)
		if !ok {
			*out = append(*out, pairDeviation(path, a, b))
			return
		}
		keys := map[string]bool{}
		for k := range x {
			keys[k] = true
		}
		for k := range y {
			keys[k] = true
		}
		ks := make([]string, 0, len(keys))
		for k := range keys {
			ks = append(ks, k)
		}
		sort.Strings(ks)
		for _, k := range ks {
			p := k
			if path != "" {
				p = path + "." + k
			}
			c.compare(p, x[k], y[k], out)
		}
	case []any:
		y, ok := b.([]any)
		if !ok || len(x) != len(y) {
			*out = append(*out, Deviation{Field: path, Recorded: lenText(a), Now: lenText(b), Summary: "the re-run gives a different number of entries"})
			return
		}
		for i := range x {
			c.compare(fmt.Sprintf("%s[%d]", path, i), x[i], y[i], out)
		}
	case json.Number:
		y, ok := b.(json.Number)
		if !ok {
			*out = append(*out, pairDeviation(path, a, b))
			return
		}
		if x == y {
			return
		}
		fa, e1 := strconv.ParseFloat(string(x), 64)
		fb, e2 := strconv.ParseFloat(string(y), 64)
		isInt := !bytes.ContainsAny([]byte(string(x)+string(y)), ".eE")
		if e1 != nil || e2 != nil || isInt || !closeEnough(fa, fb, c.tol) {
			*out = append(*out, Deviation{Field: path, Recorded: string(x), Now: string(y)})
		}
	case string:
		if y, ok := b.(string); ok && (x == y || c.samePlace(x, y)) {
			return
		}
		*out = append(*out, pairDeviation(path, a, b))
	default:
		if fmt.Sprintf("%T %v", a, a) != fmt.Sprintf("%T %v", b, b) {
			*out = append(*out, pairDeviation(path, a, b))
		}
	}
}

// closeEnough reports whether the re-computed b matches the recorded a:
// the same sign and |a-b| <= tol*max(|a|,|b|), which holds at every
// scale. A zero on either side is matched only by a zero (or a value
// below zeroFloor, an underflow).
func closeEnough(a, b, tol float64) bool {
	if a == b {
		return true
	}
	if a == 0 || b == 0 {
		return math.Abs(a-b) <= zeroFloor
	}
	if math.Signbit(a) != math.Signbit(b) {
		return false
	}
	return math.Abs(a-b) <= tol*math.Max(math.Abs(a), math.Abs(b))
}

// zeroFloor is the only absolute tolerance: what a recorded zero may be
// re-computed as (floating-point underflow, nothing a measurement gives).
const zeroFloor = 1e-300

// maxPairText is the longest recorded or now text a deviation shows.
const maxPairText = 80

// pairDeviation is the deviation of a differing leaf, with both values as
// JSON text: in full when short, otherwise cut around the first place
// they differ, so that the two sides never read the same.
func pairDeviation(path string, a, b any) Deviation {
	ra, rb := pairText(jsonText(a), jsonText(b))
	return Deviation{Field: path, Recorded: ra, Now: rb}
}

func jsonText(v any) string {
	if v == nil {
		return "null"
	}
	b, _ := json.Marshal(v)
	return string(b)
}

// pairText shortens two different texts to at most about maxPairText
// bytes each, keeping the first difference in view: "..." marks what was
// cut, at the start and at the end.
func pairText(a, b string) (string, string) {
	if len(a) <= maxPairText && len(b) <= maxPairText {
		return a, b
	}
	i := 0
	for i < len(a) && i < len(b) && a[i] == b[i] {
		i++
	}
	start := max(0, i-maxPairText/4)
	for start > 0 && !utf8.RuneStart(a[start]) {
		start--
	}
	cut := func(s string) string {
		out, pre := s[start:], ""
		if start > 0 {
			pre = "..."
		}
		if len(out) > maxPairText {
			end := maxPairText - 3
			for end > 0 && !utf8.RuneStart(out[end]) {
				end--
			}
			return pre + out[:end] + "..."
		}
		return pre + out
	}
	return cut(a), cut(b)
}

func lenText(v any) string {
	if x, ok := v.([]any); ok {
		return fmt.Sprintf("%d entries", len(x))
	}
	s, _ := pairText(jsonText(v), "")
	return s
}
