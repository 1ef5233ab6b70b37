package engine

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"furrow/checker/contract"
	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// RunOptions are the inputs of Run. The clock and the tool identity are
// injected so that records are reproducible.
type RunOptions struct {
	// PlanPath is the plan file.
	PlanPath string
	// DataPath is the data file; "" means the plan's data.file, relative to the plan.
	DataPath string
	// OutDir is the run directory the record will be written to; only
	// Result.PlanLocation (outside the content hash) is relative to it,
	// every other path of the record is relative to the plan's folder. It
	// need not exist yet.
	OutDir string
	// Now is the wall-clock time of the run (goes only into Result.RunAt).
	Now time.Time
	// Tool identifies the program.
	Tool record.ToolInfo
	// Unregistered allows a run without a matching registration; the record is marked.
	Unregistered bool
	// Data bounds the reading of the data file (size limit, a data.file
	// outside the plan's folder); the zero value is the default.
	Data table.Options
}

// DataError is returned by Run when the data contract has errors; the run
// stops before any analysis.
type DataError struct {
	Diagnostics plan.Diagnostics
}

// Error says how many data errors stopped the run.
func (e *DataError) Error() string {
	n := 0
	for _, d := range e.Diagnostics {
		if d.Severity == plan.Error {
			n++
		}
	}
	if n == 1 {
		return "the data do not meet the plan (1 error)"
	}
	return fmt.Sprintf("the data do not meet the plan (%d errors)", n)
}

// PlanError is returned by Run and Verify when the plan has errors.
type PlanError struct {
	Diagnostics plan.Diagnostics
}

// Error says that the plan has errors; the findings are in Diagnostics.
func (e *PlanError) Error() string { return "the plan has errors" }

// ErrNotRegistered is wrapped by Run's error when the plan has no
// registration record or differs from it, and no unregistered run was asked for.
var ErrNotRegistered = errors.New("plan does not match its registration")

