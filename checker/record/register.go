package record

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"

	"furrow/checker/method"
	"furrow/plan"
)

// RegistrationFormat is the version of the registration-record format.
const RegistrationFormat = 1

// RegistrationSuffix replaces the plan file's extension to name its
// registration record: plan.yaml is registered in plan.registration.json.
const RegistrationSuffix = ".registration.json"

// Registration is the registration record of one plan file: a chain of
// entries, oldest first. Entry i (i > 0) carries the entry hash of entry
// i-1 in Previous, so an edit to any earlier entry breaks every later link.
type Registration struct {
	Format  int        `json:"format"`
	Plan    string     `json:"plan"`
	Entries []RegEntry `json:"entries"`
}

// RegEntry is one registration of a plan version.
type RegEntry struct {
	Seq            int    `json:"seq"`
	PlanVersion    string `json:"plan_version"`
	PlanHash       string `json:"plan_hash"`
	PlanFileSHA256 string `json:"plan_file_sha256"`
	RegisteredAt   string `json:"registered_at"`
	ToolVersion    string `json:"tool_version"`
	GitCommit      string `json:"git_commit"`
	Reason         string `json:"reason"`
	AmendmentDate  string `json:"amendment_date"`
	Previous       string `json:"previous"`
	EntryHash      string `json:"entry_hash"`
}

// Head returns the last entry, or nil for an empty record.
func (r *Registration) Head() *RegEntry {
	if r == nil || len(r.Entries) == 0 {
		return nil
	}
	return &r.Entries[len(r.Entries)-1]
}

// RegistrationPath returns the registration record path for a plan file.
func RegistrationPath(planPath string) string {
	ext := filepath.Ext(planPath)
	return strings.TrimSuffix(planPath, ext) + RegistrationSuffix
}

