package render

import (
	"fmt"
	"strconv"
	"strings"

	"furrow/checker/method"
	"furrow/plan"
)

// Document is a plan written out as the statistical-analysis-plan text a
// protocol annex needs. It is built once from the plan and rendered to
// Markdown (Markdown) and HTML (HTML) from the same blocks, so the two
// renderings cannot disagree.
type Document struct {
	Title    string
	Hash     string // canonical plan hash, "sha256:..."
	Sections []Section
}

// Section is one numbered heading of a Document with its blocks.
type Section struct {
	Heading string
	Blocks  []Block
}

// Block is a paragraph, a bullet list or a table. Exactly one of Text,
// Items or Rows is used.
type Block struct {
	Text   string     // a paragraph
	Items  []string   // a bullet list
	Header []string   // table header (with Rows)
	Rows   [][]string // table rows
}

// Caution is the sentence every document and report carries.
const Caution = "furrow executes and records a plan; it does not replace a qualified statistician. " +
	"Analyses for regulatory submissions follow the applicable guidelines (for example ICH E9, " +
	"OECD Good Laboratory Practice, EPPO standards) and local rules."

// Explain builds the analysis-plan document for p. hash is the plan's
// canonical hash (plan.Hash), printed so that the registered text and the
// executed plan can be shown to be the same.
func Explain(p *plan.Plan, hash string) *Document {
	d := &Document{
		Title: "Statistical analysis plan: " + p.Trial.Title,
		Hash:  hash,
	}
	d.Sections = append(d.Sections,
		identitySection(p, hash),
		objectivesSection(p),
		designSection(p),
		dataSection(p),
		exclusionsSection(p),
	)
	d.Sections = append(d.Sections, derivedSection(p)...)
	for i := range p.Endpoints {
		d.Sections = append(d.Sections, analysisSection(p, &p.Endpoints[i]))
	}
	d.Sections = append(d.Sections, amendmentsSection(p), Section{
		Heading: "Caution",
		Blocks:  []Block{{Text: Caution}},
	})
	for i := range d.Sections {
		d.Sections[i].Heading = fmt.Sprintf("%d. %s", i+1, d.Sections[i].Heading)
	}
	return d
}

func identitySection(p *plan.Plan, hash string) Section {
	t := p.Trial
	rows := [][]string{
		{"Trial", t.ID},
		{"Title", t.Title},
		{"Sponsor", orDash(t.Sponsor)},
		{"Analyst", orDash(t.Analyst)},
		{"Plan version", orDash(t.Version)},
		{"Plan format", "furrow " + strconv.Itoa(p.Format)},
		{"Plan hash", orDash(hash)},
	}
	return Section{
		Heading: "Identity",
		Blocks: []Block{
			{Header: []string{"Item", "Value"}, Rows: rows},
			{Text: "The plan hash is computed over the canonical form of the plan: reformatting or comments do not change it, any change of meaning does. A run of this plan records the same hash."},
		},
	}
}

func objectivesSection(p *plan.Plan) Section {
	s := Section{Heading: "Objectives and hypotheses"}
	for i := range p.Endpoints {
		e := &p.Endpoints[i]
		kind := "Secondary"
		if e.Primary {
			kind = "Primary"
		}
		resp := describeColumn(p, e.Response)
		s.Blocks = append(s.Blocks, Block{Text: fmt.Sprintf("%s endpoint %s: %s. Significance level alpha = %s.",
			kind, code(e.ID), resp, fnum(alphaOf(e.Alpha)))})
		var items []string
		for j := range e.Hypotheses {
			items = append(items, describeHypothesis(p, e, &e.Hypotheses[j]))
		}
		if len(items) == 0 {
			items = []string{"No hypotheses beyond the tests of the model terms are declared."}
		}
		s.Blocks = append(s.Blocks, Block{Items: items})
	}
	return s
}