// Run executes the plan on the data and returns the result, sealed is
// left to WriteRecord. Inputs are only read.
func Run(opt RunOptions) (*record.Result, error) {
	p, diags, err := plan.Load(opt.PlanPath, method.Default)
	if err != nil {
		return nil, err // plan.Load's error already says "reading plan"
	}
	if diags.HasErrors() {
		return nil, &PlanError{Diagnostics: diags}
	}
	planRaw, err := os.ReadFile(opt.PlanPath)
	if err != nil {
		return nil, fmt.Errorf("reading plan: %w", err)
	}
	r := &record.Result{
		Format:       record.AuditFormat,
		Tool:         opt.Tool,
		RunAt:        opt.Now.UTC().Format(time.RFC3339),
		Unregistered: opt.Unregistered,
		Trial:        record.TrialInfo{ID: p.Trial.ID, Title: p.Trial.Title, PlanVersion: p.Trial.Version},
	}
	if r.Tool.Name == "" {
		r.Tool.Name = "furrow"
	}
	// Paths in the (hashed) inputs are relative to the plan's folder; where
	// the plan is from the run directory is only a hint, outside the hash.
	planDir := filepath.Dir(opt.PlanPath)
	r.PlanLocation = relSlash(opt.OutDir, opt.PlanPath)
	r.Inputs.PlanPath = relSlash(planDir, opt.PlanPath)
	r.Inputs.PlanFileSHA256 = record.SHA256Hex(planRaw)
	r.Inputs.PlanHash = record.PlanHash(p)

	// Registration.
	ref, regErr := registrationRef(opt.PlanPath, r.Inputs.PlanHash)
	r.Inputs.Registration = ref
	if regErr != nil && !opt.Unregistered {
		return nil, regErr
	}
	if regErr == nil && opt.Unregistered {
		// Asked for, but the plan is registered: the mark stays, as asked.
		r.Unregistered = true
	}

	// Data.
	t, ddiags, err := table.ReadTableWith(p, opt.DataPath, opt.Data)
	if err != nil {
		return nil, err // ReadTable errors already say "reading data FILE: ..."
	}
	if ddiags.HasErrors() {
		return nil, &DataError{Diagnostics: ddiags.Sort()}
	}
	cdiags, seen := contract.CheckData(p, t)
	r.Design = designSeen(seen)
	all := append(append(plan.Diagnostics(nil), ddiags...), cdiags...).Sort()
	if all.HasErrors() {
		return nil, &DataError{Diagnostics: all}
	}
	r.PlanWarnings = []record.Finding{}
	for _, d := range diags {
		r.PlanWarnings = append(r.PlanWarnings, record.Finding{Severity: d.Severity.String(), Code: d.Code, Pos: posText(d.Pos), Summary: d.Summary})
	}
	r.DataWarnings = []record.Finding{}
	for _, d := range all {
		r.DataWarnings = append(r.DataWarnings, record.Finding{Severity: d.Severity.String(), Code: d.Code, Pos: posText(d.Pos), Summary: d.Summary})
	}
	dataPath := opt.DataPath
	if dataPath == "" {
		dataPath = filepath.Join(filepath.Dir(opt.PlanPath), filepath.FromSlash(p.Data.File))
	}
	r.Inputs.DataPath = relSlash(planDir, dataPath)
	r.Inputs.DataDeclared = declaredData(planDir, p.Data.File)
	r.Inputs.DataFileSHA256 = t.FileHash
	r.Inputs.TableHash = t.ContentHash()
	r.Inputs.Rows = t.NumRows()
	r.Inputs.Columns = t.ColumnNames()

	kept, excl, rules, err := ApplyExclusions(p, t)
	if err != nil {
		return nil, err
	}
	r.Exclusions = excl
	if r.Exclusions == nil {
		r.Exclusions = []record.ExcludedRow{}
	}
	r.ExclusionRules = rules
	r.Inputs.RowsKept = kept.NumRows()
	// Units the exclusions removed whole are lost units too, judged by the
	// plan's least-units as those missing from the file.
	kdiags, lost := contract.CheckKept(p, t, goneUnits(kept, excl, unitColumn(p)))
	if kdiags.HasErrors() {
		return nil, &DataError{Diagnostics: kdiags}
	}
	for _, d := range kdiags {
		r.DataWarnings = append(r.DataWarnings, record.Finding{Severity: d.Severity.String(), Code: d.Code, Pos: posText(d.Pos), Summary: d.Summary})
	}
	r.LostUnits = []record.LostUnit{}
	for _, l := range lost {
		r.LostUnits = append(r.LostUnits, record.LostUnit{Cell: l.Cell, Block: l.Block, Unit: l.Unit, Rule: l.Rule})
	}

	eng := NewCascade()
	for i := range p.Endpoints {
		er := eng.RunEndpoint(p, kept, &p.Endpoints[i])
		withExcluded(&er, r.Exclusions)
		r.Endpoints = append(r.Endpoints, er)
	}
	r.PlanPaths = planPaths(p, r)
	return r, nil
}

// withExcluded adds the rows the exclusions removed to the unused rows of
// every fitted step, so that each step accounts for every row read.
func withExcluded(er *record.EndpointResult, excl []record.ExcludedRow) {
	for k := range er.Steps {
		s := &er.Steps[k]
		if s.Fit == nil {
			s.Unused = []record.UnusedRow{}
			continue
		}
		for _, x := range excl {
			s.Unused = append(s.Unused, record.UnusedRow{Row: x.Row, Unit: x.Unit, Reason: record.UnusedExcluded, Rule: x.Rule})
		}
		slices.SortStableFunc(s.Unused, func(a, b record.UnusedRow) int { return a.Row - b.Row })
	}
}