// EntryHash returns "sha256:<hex>" of the entry's canonical JSON (keys
// sorted, no whitespace) with entry_hash set to the empty string.
func EntryHash(e RegEntry) string {
	e.EntryHash = ""
	raw, err := json.Marshal(e)
	if err != nil {
		panic("checker: marshalling a registration entry: " + err.Error())
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	var doc any
	if err := dec.Decode(&doc); err != nil {
		panic("checker: decoding a registration entry: " + err.Error())
	}
	var b bytes.Buffer
	if err := canonicalJSON(&b, doc); err != nil {
		panic("checker: " + err.Error())
	}
	return SHA256Hex(b.Bytes())
}

// ChainError is one broken link of a registration chain.
type ChainError struct {
	// Seq is the entry's sequence number (1-based position).
	Seq int
	// Field is the field at fault: "entry_hash", "previous" or "seq".
	Field   string
	Summary string
}

// Error names the entry, the field at fault and the finding.
func (e ChainError) Error() string {
	return fmt.Sprintf("registration entry %d: %s: %s", e.Seq, e.Field, e.Summary)
}

// CheckChain verifies every entry hash and link of the chain and returns
// the broken ones (nil when the chain is intact).
func (r *Registration) CheckChain() []ChainError {
	var errs []ChainError
	prev := ""
	for i, e := range r.Entries {
		seq := i + 1
		if e.Seq != seq {
			errs = append(errs, ChainError{seq, "seq", fmt.Sprintf("sequence number is %d, expected %d", e.Seq, seq)})
		}
		if got := EntryHash(e); got != e.EntryHash {
			errs = append(errs, ChainError{seq, "entry_hash", "the entry was edited after it was registered (its hash does not match its content)"})
		}
		if e.Previous != prev {
			errs = append(errs, ChainError{seq, "previous", "does not match the hash of the previous entry (an entry was removed, inserted or edited)"})
		}
		if i > 0 && e.RegisteredAt < r.Entries[i-1].RegisteredAt {
			errs = append(errs, ChainError{seq, "registered_at", "registered earlier than the entry before it"})
		}
		prev = e.EntryHash
	}
	return errs
}

// ReadRegistration reads and schema-validates a registration record. It
// does not check the chain (see CheckChain), so a broken record can still
// be reported in detail.
func ReadRegistration(path string) (*Registration, []byte, error) {
	raw, err := plan.ReadFile(path, MaxRegistrationSize)
	if err != nil {
		return nil, nil, fmt.Errorf("reading registration: %w", err)
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	var doc any
	if err := dec.Decode(&doc); err != nil {
		return nil, raw, fmt.Errorf("reading registration %s: %w", path, err)
	}
	if err := validateAgainst(RegistrationSchemaFile, doc, "registration record "+path); err != nil {
		return nil, raw, err
	}
	var r Registration
	if err := json.Unmarshal(raw, &r); err != nil {
		return nil, raw, fmt.Errorf("reading registration %s: %w", path, err)
	}
	return &r, raw, nil
}

// RegisterOptions are the injected parts of a registration.
type RegisterOptions struct {
	// Now is the registration time (required; the command line passes the clock).
	Now time.Time
	// ToolVersion is recorded in the entry.
	ToolVersion string
	// GitCommit returns the last commit of the plan file; nil = run git
	// when it is available. It returns "" outside a repository.
	GitCommit func(planPath string) string
}

// RegisterResult says what Register did.
type RegisterResult struct {
	// Path is the registration record written (or found).
	Path string
	// Entry is the new entry, or the existing head when nothing changed.
	Entry RegEntry
	// Unchanged is true when the plan was already registered as is.
	Unchanged bool
	// Amendment is true when the entry amends an earlier registration.
	Amendment bool
}

// ErrPlanDoesNotLint is returned (wrapped) by Register when the plan has errors.
var ErrPlanDoesNotLint = errors.New("the plan has errors; fix them before registering")

// ErrClockBehind is wrapped by Register's error when the registration time
// is earlier than the previous entry's: appending it would break the
// chain for every later command.
var ErrClockBehind = errors.New("registration time earlier than the previous entry")

// Register registers the plan at planPath: the first time it writes a new
// record with one entry; when the plan has changed since the last entry it
// appends an amendment entry, which requires a new trial.version and an
// amendment for that version (with its date and reason) in the plan. A
// plan with error diagnostics is refused; the diagnostics are returned.
func Register(planPath string, opt RegisterOptions) (*RegisterResult, plan.Diagnostics, error) {
	p, diags, err := plan.Load(planPath, method.Default)
	if err != nil {
		return nil, diags, fmt.Errorf("registering %s: %w", planPath, err)
	}
	if diags.HasErrors() {
		return nil, diags, fmt.Errorf("registering %s: %w", planPath, ErrPlanDoesNotLint)
	}
	raw, err := os.ReadFile(planPath)
	if err != nil {
		return nil, diags, fmt.Errorf("registering %s: %w", planPath, err)
	}
	git := opt.GitCommit
	if git == nil {
		git = gitCommitOf
	}
	e := RegEntry{
		PlanVersion:    p.Trial.Version,
		PlanHash:       PlanHash(p),
		PlanFileSHA256: SHA256Hex(raw),
		RegisteredAt:   opt.Now.UTC().Format(time.RFC3339),
		ToolVersion:    opt.ToolVersion,
		GitCommit:      git(planPath),
	}
	regPath := RegistrationPath(planPath)
	res := &RegisterResult{Path: regPath}
	var reg *Registration
	if _, err := os.Stat(regPath); err == nil {
		reg, _, err = ReadRegistration(regPath)
		if err != nil {
			return nil, diags, fmt.Errorf("registering %s: %w", planPath, err)
		}
		if errs := reg.CheckChain(); len(errs) > 0 {
			return nil, diags, fmt.Errorf("registering %s: existing record %s is broken: %w", planPath, regPath, errs[0])
		}
	} else if !errors.Is(err, os.ErrNotExist) {
		return nil, diags, fmt.Errorf("registering %s: %w", planPath, err)
	}
	if head := reg.Head(); head != nil {
		if head.PlanHash == e.PlanHash {
			res.Entry, res.Unchanged = *head, true
			return res, diags, nil
		}
		if prev, err := time.Parse(time.RFC3339, head.RegisteredAt); err == nil && opt.Now.Before(prev) {
			return nil, diags, fmt.Errorf("registering %s: %w: the clock says %s, before entry %d registered at %s; nothing was registered (check the machine's clock)",
				planPath, ErrClockBehind, e.RegisteredAt, head.Seq, head.RegisteredAt)
		}
		for _, old := range reg.Entries {
			if old.PlanVersion == e.PlanVersion {
				return nil, diags, fmt.Errorf("registering %s: the plan changed but trial.version is still %q (registered as entry %d); give the amended plan a new version and declare the amendment", planPath, e.PlanVersion, old.Seq)
			}
		}
		var am *plan.Amendment
		for i := range p.Trial.Amendments {
			if p.Trial.Amendments[i].Version == e.PlanVersion {
				am = &p.Trial.Amendments[i]
			}
		}
		if am == nil {
			return nil, diags, fmt.Errorf("registering %s: the plan changed to version %q but trial.amendments has no entry for that version (date and reason are required)", planPath, e.PlanVersion)
		}
		e.Reason, e.AmendmentDate = am.Reason, am.Date
		e.Previous = head.EntryHash
		e.Seq = head.Seq + 1
		res.Amendment = true
	} else {
		reg = &Registration{Format: RegistrationFormat, Plan: filepath.Base(planPath)}
		e.Seq = 1
		e.Reason = "initial registration"
	}
	e.EntryHash = EntryHash(e)
	out := *reg
	out.Entries = append(append([]RegEntry(nil), reg.Entries...), e)
	b, err := json.MarshalIndent(out, "", "  ")
	if err != nil {
		return nil, diags, fmt.Errorf("registering %s: %w", planPath, err)
	}
	b = append(b, '\n')
	if err := WriteFileAtomic(regPath, b, 0o644, false); err != nil {
		return nil, diags, err
	}
	res.Entry = e
	return res, diags, nil
}

// gitCommitOf returns the hash of the last commit that touched the file,
// or "" when git is not installed or the file is not in a repository.
func gitCommitOf(path string) string {
	exe, err := exec.LookPath("git")
	if err != nil {
		return ""
	}
	cmd := exec.Command(exe, "log", "-1", "--format=%H", "--", filepath.Base(path))
	cmd.Dir = filepath.Dir(path)
	out, err := cmd.Output()
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(out))
}

// PlanHash returns the canonical hash of p (plan.Hash); Register and the
// engine's Run take it from here.
func PlanHash(p *plan.Plan) string {
	return plan.Hash(p)
}