func designSection(p *plan.Plan) Section {
	var items []string
	if p.Design.Layout != "" {
		items = append(items, "Layout: "+layoutName(p.Design.Layout)+".")
	}
	unit := columnsWithRole(p, plan.RoleUnit)
	if len(unit) > 0 {
		items = append(items, fmt.Sprintf("Experimental unit: %s, the smallest unit to which a treatment is independently applied. Repeated or sub-sampled measurements of a unit are not replicates.", code(unit[0].Name)))
	}
	for _, c := range columnsWithRole(p, plan.RoleTreatment) {
		items = append(items, fmt.Sprintf("Treatment factor %s with levels %s; control level %s.", code(c.Name), strings.Join(c.Levels, ", "), orDash(c.Control)))
	}
	for _, c := range columnsWithRole(p, plan.RoleFactor) {
		items = append(items, fmt.Sprintf("Factor %s with levels %s.", code(c.Name), strings.Join(c.Levels, ", ")))
	}
	for _, c := range columnsWithRole(p, plan.RoleRepeat) {
		items = append(items, fmt.Sprintf("Repeated measure %s with levels %s, measured on every unit.", code(c.Name), strings.Join(c.Levels, ", ")))
	}
	for _, c := range columnsWithRole(p, plan.RoleBlock) {
		items = append(items, fmt.Sprintf("Blocks: %s.", code(c.Name)))
	}
	for _, c := range columnsWithRole(p, plan.RoleSite) {
		items = append(items, fmt.Sprintf("Sites: %s.", code(c.Name)))
	}
	if p.Design.Replicates > 0 {
		items = append(items, fmt.Sprintf("Replication: %d units per treatment combination%s.", p.Design.Replicates, perSite(p)))
	}
	if l := p.Design.LeastUnits; l != nil {
		items = append(items, lostUnitsPlanText(p, l))
	}
	if p.Design.Subsamples > 1 {
		items = append(items, fmt.Sprintf("Sub-samples: %d measurements per unit and time point.", p.Design.Subsamples))
	}
	return Section{Heading: "Experimental unit and design", Blocks: []Block{{Items: items}}}
}

// lostUnitsPlanText says in words what the plan accepts when units are lost.
func lostUnitsPlanText(p *plan.Plan, l *plan.LeastUnits) string {
	below := "the analysis stops before any model is fitted"
	if l.Below == plan.BelowWarn {
		below = "the analysis goes on, with a warning"
	}
	const lost = " A unit is lost when the data hold no row of it or a declared exclusion removes every row of it."
	const listed = "is analysed as the data are, with a warning listing each lost unit with its treatment, block and site"
	if l.Per == plan.LeastPerTreatment {
		return fmt.Sprintf("Lost units: a treatment combination with fewer than its %d units %s; each treatment level%s must keep at least %d units over its combinations with the other factors, and below that %s.%s",
			p.Design.Replicates, listed, perSite(p), l.Count, below, lost)
	}
	return fmt.Sprintf("Lost units: a treatment combination%s that keeps at least %d of its %d units %s; below %d units %s.%s",
		perSite(p), l.Count, p.Design.Replicates, listed, l.Count, below, lost)
}

func perSite(p *plan.Plan) string {
	if len(columnsWithRole(p, plan.RoleSite)) > 0 {
		return " at each site"
	}
	return ""
}

func dataSection(p *plan.Plan) Section {
	src := p.Data
	format := strings.ToUpper(orDefault(src.Format, "csv"))
	where := fmt.Sprintf("Data are read from %s (%s", code(src.File), format)
	if src.Sheet != "" {
		where += ", sheet " + code(src.Sheet)
	}
	if format == "CSV" {
		where += fmt.Sprintf(", delimiter %q, decimal separator %q", orDefault(src.Delimiter, ","), orDefault(src.Decimal, "."))
	}
	where += ")."
	miss := make([]string, len(src.Missing))
	for i, m := range src.Missing {
		miss[i] = strconv.Quote(m)
	}
	if len(miss) == 0 {
		miss = []string{`""`}
	}
	rows := make([][]string, 0, len(p.Columns))
	for _, c := range p.Columns {
		var detail string
		switch {
		case c.IsNumeric():
			detail = "numeric"
			if c.Unit != "" {
				detail += ", " + c.Unit
			}
			if c.Min != nil || c.Max != nil {
				detail += ", plausible range " + rangeText(c.Min, c.Max)
			}
		case len(c.Levels) > 0:
			detail = "levels " + strings.Join(c.Levels, ", ")
			if c.Control != "" {
				detail += " (control " + c.Control + ")"
			}
		default:
			detail = "identifier"
		}
		rows = append(rows, []string{c.Name, c.Role, detail, orDash(c.Label)})
	}
	return Section{Heading: "Data", Blocks: []Block{
		{Text: where + " Cells reading " + strings.Join(miss, ", ") + " are missing values."},
		{Header: []string{"Column", "Role", "Type", "Description"}, Rows: rows},
		{Text: "Before any analysis the data are checked against these declarations (columns present, numbers numeric and within range, levels declared, one record per unit and time, units keeping their treatment, declared replication). Errors stop the analysis; warnings are carried into the record."},
	}}
}