// registrationRef reads the plan's registration record, if any, and
// returns its summary; the error says why the plan is not registered as is.
func registrationRef(planPath, hash string) (*record.RegistrationRef, error) {
	rp := record.RegistrationPath(planPath)
	reg, raw, err := record.ReadRegistration(rp)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%w: no registration record %s (run furrow register first, or ask for an unregistered run)", ErrNotRegistered, rp)
		}
		return nil, fmt.Errorf("%w: %v", ErrNotRegistered, err)
	}
	ref := &record.RegistrationRef{Path: relSlash(filepath.Dir(planPath), rp), FileSHA256: record.SHA256Hex(raw), Chain: []record.ChainLink{}}
	for _, e := range reg.Entries {
		ref.Chain = append(ref.Chain, record.ChainLink{Seq: e.Seq, PlanVersion: e.PlanVersion, PlanHash: e.PlanHash,
			RegisteredAt: e.RegisteredAt, Reason: e.Reason, Previous: e.Previous, EntryHash: e.EntryHash})
	}
	head := reg.Head()
	ref.Head = head.EntryHash
	ref.Matches = head.PlanHash == hash
	if errs := reg.CheckChain(); len(errs) > 0 {
		return ref, fmt.Errorf("%w: registration record %s is broken: %v", ErrNotRegistered, rp, errs[0])
	}
	if !ref.Matches {
		return ref, fmt.Errorf("%w: the plan differs from registered version %s (entry %d); register an amendment or ask for an unregistered run", ErrNotRegistered, head.PlanVersion, head.Seq)
	}
	return ref, nil
}

// declaredData returns the plan's data.file as a slash path relative to the
// plan's folder, cleaned like the path of the file analysed so that the
// two compare as strings ("" when the plan names none).
func declaredData(planDir, file string) string {
	if file == "" {
		return ""
	}
	f := filepath.FromSlash(file)
	if !filepath.IsAbs(f) {
		f = filepath.Join(planDir, f)
	}
	return relSlash(planDir, f)
}

// relSlash returns path relative to base as a slash path (path itself,
// cleaned, when no relative form exists).
func relSlash(base, path string) string {
	ab, err1 := filepath.Abs(base)
	ap, err2 := filepath.Abs(path)
	if err1 == nil && err2 == nil {
		if rel, err := filepath.Rel(ab, ap); err == nil {
			return filepath.ToSlash(rel)
		}
	}
	return filepath.ToSlash(filepath.Clean(path))
}

// modelSpec describes a step's model.
func modelSpec(ep *plan.Endpoint, s *plan.Step) record.ModelSpec {
	m := record.ModelSpec{
		Kind: s.Model, Derive: s.Outcome.Derive, From: s.Outcome.From, To: s.Outcome.To, At: s.Outcome.At,
		Transform: s.Transform.Kind, Offset: record.Num(s.Transform.Offset), Lambda: record.Num(s.Transform.Lambda),
		Covariates: s.Covariates, Compare: s.Compare, Within: s.Within, Estimation: s.Estimation, DF: s.DF, Anova: s.Anova,
	}
	if m.Derive == "" {
		m.Derive = plan.DeriveRaw
	}
	if m.Transform == "" {
		m.Transform = plan.TransformNone
	}
	for _, t := range s.Fixed {
		m.Fixed = append(m.Fixed, t.Columns)
	}
	for _, t := range s.Random {
		m.Random = append(m.Random, t.Columns)
	}
	// The text is furrow's own one-line description (no formula syntax of
	// any package): kind, estimator, analysed quantity, then the terms.
	lhs := scaleText(ep.Response, s.Outcome, s.Transform)
	var b strings.Builder
	if rules, _ := method.Default.Model(s.Model); rules.Model {
		b.WriteString(s.Model)
		if len(rules.Estimation) > 0 {
			est := s.Estimation
			if est == "" {
				est = "reml"
			}
			b.WriteString(" (" + strings.ToUpper(est) + ")")
		}
		b.WriteString(" of " + lhs)
		var terms []string
		for _, t := range m.Fixed {
			terms = append(terms, strings.Join(t, " × "))
		}
		terms = append(terms, s.Covariates...)
		if s.Outcome.Derive == plan.DeriveBaseline {
			terms = append(terms, baselineName(ep.Response, s.Outcome.From))
		}
		if len(terms) == 0 {
			terms = []string{"mean only"}
		}
		b.WriteString("; fixed: " + strings.Join(terms, ", "))
		if len(m.Random) > 0 {
			var rnd []string
			for _, t := range m.Random {
				if len(t) == 1 {
					rnd = append(rnd, t[0])
					continue
				}
				rnd = append(rnd, t[len(t)-1]+" within "+strings.Join(t[:len(t)-1], " × "))
			}
			b.WriteString("; random: " + strings.Join(rnd, ", "))
		}
		if s.DF != "" {
			b.WriteString("; " + s.DF + " df")
		}
		if s.Anova != 0 {
			fmt.Fprintf(&b, "; type %s tests", [...]string{"", "I", "II", "III"}[min(max(s.Anova, 0), 3)])
		}
	} else {
		b.WriteString(s.Model + " of " + lhs)
		if s.Compare != "" {
			b.WriteString(" between levels of " + s.Compare)
		}
		if s.Within != "" {
			b.WriteString(" within " + s.Within)
		}
	}
	m.Text = b.String()
	if rules, _ := method.Default.Model(s.Model); rules.Model {
		m.Equation = equation(lhs, m, s.Outcome.Derive == plan.DeriveBaseline, baselineName(ep.Response, s.Outcome.From))
	}
	return m
}

// posText formats a plan or data position with the file's base name only,
// so that records do not depend on where the inputs were when run.
func posText(p plan.Pos) string {
	if p.File != "" {
		p.File = filepath.Base(p.File)
	}
	return p.String()
}

// goneUnits returns the units of the excluded rows that have no row in kept, each with
// the rule that removed its first row.
func goneUnits(kept *table.Table, excl []record.ExcludedRow, unitCol string) map[string]string {
	if unitCol == "" {
		return nil
	}
	left := map[string]bool{}
	for _, u := range kept.Texts(unitCol) {
		left[u] = true
	}
	gone := map[string]string{}
	for _, x := range excl {
		if _, seen := gone[x.Unit]; !seen && !left[x.Unit] && x.Unit != "" {
			gone[x.Unit] = x.Rule
		}
	}
	return gone
}

// designSeen copies the parts of a design summary that do not depend on
// where the files are (the summary's Data path is left out).
func designSeen(s *contract.DesignSummary) *record.DesignSeen {
	if s == nil {
		return nil
	}
	d := &record.DesignSeen{Rows: s.Rows, Units: s.Units, UnitColumn: s.UnitColumn, CellColumns: append([]string{}, s.CellColumns...),
		Replicates: s.Replicates, Cells: []record.CellSeen{}, Missing: []record.MissingSeen{}}
	if l := s.LeastUnits; l != nil {
		d.LeastUnits = &record.LeastUnitsSeen{Per: l.Per, Count: l.Count, Below: l.Below, Pos: posText(l.Pos)}
	}
	for _, c := range s.Cells {
		d.Cells = append(d.Cells, record.CellSeen{Levels: append([]string{}, c.Levels...), Units: c.Units})
	}
	for _, m := range s.Missing {
		d.Missing = append(d.Missing, record.MissingSeen{Column: m.Column, Missing: m.Missing})
	}
	return d
}

// equation writes a linear or mixed model in furrow's notation: the
// analysed quantity = intercept + fixed terms (interactions joined by ×, a
// covariate as slope·x) + random(term) per random term + residual.
func equation(lhs string, m record.ModelSpec, baseline bool, baselineCol string) string {
	parts := []string{"intercept"}
	for _, t := range m.Fixed {
		parts = append(parts, strings.Join(t, " × "))
	}
	for _, c := range m.Covariates {
		parts = append(parts, "slope·"+c)
	}
	if baseline {
		parts = append(parts, "slope·"+baselineCol)
	}
	for _, t := range m.Random {
		g := t[len(t)-1]
		if len(t) > 1 {
			g += " within " + strings.Join(t[:len(t)-1], " × ")
		}
		parts = append(parts, "random("+g+")")
	}
	parts = append(parts, "residual")
	return lhs + " = " + strings.Join(parts, " + ")
}