func exclusionsSection(p *plan.Plan) Section {
	s := Section{Heading: "Exclusions declared in advance"}
	if len(p.Exclusions) == 0 {
		s.Blocks = []Block{{Text: "No exclusions are declared: every row that passes the data checks is analysed."}}
		return s
	}
	var items []string
	for _, x := range p.Exclusions {
		what := "the row"
		if x.Drop == plan.DropUnit {
			what = "every record of the unit"
		}
		var cond string
		switch x.When {
		case plan.WhenMissing:
			cond = fmt.Sprintf("%s is missing", code(x.Column))
			if x.At != "" {
				cond += " at " + code(x.At)
			}
		case plan.WhenListed:
			cond = "the unit is one of " + strings.Join(x.Units, ", ")
		case plan.WhenOutOfRange:
			cond = fmt.Sprintf("%s is outside its plausible range", code(x.Column))
		default:
			cond = x.When
		}
		item := fmt.Sprintf("%s: when %s, %s is removed.", code(x.ID), cond, what)
		if x.Reason != "" {
			item += " Reason: " + x.Reason + "."
		}
		items = append(items, item)
	}
	s.Blocks = []Block{{Items: items}, {Text: "Every removed row is listed in the run record with the rule that removed it."}}
	return s
}

func analysisSection(p *plan.Plan, e *plan.Endpoint) Section {
	s := Section{Heading: "Analysis of " + e.ID}
	s.Blocks = append(s.Blocks, Block{Text: fmt.Sprintf("The steps below are tried in order, starting with step 1. A step is accepted when all its assumption checks pass; when a check fails the analysis moves to the step named for that failure. When the last step's checks fail too, that step is reported with the statement that its assumptions were not met. No model, transform or test other than those below is used.")})
	index := map[string]int{}
	for i, st := range e.Steps {
		index[st.ID] = i + 1
	}
	for i := range e.Steps {
		st := &e.Steps[i]
		var items []string
		items = append(items, describeModel(p, e, st))
		for _, c := range st.Checks {
			next := c.OnFail
			if next == "" {
				next = st.OnFail
			}
			items = append(items, describeCheck(c, next, index))
		}
		if len(st.Checks) == 0 {
			items = append(items, "No assumption checks: this step is accepted when it is reached.")
		}
		for k := range e.Hypotheses {
			items = append(items, describeAnswer(st, &e.Hypotheses[k]))
		}
		s.Blocks = append(s.Blocks, Block{Text: fmt.Sprintf("Step %d (%s).", i+1, code(st.ID))}, Block{Items: items})
	}
	return s
}

func amendmentsSection(p *plan.Plan) Section {
	s := Section{Heading: "Amendments"}
	if len(p.Trial.Amendments) == 0 {
		s.Blocks = []Block{{Text: "None: this is the plan as first registered."}}
		return s
	}
	var rows [][]string
	for _, a := range p.Trial.Amendments {
		rows = append(rows, []string{a.Version, a.Date, a.Reason, a.Changes})
	}
	s.Blocks = []Block{{Header: []string{"Version", "Date", "Reason", "What changed"}, Rows: rows}}
	return s
}

func describeModel(p *plan.Plan, e *plan.Endpoint, st *plan.Step) string {
	y := describeOutcome(p, e, st)
	if m := method.Default.ModelNamed(st.Model); m != nil {
		return m.Describe(st, y)
	}
	return fmt.Sprintf("Model %s of %s.", st.Model, y)
}

func describeOutcome(p *plan.Plan, e *plan.Endpoint, st *plan.Step) string {
	v := transformText(st.Transform, code(e.Response))
	switch st.Outcome.Derive {
	case plan.DeriveChange:
		return fmt.Sprintf("the change per unit from %s to %s of %s", code(st.Outcome.From), code(st.Outcome.To), v)
	case plan.DeriveBaseline:
		return fmt.Sprintf("%s at %s per unit, with its value at %s as a covariate (analysis of covariance on the baseline)", v, code(st.Outcome.To), code(st.Outcome.From))
	case plan.DeriveUnitMean:
		s := "the mean per unit of the sub-samples of " + v
		if st.Outcome.At != "" {
			s += " at " + code(st.Outcome.At)
		}
		return s
	}
	return v + " as measured"
}

func transformText(t plan.Transform, y string) string {
	switch t.Kind {
	case plan.TransformLog:
		return "log(" + y + ")"
	case plan.TransformLogOffset:
		return fmt.Sprintf("log(%s + %s)", y, fnum(t.Offset))
	case plan.TransformLog10:
		return "log10(" + y + ")"
	case plan.TransformSqrt:
		return "the square root of " + y
	case plan.TransformReciprocal:
		return "1 / " + y
	case plan.TransformArcsine:
		return "arcsin(sqrt(" + y + "))"
	case plan.TransformBoxCox:
		return fmt.Sprintf("the Box-Cox transform of %s with lambda = %s", y, fnum(t.Lambda))
	}
	return y
}

func describeCheck(c plan.Check, next string, index map[string]int) string {
	name := c.Test + " check"
	if m := method.Default.CheckNamed(c.Test); m != nil {
		name = m.Words
	}
	if len(c.By) > 0 {
		var by []string
		for _, b := range c.By {
			by = append(by, code(b))
		}
		name += " between the groups of " + strings.Join(by, " × ")
	}
	then := "this step is reported with the statement that its assumptions were not met"
	if next != "" {
		then = fmt.Sprintf("the analysis moves to step %d (%s)", index[next], code(next))
	}
	var nc string
	switch c.NotComputable {
	case plan.NotComputablePass:
		nc = " If it cannot be computed on the data, it counts as passed."
	case plan.NotComputableStop:
		nc = " If it cannot be computed on the data, the analysis of this endpoint stops and no step is reported."
	case plan.NotComputableFail:
		nc = " If it cannot be computed on the data, it counts as failed."
	}
	return fmt.Sprintf("The %s: if it gives p < %s, %s.%s", name, fnum(c.FailBelow), then, nc)
}

// describeAnswer says how step st answers hypothesis h if it is the step
// reported: the hypothesis's own adjustment and estimator, or what the
// step declares instead, or that the step omits it.
func describeAnswer(st *plan.Step, h *plan.Hypothesis) string {
	a := plan.AnswerOn(st, h)
	if a.Omit != "" {
		return fmt.Sprintf("If this step is reported, %s is not answered on it, as the plan declares: %s.", code(h.ID), strings.TrimSuffix(a.Omit, "."))
	}
	if h.Kind == plan.HypTerm {
		return fmt.Sprintf("If this step is reported, %s is the step's test of the term %s.", code(h.ID), strings.Join(codes(h.Term), " × "))
	}
	how := method.Default.PairingOf(st).Words()
	if h.Kind == plan.HypVersusControl || h.Kind == plan.HypPairwise {
		how += strings.Replace(adjustText(a.Adjust), ", unadjusted", ", not adjusted for multiplicity", 1)
	}
	declared := ""
	if a.Pos.Line > 0 {
		var was []string
		if a.Adjust != h.Adjust {
			was = append(was, "adjustment "+h.Adjust)
		}
		if a.Estimate != h.Estimate {
			was = append(was, "estimator "+h.Estimate)
		}
		if len(was) > 0 {
			declared = fmt.Sprintf(", as this step declares (the hypothesis itself declares %s)", strings.Join(was, " and "))
		}
	}
	return fmt.Sprintf("If this step is reported, %s is answered with %s%s.", code(h.ID), how, declared)
}

func describeHypothesis(p *plan.Plan, e *plan.Endpoint, h *plan.Hypothesis) string {
	factor := h.Factor
	if factor == "" {
		if ts := columnsWithRole(p, plan.RoleTreatment); len(ts) > 0 {
			factor = ts[0].Name
		}
	}
	side := sidesText(h.Sides)
	adj := adjustText(h.Adjust)
	alpha := alphaOf(h.Alpha)
	if h.Alpha == 0 {
		alpha = alphaOf(e.Alpha)
	}
	switch h.Kind {
	case plan.HypVersusControl:
		control := "the control"
		if c := findColumn(p, factor); c != nil && c.Control != "" {
			control = code(c.Control)
		}
		levels := "every other level"
		if len(h.Levels) > 0 {
			levels = joinAnd(codes(h.Levels))
		}
		return fmt.Sprintf("%s: %s of %s compared with %s (%s)%s, at alpha = %s.", code(h.ID), levels, code(factor), control, side, adj, fnum(alpha))
	case plan.HypPairwise:
		pairs := "all pairs of levels"
		if len(h.Pairs) > 0 {
			var ps []string
			for _, pr := range h.Pairs {
				ps = append(ps, strings.Join(codes(pr), " vs "))
			}
			pairs = strings.Join(ps, "; ")
		}
		return fmt.Sprintf("%s: pairwise comparisons of %s: %s (%s)%s, at alpha = %s.", code(h.ID), code(factor), pairs, side, adj, fnum(alpha))
	case plan.HypEquivalence:
		return fmt.Sprintf("%s: %s is equivalent to %s when the %s confidence interval of the %s lies within %s (two one-sided tests at alpha = %s).",
			code(h.ID), code(h.Test), code(h.Against), pct(1-2*alpha), marginQuantity(h.Margin), marginRange(h.Margin), fnum(alpha))
	case plan.HypNonInferiority:
		dir, bound, side, limit := "higher values are better", "lower", "above", marginLower(h.Margin)
		if h.Better == "lower" {
			dir, bound, side, limit = "lower values are better", "upper", "below", marginUpper(h.Margin)
		}
		return fmt.Sprintf("%s: %s is not inferior to %s (%s) when the %s bound of the one-sided %s confidence interval of the %s lies %s %s (alpha = %s).",
			code(h.ID), code(h.Test), code(h.Against), dir, bound, pct(1-alpha), marginQuantity(h.Margin), side, limit, fnum(alpha))
	case plan.HypTerm:
		return fmt.Sprintf("%s: the test of the model term %s, at alpha = %s.", code(h.ID), strings.Join(codes(h.Term), " × "), fnum(alpha))
	}
	return fmt.Sprintf("%s: %s.", code(h.ID), h.Kind)
}

func marginQuantity(m *plan.Margin) string {
	if m != nil && m.Scale == "ratio" {
		return "ratio of (geometric) means"
	}
	return "difference of means"
}

func marginRange(m *plan.Margin) string {
	if m == nil {
		return "the margin"
	}
	return fmt.Sprintf("[%s, %s]", fnum(m.Lower), fnum(m.Upper))
}

func marginLower(m *plan.Margin) string {
	if m == nil {
		return "the margin"
	}
	return fnum(m.Lower)
}

func marginUpper(m *plan.Margin) string {
	if m == nil {
		return "the margin"
	}
	return fnum(m.Upper)
}

func sidesText(s string) string {
	switch s {
	case "greater":
		return "one-sided, alternative: greater than"
	case "less":
		return "one-sided, alternative: less than"
	}
	return "two-sided"
}

func adjustText(a string) string {
	switch a {
	case plan.AdjustBonferroni:
		return ", Bonferroni-adjusted"
	case plan.AdjustHolm:
		return ", Holm-adjusted"
	case plan.AdjustSidak:
		return ", Šidák-adjusted (single-step)"
	case plan.AdjustHolmSidak:
		return ", Holm-Šidák-adjusted (step-down)"
	case plan.AdjustShaffer:
		return ", Shaffer-adjusted (closed test of all pairs)"
	case plan.AdjustHochberg:
		return ", Hochberg-adjusted"
	case plan.AdjustBH:
		return ", Benjamini-Hochberg false discovery rate"
	case plan.AdjustTukey:
		return ", Tukey simultaneous (studentised range)"
	case plan.AdjustDunnett:
		return ", Dunnett simultaneous (many-to-one)"
	}
	return ", unadjusted"
}

func describeColumn(p *plan.Plan, name string) string {
	c := findColumn(p, name)
	if c == nil {
		return code(name)
	}
	s := code(c.Name)
	if c.Label != "" {
		s += " (" + c.Label + ")"
	}
	if c.Unit != "" {
		s += ", in " + c.Unit
	}
	return s
}

func findColumn(p *plan.Plan, name string) *plan.Column {
	for i := range p.Columns {
		if p.Columns[i].Name == name {
			return &p.Columns[i]
		}
	}
	return nil
}

func columnsWithRole(p *plan.Plan, role string) []plan.Column {
	var out []plan.Column
	for _, c := range p.Columns {
		if c.Role == role {
			out = append(out, c)
		}
	}
	return out
}

func layoutName(l string) string {
	switch l {
	case "crd":
		return "completely randomised design"
	case "rcbd":
		return "randomised complete block design"
	case "latin-square":
		return "Latin square"
	case "split-plot":
		return "split-plot design"
	case "split-block":
		return "split-block (strip-plot) design"
	case "repeated":
		return "repeated measures on the same units"
	case "multi-site":
		return "multi-site trial"
	case "factorial":
		return "factorial design"
	}
	return l
}

func alphaOf(a float64) float64 {
	if a == 0 {
		return 0.05
	}
	return a
}

func fnum(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func pct(x float64) string { return strconv.FormatFloat(100*x, 'f', -1, 64) + "%" }

func rangeText(lo, hi *float64) string {
	l, h := "-inf", "+inf"
	if lo != nil {
		l = fnum(*lo)
	}
	if hi != nil {
		h = fnum(*hi)
	}
	return "[" + l + ", " + h + "]"
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

// Phrases shared with the method descriptions.
var (
	code       = method.Code
	codes      = method.Codes
	joinAnd    = method.JoinAnd
	termList   = method.TermList
	randomTerm = method.RandomTerm
)
