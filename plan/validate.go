package plan

import (
	"furrow/schema"

	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"
)

// Validate checks the meaning of a decoded plan (defaults filled, as Parse
// leaves it): references to columns and levels, roles, the fallback graph,
// transforms against declared ranges, the experimental unit, hypotheses
// and amendments. It returns the findings sorted; it does not modify p.
func Validate(p *Plan, m Methods) Diagnostics {
	if p == nil {
		return nil
	}
	if m == nil {
		panic("plan: Validate needs the build's Methods")
	}
	v := &validator{p: p, m: m, cols: map[string]*Column{}}
	v.columns()
	v.data()
	v.design()
	v.amendments()
	v.exclusions()
	v.derivedVars()
	v.endpoints()
	return v.ds.Sort()
}

type validator struct {
	p      *Plan
	m      Methods
	cols   map[string]*Column
	repeat *Column
	unit   *Column
	treat  *Column
	ds     Diagnostics
}

func (v *validator) add(sev Severity, code, path, msg string, related ...Pos) {
	v.ds = append(v.ds, Diagnostic{Severity: sev, Code: code, Pos: v.p.PosOf(path), Path: path, Summary: msg, Related: related})
}

func (v *validator) errf(code, path, format string, args ...any) {
	v.add(Error, code, path, fmt.Sprintf(format, args...))
}

func (v *validator) warnf(code, path, format string, args ...any) {
	v.add(Warning, code, path, fmt.Sprintf(format, args...))
}

func roleList(roles []string) string {
	if len(roles) == 1 {
		return roles[0]
	}
	return strings.Join(roles[:len(roles)-1], ", ") + " or " + roles[len(roles)-1]
}

// ref checks that name is a declared column with one of the roles; what
// says what names it ("fixed term", "compare"). It returns the column or nil.
func (v *validator) ref(path, what, name string, roles ...string) *Column {
	c := v.cols[name]
	if c == nil {
		names := make([]string, 0, len(v.cols))
		for _, col := range v.p.Columns {
			names = append(names, col.Name)
		}
		msg := fmt.Sprintf("%s names %q, which is not a declared column", what, name)
		if s := schema.Suggest(name, names); s != "" {
			msg += fmt.Sprintf(" (did you mean %q?)", s)
		}
		v.add(Error, "unknown-column", path, msg)
		return nil
	}
	if !slices.Contains(roles, c.Role) {
		msg := fmt.Sprintf("%s names %q, which has role %s; it takes a column with role %s", what, name, c.Role, roleList(roles))
		if c.Role == RoleUnit && what == "fixed term" {
			msg += "; the experimental unit belongs in a random term"
		}
		v.add(Error, "wrong-role", path, msg, c.Pos)
		return nil
	}
	return c
}

// level checks that lv is a declared level of column c.
func (v *validator) level(path, what string, c *Column, lv string) bool {
	if c == nil {
		return false
	}
	if len(c.Levels) == 0 {
		v.add(Error, "levels-undeclared", path, fmt.Sprintf("%s %q refers to a level of %s, which declares no levels", what, lv, c.Name), c.Pos)
		return false
	}
	if !slices.Contains(c.Levels, lv) {
		msg := fmt.Sprintf("%s %q is not a declared level of %s; its levels are %s", what, lv, c.Name, strings.Join(c.Levels, ", "))
		if s := schema.Suggest(lv, c.Levels); s != "" {
			msg += fmt.Sprintf(" (did you mean %q?)", s)
		}
		v.add(Error, "level-undeclared", path, msg, c.Pos)
		return false
	}
	return true
}

func (v *validator) columns() {
	single := map[string]**Column{RoleRepeat: &v.repeat, RoleUnit: &v.unit, RoleTreatment: &v.treat}
	for i := range v.p.Columns {
		c := &v.p.Columns[i]
		path := fmt.Sprintf("columns[%d]", i)
		if first, dup := v.cols[c.Name]; dup {
			v.add(Error, "duplicate-column", path+".name", fmt.Sprintf("column %q is declared twice", c.Name), first.Pos)
			continue
		}
		v.cols[c.Name] = c
		if slot, ok := single[c.Role]; ok {
			if *slot != nil {
				v.add(Error, "duplicate-role", path+".role", fmt.Sprintf("column %q is a second %s column; a plan has at most one (the first is %q)", c.Name, c.Role, (*slot).Name), (*slot).Pos)
			} else {
				*slot = c
			}
		}
		if (c.Min != nil || c.Max != nil) && !c.IsNumeric() {
			v.errf("range-not-numeric", path, "column %q has role %s, which takes no min or max; only response and covariate columns are numeric", c.Name, c.Role)
		}
		if c.Min != nil && c.Max != nil && *c.Min > *c.Max {
			v.errf("range-empty", path+".min", "min of %q is %s, above its max %s", c.Name, fnum(*c.Min), fnum(*c.Max))
		}
		if len(c.Levels) > 0 && !c.IsFactor() {
			v.errf("levels-not-factor", path+".levels", "column %q has role %s, which takes no levels", c.Name, c.Role)
		}
		if c.Role == RoleTreatment && len(c.Levels) == 1 {
			v.errf("too-few-levels", path+".levels", "treatment %q declares a single level; a comparison needs at least two", c.Name)
		}
		if c.Control != "" {
			switch {
			case c.Role != RoleTreatment && c.Role != RoleFactor:
				v.errf("control-not-factor", path+".control", "column %q has role %s; only treatment and factor columns have a control level", c.Name, c.Role)
			case len(c.Levels) == 0:
				v.errf("levels-undeclared", path+".control", "control %q of %q needs the column's levels declared", c.Control, c.Name)
			default:
				v.level(path+".control", "control", c, c.Control)
			}
		}
	}
}

func (v *validator) data() {
	d := v.p.Data
	switch d.Format {
	case "":
		v.errf("data-format", "data.file", "cannot tell the format of %q from its name; add format: csv or format: xlsx", d.File)
	case "csv":
		if d.Sheet != "" {
			v.errf("data-sheet", "data.sheet", "sheet applies to xlsx files only")
		}
		if d.Decimal == "," && d.Delimiter == "," {
			v.errf("data-decimal", "data.decimal", "decimal mark and delimiter are both \",\"; use delimiter \";\" with a decimal comma")
		}
		if why := delimiterProblem(d.Delimiter, d.Decimal); why != "" {
			v.errf("data-delimiter", "data.delimiter", "delimiter %q cannot separate fields: %s; use \",\", \";\", \"\\t\" (a tab) or \"|\"", d.Delimiter, why)
		}
	case "xlsx":
		if d.Delimiter != "" {
			v.errf("data-delimiter", "data.delimiter", "delimiter applies to csv files only")
		}
	}
}

// delimiterProblem says why a declared delimiter cannot separate CSV
// fields ("" when it can, or none is declared).
func delimiterProblem(delim, decimal string) string {
	r, n := utf8.DecodeRuneInString(delim)
	switch {
	case delim == "" || delim == `\t` || delim == "tab":
		return ""
	case n != len(delim):
		return "it is more than one character"
	case r == '\n' || r == '\r':
		return "a line break ends a row"
	case r == '"':
		return "a quote encloses a field"
	case r == '.' && (decimal == "" || decimal == "."):
		return "it is the decimal mark"
	case r == utf8.RuneError || r == '\uFEFF' || (unicode.IsControl(r) && r != '\t') || unicode.Is(unicode.Cf, r):
		return "it is an invisible control character"
	case unicode.IsLetter(r) || unicode.IsDigit(r) || r == '+' || r == '-':
		return "it can be part of a value"
	}
	return ""
}

func (v *validator) design() {
	v.leastUnits()
	need := map[string]string{"rcbd": RoleBlock, "multi-site": RoleSite, "repeated": RoleRepeat, "latin-square": RoleBlock}
	role, ok := need[v.p.Design.Layout]
	if !ok {
		return
	}
	for _, c := range v.p.Columns {
		if c.Role == role {
			return
		}
	}
	v.warnf("layout-columns", "design.layout", "layout %s usually has a %s column, and none is declared", v.p.Design.Layout, role)
}

// leastUnits checks the plan's rule for lost units: a plan that declares
// replicates says how many units a cell may lose (otherwise what a lost
// plot does to the run would be chosen after the data are seen), and the
// least count is one a complete trial meets.
func (v *validator) leastUnits() {
	g := v.p.Design
	l := g.LeastUnits
	switch {
	case l == nil && g.Replicates > 0:
		v.errf("least-units-undeclared", "design.replicates",
			"design declares replicates: %d but not what the analysis accepts when units are lost; add least-units: {per: cell, count: N, below: stop} under design, with N the fewest units per cell the analysis accepts (at most %d), or below: warn to go on with a warning below N",
			g.Replicates, g.Replicates)
		return
	case l == nil:
		return
	case g.Replicates <= 0:
		v.errf("least-units-without-replicates", "design.least-units",
			"least-units needs design.replicates: lost units are counted against the declared units per cell")
		return
	}
	most := g.Replicates
	if l.Per == LeastPerTreatment {
		if v.treat == nil {
			v.errf("least-units-no-treatment", "design.least-units.per", "least-units per: treatment needs a column with role treatment")
			return
		}
		// The cells of one treatment level: the product of the other
		// factors' levels, known only when each declares them.
		for _, c := range v.p.Columns {
			if c.Role != RoleFactor {
				continue
			}
			if len(c.Levels) == 0 {
				return
			}
			most *= len(c.Levels)
		}
	}
	if l.Count > most {
		what := fmt.Sprintf("the %d replicates per cell", g.Replicates)
		if l.Per == LeastPerTreatment {
			what = fmt.Sprintf("the %d units a treatment level has when no unit is lost", most)
		}
		v.errf("least-units-above-replicates", "design.least-units.count",
			"least-units count %d is more than %s; no trial, however complete, would meet it", l.Count, what)
	}
}

func (v *validator) amendments() {
	t := v.p.Trial
	var prev time.Time
	var prevPos Pos
	for i, a := range t.Amendments {
		path := fmt.Sprintf("trial.amendments[%d]", i)
		d, err := time.Parse("2006-01-02", a.Date)
		if err != nil {
			v.errf("amendment-date", path+".date", "amendment date %q is not a calendar date written YYYY-MM-DD", a.Date)
			continue
		}
		if !prev.IsZero() && d.Before(prev) {
			v.add(Error, "amendment-order", path+".date", fmt.Sprintf("amendment dated %s comes after one dated %s; list amendments oldest first", a.Date, prev.Format("2006-01-02")), prevPos)
		}
		prev, prevPos = d, v.p.PosOf(path+".date")
	}
	if n := len(t.Amendments); n > 0 && t.Amendments[n-1].Version != t.Version {
		v.add(Error, "amendment-version", "trial.version", fmt.Sprintf("trial version %q differs from %q, the version the last amendment produced", t.Version, t.Amendments[n-1].Version), v.p.PosOf(fmt.Sprintf("trial.amendments[%d].version", n-1)))
	}
}

func (v *validator) exclusions() {
	ids := map[string]string{}
	for i, e := range v.p.Exclusions {
		path := fmt.Sprintf("exclusions[%d]", i)
		if first, dup := ids[e.ID]; dup {
			v.add(Error, "duplicate-id", path+".id", fmt.Sprintf("exclusion id %q is used twice", e.ID), v.p.PosOf(first))
		} else {
			ids[e.ID] = path + ".id"
		}
		switch e.When {
		case WhenMissing, WhenOutOfRange:
			if e.Column == "" {
				v.errf("exclusion-column", path, "exclusion %q needs a column to look at", e.ID)
				break
			}
			if len(e.Units) > 0 {
				v.errf("exclusion-units", path+".units", "units applies to exclusions with when: listed only")
			}
			c := v.ref(path+".column", "exclusion", e.Column, RoleResponse, RoleCovariate, RoleTreatment, RoleFactor, RoleUnit, RoleRepeat, RoleBlock, RoleSite, RoleLabel)
			if c != nil && e.When == WhenOutOfRange && c.Min == nil && c.Max == nil {
				v.errf("range-undeclared", path+".column", "exclusion %q drops values out of range, but %q declares no min or max", e.ID, c.Name)
			}
		case WhenListed:
			if e.Column != "" {
				v.errf("exclusion-column", path+".column", "exclusions with when: listed name units, not a column")
			}
			if len(e.Units) == 0 {
				v.errf("exclusion-units", path, "exclusion %q lists no units", e.ID)
			}
			if v.unit == nil {
				v.errf("unit-undeclared", path, "exclusion %q lists units, but no column has role unit", e.ID)
			}
			if e.Drop == DropRow {
				v.errf("exclusion-drop", path+".drop", "a listed unit is dropped whole; use drop: unit")
			}
		}
		if e.At != "" {
			if v.repeat == nil {
				v.errf("repeat-undeclared", path+".at", "at names a time point, but no column has role repeat")
			} else {
				v.level(path+".at", "at", v.repeat, e.At)
			}
		}
	}
}

func (v *validator) endpoints() {
	primary := 0
	ids := map[string]string{}
	for i := range v.p.Endpoints {
		e := &v.p.Endpoints[i]
		path := fmt.Sprintf("endpoints[%d]", i)
		if e.Primary {
			primary++
		}
		if first, dup := ids[e.ID]; dup {
			v.add(Error, "duplicate-id", path+".id", fmt.Sprintf("endpoint id %q is used twice", e.ID), v.p.PosOf(first))
		} else {
			ids[e.ID] = path + ".id"
		}
		resp := v.ref(path+".response", "response", e.Response, RoleResponse)
		if e.Alpha <= 0 || e.Alpha >= 1 {
			v.errf("alpha-range", path+".alpha", "alpha must be between 0 and 1, both excluded; got %s", fnum(e.Alpha))
		}
		v.steps(e, path, resp)
		v.hypotheses(e, path)
		v.answers(e, path)
		v.notComputable(e, path)
	}
	if len(v.p.Endpoints) > 0 && primary == 0 {
		v.errf("no-primary", "endpoints", "no endpoint is marked primary: true; a plan needs at least one primary endpoint")
	}
}

var (
	fixedRoles  = []string{RoleTreatment, RoleFactor, RoleRepeat, RoleBlock, RoleSite, RoleCovariate}
	randomRoles = []string{RoleTreatment, RoleFactor, RoleUnit, RoleRepeat, RoleBlock, RoleSite}
	groupRoles  = []string{RoleTreatment, RoleFactor, RoleRepeat, RoleBlock, RoleSite}
	compRoles   = []string{RoleTreatment, RoleFactor, RoleRepeat}
)

func (v *validator) steps(e *Endpoint, path string, resp *Column) {
	ids := map[string]int{}
	for j, s := range e.Steps {
		sp := fmt.Sprintf("%s.steps[%d]", path, j)
		if first, dup := ids[s.ID]; dup {
			v.add(Error, "duplicate-id", sp+".id", fmt.Sprintf("step id %q is used twice in endpoint %q", s.ID, e.ID), v.p.PosOf(fmt.Sprintf("%s.steps[%d].id", path, first)))
			continue
		}
		ids[s.ID] = j
	}
	for j := range e.Steps {
		v.step(e, &e.Steps[j], fmt.Sprintf("%s.steps[%d]", path, j), resp)
	}
	v.fallbacks(e, path, ids)
}

func (v *validator) step(e *Endpoint, s *Step, sp string, resp *Column) {
	q := strconv.Quote(s.ID)
	// Terms.
	for k, t := range s.Fixed {
		tp := fmt.Sprintf("%s.fixed[%d]", sp, k)
		for m, name := range t.Columns {
			cp := tp
			if len(t.Columns) > 1 {
				cp = fmt.Sprintf("%s[%d]", tp, m)
			}
			v.ref(cp, "fixed term", name, fixedRoles...)
		}
		if hasDup(t.Columns) {
			v.errf("term-duplicate", tp, "fixed term of step %s names a column twice", q)
		}
	}
	for k, t := range s.Random {
		tp := fmt.Sprintf("%s.random[%d]", sp, k)
		grouping := false
		for m, name := range t.Columns {
			cp := tp
			if len(t.Columns) > 1 {
				cp = fmt.Sprintf("%s[%d]", tp, m)
			}
			if c := v.ref(cp, "random term", name, randomRoles...); c != nil && c.Role != RoleTreatment && c.Role != RoleRepeat {
				grouping = true
			}
		}
		if !grouping && len(t.Columns) > 0 && allDeclared(v.cols, t.Columns) {
			v.errf("random-no-grouping", tp, "random term %s of step %s has no unit, block, site or factor column; a treatment or repeat factor is random only within a grouping", strings.Join(t.Columns, ":"), q)
		}
	}
	for k, name := range s.Covariates {
		v.ref(fmt.Sprintf("%s.covariates[%d]", sp, k), "covariate", name, RoleCovariate)
	}
	// Model shape, from the rules of the model kind.
	r, ok := v.m.Model(s.Model)
	if !ok {
		v.errf("unknown-model", sp+".model", "model %q is not available in this build", s.Model)
		return
	}
	if r.Model {
		if r.Fixed == Required && len(s.Fixed) == 0 {
			v.errf("fixed-missing", sp+".model", "%s step %s needs fixed terms", s.Model, q)
		}
		if r.Random == Required && len(s.Random) == 0 {
			v.errf("random-missing", sp+".model", "%s step %s needs at least one random term; without one use model: %s", s.Model, q, v.modelWhere(func(o ModelRules) bool { return o.Model && o.Random == Forbidden }))
		}
		if r.Random == Forbidden && len(s.Random) > 0 {
			v.errf("random-in-linear", sp+".random", "%s step %s cannot have random terms; use model: %s", s.Model, q, v.modelWhere(func(o ModelRules) bool { return o.Model && o.Random == Required }))
		}
		if len(r.Estimation) == 0 && s.Estimation != "" {
			v.errf("estimation-linear", sp+".estimation", "estimation applies to %s models only", v.modelsWhere(" and ", func(o ModelRules) bool { return len(o.Estimation) > 0 }))
		}
		if s.DF != "" && !slices.Contains(r.DF, s.DF) {
			v.errf("df-linear", sp+".df", "df %s applies to %s models; a %s model uses %s degrees of freedom", s.DF, v.modelsWhere(" and ", func(o ModelRules) bool { return slices.Contains(o.DF, s.DF) }), s.Model, r.DF[0])
		}
		if s.Compare != "" || s.Within != "" {
			v.errf("compare-parametric", sp, "compare and within apply to welch and rank steps; a %s step tests its fixed terms", s.Model)
		}
		if r.Anova && (s.Anova < 1 || s.Anova > 3) {
			v.errf("anova-type", sp+".anova", "anova type must be 1, 2 or 3; got %d", s.Anova)
		}
	} else {
		if len(s.Fixed) > 0 || len(s.Random) > 0 || len(s.Covariates) > 0 {
			v.errf("terms-not-model", sp, "%s step %s takes no fixed, random or covariate terms; name the factor compared in compare", s.Model, q)
		}
		if s.Estimation != "" || s.DF != "" || s.Anova != 0 {
			v.errf("options-not-model", sp, "estimation, df and anova apply to %s steps, not to %s", v.modelsWhere(" and ", func(o ModelRules) bool { return len(o.Estimation) > 0 || len(o.DF) > 0 || o.Anova }), s.Model)
		}
		var cmpCol *Column
		needCompare := r.Compare == Required && !(r.CompareOptionalPerUnit && perUnit(s.Outcome.Derive))
		if s.Compare == "" && needCompare {
			v.errf("compare-missing", sp, "%s step %s needs compare: the factor whose levels are compared", s.Model, q)
		} else if s.Compare != "" {
			cmpCol = v.ref(sp+".compare", "compare", s.Compare, compRoles...)
		}
		if cmpCol != nil && len(cmpCol.Levels) > 0 && r.CompareLevels > 0 && len(cmpCol.Levels) != r.CompareLevels {
			v.errf("compare-levels", sp+".compare", "%s compares %s levels, but %q declares %d", s.Model, countWord(r.CompareLevels), cmpCol.Name, len(cmpCol.Levels))
		}
		needWithin := r.Within == Required || (r.WithinWithCompare && s.Compare != "")
		switch {
		case needWithin && s.Within == "":
			v.errf("within-missing", sp, "%s step %s needs within: the blocks or strata the comparison is made in", s.Model, q)
		case !needWithin && s.Within != "":
			v.errf("within-not-model", sp+".within", "within does not apply to %s", s.Model)
		case s.Within != "":
			v.ref(sp+".within", "within", s.Within, RoleBlock, RoleSite, RoleUnit)
		}
		if len(s.Checks) > 0 && r.Ranks {
			v.warnf("checks-rank", sp+".checks", "assumption checks on rank step %s test residuals of no fitted model; they are run but usually not wanted", q)
		}
	}
	v.outcome(s, sp)
	v.transform(s, sp, resp)
	v.pseudoReplication(s, sp)
	for k, c := range s.Checks {
		cp := fmt.Sprintf("%s.checks[%d]", sp, k)
		if c.FailBelow <= 0 || c.FailBelow >= 1 {
			v.errf("threshold-range", cp+".fail-below", "fail-below must be between 0 and 1, both excluded; got %s", fnum(c.FailBelow))
		}
		cr, ok := v.m.Check(c.Test)
		if !ok {
			v.errf("unknown-check", cp+".test", "check %q is not available in this build", c.Test)
			continue
		}
		if cr.Grouped {
			if len(c.By) == 0 {
				v.errf("by-missing", cp, "%s groups residuals, but there is no treatment column to group by; add by", c.Test)
			}
			for m, name := range c.By {
				v.ref(fmt.Sprintf("%s.by[%d]", cp, m), "by", name, groupRoles...)
			}
		} else if len(c.By) > 0 {
			v.errf("by-not-test", cp+".by", "by applies to %s, not to %s", v.checksWhere(" and ", func(o CheckRules) bool { return o.Grouped }), c.Test)
		}
	}
}

func allDeclared(cols map[string]*Column, names []string) bool {
	for _, n := range names {
		if cols[n] == nil {
			return false
		}
	}
	return true
}

func hasDup(xs []string) bool {
	for i := range xs {
		if slices.Contains(xs[:i], xs[i]) {
			return true
		}
	}
	return false
}

func perUnit(derive string) bool { return derive == DeriveChange || derive == DeriveBaseline }

func (v *validator) outcome(s *Step, sp string) {
	o := s.Outcome
	op := sp + ".outcome"
	switch o.Derive {
	case DeriveChange, DeriveBaseline:
		if v.repeat == nil {
			v.errf("repeat-undeclared", op+".derive", "derive: %s needs a column with role repeat (the time points)", o.Derive)
			return
		}
		if v.unit == nil {
			v.errf("unit-undeclared", op+".derive", "derive: %s pairs values of the same unit, but no column has role unit", o.Derive)
		}
		if o.From == "" || o.To == "" {
			v.errf("outcome-levels", op, "derive: %s needs from and to, two levels of %s", o.Derive, v.repeat.Name)
		} else {
			v.level(op+".from", "from", v.repeat, o.From)
			v.level(op+".to", "to", v.repeat, o.To)
			if o.From == o.To {
				v.errf("outcome-levels", op+".to", "from and to are the same level %q", o.To)
			}
		}
		if o.At != "" {
			v.errf("outcome-at", op+".at", "at applies to derive: unit-mean only")
		}
		if r, ok := v.m.Model(s.Model); o.Derive == DeriveBaseline && ok && !r.Model {
			v.errf("baseline-model", op+".derive", "derive: baseline adds the baseline value as a covariate, which needs a linear or mixed model")
		}
	case DeriveUnitMean:
		if v.unit == nil {
			v.errf("unit-undeclared", op+".derive", "derive: unit-mean averages per unit, but no column has role unit")
		}
		if o.From != "" || o.To != "" {
			v.errf("outcome-levels", op, "from and to apply to derive: change and baseline only")
		}
		if o.At != "" {
			if v.repeat == nil {
				v.errf("repeat-undeclared", op+".at", "at names a time point, but no column has role repeat")
			} else {
				v.level(op+".at", "at", v.repeat, o.At)
			}
		}
	default:
		if o.From != "" || o.To != "" || o.At != "" {
			v.errf("outcome-levels", op, "from, to and at do not apply to derive: raw")
		}
	}
}

func (v *validator) transform(s *Step, sp string, resp *Column) {
	t := s.Transform
	tp := sp + ".transform"
	if t.HasOffset && t.Kind != TransformLogOffset {
		v.errf("transform-offset", tp+".offset", "offset applies to kind log-offset only")
	}
	if t.HasLambda && t.Kind != TransformBoxCox {
		v.errf("transform-lambda", tp+".lambda", "lambda applies to kind box-cox only")
	}
	if t.Kind == TransformLogOffset && !t.HasOffset {
		v.errf("transform-offset", tp+".kind", "log-offset needs an offset: the constant added before the log")
	}
	if t.Kind == TransformBoxCox && !t.HasLambda {
		v.errf("transform-lambda", tp+".kind", "box-cox needs a fixed lambda")
	}
	if t.Kind == TransformBoxCox && (math.IsNaN(t.Lambda) || math.Abs(t.Lambda) > 5) {
		v.errf("transform-lambda", tp+".lambda", "box-cox lambda must be between -5 and 5")
	}
	if resp == nil {
		return
	}
	needMin := func(bound float64, strict bool, rule string) {
		kp := tp + ".kind"
		if resp.Min == nil {
			v.add(Warning, "range-undeclared", kp, fmt.Sprintf("%s needs %s, but %q declares no min; the data will be checked instead", t.Kind, rule, resp.Name), resp.Pos)
			return
		}
		if *resp.Min < bound || (strict && *resp.Min == bound) {
			v.add(Error, "transform-domain", kp, fmt.Sprintf("%s needs %s, but %q may be as low as %s (its declared min)", t.Kind, rule, resp.Name, fnum(*resp.Min)), resp.Pos)
		}
	}
	switch t.Kind {
	case TransformLog, TransformLog10, TransformReciprocal:
		needMin(0, true, "values above 0")
	case TransformBoxCox:
		needMin(0, true, "values above 0")
	case TransformLogOffset:
		if t.HasOffset {
			if resp.Min == nil {
				needMin(0, true, "value + offset above 0")
			} else if *resp.Min+t.Offset <= 0 {
				v.add(Error, "transform-domain", tp+".offset", fmt.Sprintf("log-offset needs value + offset above 0, but %q may be as low as %s and the offset is %s", resp.Name, fnum(*resp.Min), fnum(t.Offset)), resp.Pos)
			}
		}
	case TransformSqrt:
		needMin(0, false, "values of 0 or more")
	case TransformArcsine:
		needMin(0, false, "proportions between 0 and 1")
		kp := tp + ".kind"
		if resp.Max == nil {
			v.add(Warning, "range-undeclared", kp, fmt.Sprintf("arcsine-sqrt needs proportions between 0 and 1, but %q declares no max; the data will be checked instead", resp.Name), resp.Pos)
		} else if *resp.Max > 1 {
			v.add(Error, "transform-domain", kp, fmt.Sprintf("arcsine-sqrt needs proportions between 0 and 1, but %q may be as high as %s (its declared max)", resp.Name, fnum(*resp.Max)), resp.Pos)
		}
	}
}

// pseudoReplication refuses a step that would treat several measurements
// of one experimental unit as independent replicates (Hurlbert 1984, Ecol
// Monogr 54:187).
func (v *validator) pseudoReplication(s *Step, sp string) {
	repeated := v.repeat != nil
	sub := v.p.Design.Subsamples > 1
	many := false
	why := ""
	switch s.Outcome.Derive {
	case DeriveRaw, "":
		switch {
		case repeated:
			many, why = true, fmt.Sprintf("each unit is measured at several levels of %s", v.repeat.Name)
		case sub:
			many, why = true, fmt.Sprintf("each unit has %d sub-samples", v.p.Design.Subsamples)
		}
	case DeriveUnitMean:
		if repeated && s.Outcome.At == "" {
			many, why = true, fmt.Sprintf("unit-mean without at keeps one value per unit and level of %s", v.repeat.Name)
		}
	}
	if !many {
		return
	}
	if v.unit == nil {
		v.errf("unit-undeclared", sp, "%s, but no column has role unit; declare the experimental unit (the plot, pen or animal that received a treatment)", why)
		return
	}
	u := v.unit.Name
	r, _ := v.m.Model(s.Model)
	if r.UnitRandom {
		for _, t := range s.Random {
			if slices.Contains(t.Columns, u) {
				return
			}
		}
	}
	if r.UnitWithin && s.Within == u {
		return
	}
	v.add(Error, "pseudo-replication", sp+".model", fmt.Sprintf(
		"step %q treats repeated measurements of the same %s as independent replicates (%s); the experimental unit is %s, so use a mixed model with a random term containing %s, or derive one value per unit (change, baseline or unit-mean)",
		s.ID, u, why, u, u), v.unit.Pos)
}

// fallbacks checks the on-fail graph of one endpoint: targets exist, no
// cycle, every step reachable from the first.
func (v *validator) fallbacks(e *Endpoint, path string, ids map[string]int) {
	n := len(e.Steps)
	next := make([][]int, n)
	for j, s := range e.Steps {
		sp := fmt.Sprintf("%s.steps[%d]", path, j)
		targets := []struct{ path, id string }{}
		if s.OnFail != "" {
			targets = append(targets, struct{ path, id string }{sp + ".on-fail", s.OnFail})
		}
		for k, c := range s.Checks {
			if c.OnFail != "" {
				targets = append(targets, struct{ path, id string }{fmt.Sprintf("%s.checks[%d].on-fail", sp, k), c.OnFail})
			}
		}
		for _, t := range targets {
			k, ok := ids[t.id]
			switch {
			case !ok:
				names := make([]string, 0, n)
				for _, s := range e.Steps {
					names = append(names, s.ID)
				}
				msg := fmt.Sprintf("on-fail names step %q, which endpoint %q does not have", t.id, e.ID)
				if sug := schema.Suggest(t.id, names); sug != "" {
					msg += fmt.Sprintf(" (did you mean %q?)", sug)
				}
				v.add(Error, "unknown-step", t.path, msg)
			case k == j:
				v.errf("fallback-self", t.path, "step %q falls back to itself", s.ID)
			default:
				if !slices.Contains(next[j], k) {
					next[j] = append(next[j], k)
				}
			}
		}
	}
	// Cycle detection by depth-first search with three colours.
	color := make([]int, n)
	var cycleAt = -1
	var visit func(int) bool
	visit = func(j int) bool {
		color[j] = 1
		for _, k := range next[j] {
			if color[k] == 1 {
				cycleAt = k
				return true
			}
			if color[k] == 0 && visit(k) {
				return true
			}
		}
		color[j] = 2
		return false
	}
	for j := 0; j < n; j++ {
		if color[j] == 0 && visit(j) {
			break
		}
	}
	if cycleAt >= 0 {
		// Name the cycle from its first step.
		cyc := []string{e.Steps[cycleAt].ID}
		seen := map[int]bool{cycleAt: true}
		cur := cycleAt
		for {
			moved := false
			for _, k := range next[cur] {
				if k == cycleAt {
					cyc = append(cyc, e.Steps[k].ID)
					moved = false
					cur = -1
					break
				}
				if !seen[k] && reaches(next, k, cycleAt) {
					seen[k] = true
					cyc = append(cyc, e.Steps[k].ID)
					cur = k
					moved = true
					break
				}
			}
			if !moved {
				break
			}
		}
		v.errf("fallback-cycle", fmt.Sprintf("%s.steps[%d].id", path, cycleAt), "fallbacks of endpoint %q form a cycle: %s; each failure must lead to a later, different analysis", e.ID, strings.Join(cyc, " -> "))
	}
	// Reachability from the first step.
	if n == 0 {
		return
	}
	reach := make([]bool, n)
	stack := []int{0}
	reach[0] = true
	for len(stack) > 0 {
		j := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for _, k := range next[j] {
			if !reach[k] {
				reach[k] = true
				stack = append(stack, k)
			}
		}
	}
	for j := 1; j < n; j++ {
		if !reach[j] {
			v.errf("unreachable-step", fmt.Sprintf("%s.steps[%d].id", path, j), "step %q can never run: no on-fail leads to it from the first step %q", e.Steps[j].ID, e.Steps[0].ID)
		}
	}
}

func reaches(next [][]int, from, to int) bool {
	seen := make([]bool, len(next))
	stack := []int{from}
	for len(stack) > 0 {
		j := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if j == to {
			return true
		}
		if seen[j] {
			continue
		}
		seen[j] = true
		stack = append(stack, next[j]...)
	}
	return false
}

func isLogType(kind string) bool {
	return kind == TransformLog || kind == TransformLog10 || kind == TransformLogOffset
}

func (v *validator) hypotheses(e *Endpoint, path string) {
	ids := map[string]string{}
	for k := range e.Hypotheses {
		h := &e.Hypotheses[k]
		hp := fmt.Sprintf("%s.hypotheses[%d]", path, k)
		q := strconv.Quote(h.ID)
		if first, dup := ids[h.ID]; dup {
			v.add(Error, "duplicate-id", hp+".id", fmt.Sprintf("hypothesis id %q is used twice in endpoint %q", h.ID, e.ID), v.p.PosOf(first))
		} else {
			ids[h.ID] = hp + ".id"
		}
		if h.Alpha <= 0 || h.Alpha >= 1 {
			v.errf("alpha-range", hp+".alpha", "alpha must be between 0 and 1, both excluded; got %s", fnum(h.Alpha))
		}
		var f *Column
		if h.Kind != HypTerm {
			if h.Factor == "" {
				v.errf("factor-missing", hp, "hypothesis %s needs factor: no treatment column is declared to default to", q)
			} else {
				f = v.ref(hp+".factor", "factor", h.Factor, compRoles...)
			}
		} else if h.Factor != "" {
			v.errf("factor-term", hp+".factor", "a term hypothesis names its term, not a factor")
		}
		if len(h.Levels) > 0 && h.Kind != HypVersusControl {
			v.errf("levels-not-kind", hp+".levels", "levels applies to versus-control hypotheses only")
		}
		if len(h.Pairs) > 0 && h.Kind != HypPairwise {
			v.errf("pairs-not-kind", hp+".pairs", "pairs applies to pairwise hypotheses only")
		}
		if len(h.Term) > 0 && h.Kind != HypTerm {
			v.errf("term-not-kind", hp+".term", "term applies to term hypotheses only")
		}
		ni := h.Kind == HypEquivalence || h.Kind == HypNonInferiority
		if !ni && (h.Test != "" || h.Against != "" || h.Margin != nil) {
			v.errf("margin-not-kind", hp, "test, against and margin apply to equivalence and non-inferiority hypotheses only")
		}
		if h.Better != "" && h.Kind != HypNonInferiority {
			v.errf("better-not-kind", hp+".better", "better applies to non-inferiority hypotheses only")
		}
		if msg := adjustKind(h.Adjust, h); msg != "" {
			v.errf("adjust-kind", hp+".adjust", "%s", msg)
		}
		switch h.Kind {
		case HypVersusControl:
			if f != nil {
				if f.Control == "" {
					v.add(Error, "control-missing", hp+".factor", fmt.Sprintf("versus-control hypothesis %s needs a control level on %q", q, f.Name), f.Pos)
				}
				for m, lv := range h.Levels {
					lp := fmt.Sprintf("%s.levels[%d]", hp, m)
					if v.level(lp, "level", f, lv) && lv == f.Control {
						v.errf("level-is-control", lp, "level %q is the control itself", lv)
					}
				}
			}
		case HypPairwise:
			for m, pr := range h.Pairs {
				pp := fmt.Sprintf("%s.pairs[%d]", hp, m)
				if len(pr) != 2 {
					v.errf("pair-size", pp, "a pair names exactly two levels")
					continue
				}
				if f != nil {
					v.level(pp+"[0]", "level", f, pr[0])
					v.level(pp+"[1]", "level", f, pr[1])
				}
				if pr[0] == pr[1] {
					v.errf("pair-size", pp, "a pair names two different levels; got %q twice", pr[0])
				}
			}
		case HypEquivalence, HypNonInferiority:
			v.margined(e, h, hp, f)
		case HypTerm:
			v.termHypothesis(e, h, hp)
		}
	}
}

func (v *validator) margined(e *Endpoint, h *Hypothesis, hp string, f *Column) {
	q := strconv.Quote(h.ID)
	if h.Test == "" || h.Against == "" {
		v.errf("levels-missing", hp, "%s hypothesis %s needs test and against levels", h.Kind, q)
	} else {
		if f != nil {
			v.level(hp+".test", "test", f, h.Test)
			v.level(hp+".against", "against", f, h.Against)
		}
		if h.Test == h.Against {
			v.errf("levels-same", hp+".against", "test and against are the same level %q", h.Test)
		}
	}
	m := h.Margin
	if m == nil {
		v.errf("margin-missing", hp, "%s hypothesis %s needs a margin", h.Kind, q)
		return
	}
	mp := hp + ".margin"
	ratio := m.Scale == "ratio"
	centre := 0.0
	if ratio {
		centre = 1
		if (m.HasLower && m.Lower <= 0) || (m.HasUpper && m.Upper <= 0) {
			v.errf("margin-range", mp, "ratio margins must be above 0")
			return
		}
	}
	if h.Kind == HypEquivalence {
		if !m.HasLower || !m.HasUpper {
			v.errf("margin-bounds", mp, "an equivalence margin needs both lower and upper")
		} else if !(m.Lower < centre && centre < m.Upper) {
			v.errf("margin-range", mp, "an equivalence margin must have lower < %s < upper; got %s to %s", fnum(centre), fnum(m.Lower), fnum(m.Upper))
		}
	} else {
		switch h.Better {
		case "lower":
			if !m.HasUpper {
				v.errf("margin-bounds", mp, "non-inferiority with better: lower needs an upper margin")
			} else if m.Upper <= centre {
				v.errf("margin-range", mp+".upper", "upper margin must be above %s; got %s", fnum(centre), fnum(m.Upper))
			}
			if m.HasLower {
				v.errf("margin-bounds", mp+".lower", "non-inferiority with better: lower takes an upper margin only")
			}
		default:
			if !m.HasLower {
				v.errf("margin-bounds", mp, "non-inferiority with better: higher needs a lower margin")
			} else if m.Lower >= centre {
				v.errf("margin-range", mp+".lower", "lower margin must be below %s; got %s", fnum(centre), fnum(m.Lower))
			}
			if m.HasUpper {
				v.errf("margin-bounds", mp+".upper", "non-inferiority with better: higher takes a lower margin only")
			}
		}
	}

}

func (v *validator) termHypothesis(e *Endpoint, h *Hypothesis, hp string) {
	if len(h.Term) == 0 {
		v.errf("term-missing", hp, "term hypothesis %q needs a term", h.ID)
		return
	}
	for m, name := range h.Term {
		p := hp + ".term"
		if len(h.Term) > 1 {
			p = fmt.Sprintf("%s[%d]", p, m)
		}
		if v.ref(p, "term", name, fixedRoles...) == nil {
			return
		}
	}
	want := slices.Sorted(slices.Values(h.Term))
	for _, s := range e.Steps {
		if r, ok := v.m.Model(s.Model); !ok || !r.Model {
			continue
		}
		for _, t := range s.Fixed {
			if slices.Equal(slices.Sorted(slices.Values(t.Columns)), want) {
				return
			}
		}
	}
	v.errf("term-not-fitted", hp+".term", "term %s is not a fixed term of any %s step of endpoint %q", strings.Join(h.Term, ":"), v.modelsWhere(" or ", func(o ModelRules) bool { return o.Model }), e.ID)
}

// fnum formats a number for a message: shortest exact form.
func fnum(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

// modelsWhere joins, with sep before the last, the model kinds a plan
// can name whose rules satisfy keep, in registry order.
func (v *validator) modelsWhere(sep string, keep func(ModelRules) bool) string {
	var names []string
	for _, name := range v.m.Models() {
		if r, ok := v.m.Model(name); ok && keep(r) {
			names = append(names, name)
		}
	}
	return joinWith(names, sep)
}

// checksWhere joins the checks whose rules satisfy keep, in registry order.
func (v *validator) checksWhere(sep string, keep func(CheckRules) bool) string {
	var names []string
	for _, name := range v.m.Checks() {
		if r, ok := v.m.Check(name); ok && keep(r) {
			names = append(names, name)
		}
	}
	return joinWith(names, sep)
}

// modelWhere names the first model kind whose rules satisfy keep.
func (v *validator) modelWhere(keep func(ModelRules) bool) string {
	for _, name := range v.m.Models() {
		if r, ok := v.m.Model(name); ok && keep(r) {
			return name
		}
	}
	return ""
}

// joinWith joins names as "a, b and c" (sep " and ") or "a, b or c".
func joinWith(names []string, sep string) string {
	switch len(names) {
	case 0:
		return ""
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + sep + names[len(names)-1]
}

// countWord writes a small count as a word.
func countWord(n int) string {
	if words := []string{"no", "one", "two", "three", "four"}; n >= 0 && n < len(words) {
		return words[n]
	}
	return strconv.Itoa(n)
}

// adjustments lists every multiplicity adjustment, in plan-language order.
var adjustments = []string{AdjustNone, AdjustBonferroni, AdjustSidak, AdjustHolm, AdjustHolmSidak, AdjustHochberg, AdjustBH, AdjustShaffer, AdjustTukey, AdjustDunnett}

// adjustKind says why an adjustment does not suit a hypothesis ("" when
// it does): dunnett is many-to-one, tukey and shaffer are for all pairs.
func adjustKind(adj string, h *Hypothesis) string {
	switch adj {
	case AdjustDunnett:
		if h.Kind != HypVersusControl {
			return "dunnett adjusts comparisons with a control; use it with versus-control hypotheses only"
		}
	case AdjustTukey:
		if h.Kind != HypPairwise {
			return "tukey adjusts all pairwise comparisons; use it with pairwise hypotheses only"
		}
	case AdjustShaffer:
		if h.Kind != HypPairwise || len(h.Pairs) > 0 {
			return "shaffer refines the closed test of all pairwise comparisons of a factor's levels; use it with a pairwise hypothesis over all pairs (no pairs list)"
		}
	}
	return ""
}

// answers checks that every step of the endpoint answers every hypothesis
// as declared, or declares how it does (or that it does not): the run
// never substitutes an adjustment, an estimator or a test for the
// declared one, so a plan that leaves that choice open is refused here.
func (v *validator) answers(e *Endpoint, path string) {
	hyps := map[string]int{}
	var names []string
	for k, h := range e.Hypotheses {
		hyps[h.ID] = k
		names = append(names, h.ID)
	}
	for j := range e.Steps {
		s := &e.Steps[j]
		sp := fmt.Sprintf("%s.steps[%d]", path, j)
		seen := map[string]string{}
		for k, a := range s.Answers {
			ap := fmt.Sprintf("%s.answers[%d]", sp, k)
			hk, ok := hyps[a.Hypothesis]
			if !ok {
				msg := fmt.Sprintf("answer names hypothesis %q, which endpoint %q does not have", a.Hypothesis, e.ID)
				if sug := schema.Suggest(a.Hypothesis, names); sug != "" {
					msg += fmt.Sprintf(" (did you mean %q?)", sug)
				}
				v.add(Error, "unknown-hypothesis", ap+".hypothesis", msg)
				continue
			}
			if first, dup := seen[a.Hypothesis]; dup {
				v.add(Error, "duplicate-answer", ap+".hypothesis", fmt.Sprintf("step %q answers hypothesis %q twice", s.ID, a.Hypothesis), v.p.PosOf(first))
				continue
			}
			seen[a.Hypothesis] = ap + ".hypothesis"
			h := &e.Hypotheses[hk]
			switch {
			case a.Omit != "" && (a.Adjust != "" || a.Estimate != ""):
				v.errf("answer-omit", ap+".omit", "an answer that omits hypothesis %q declares no adjust or estimate", h.ID)
			case a.Omit == "" && a.Adjust == "" && a.Estimate == "":
				v.errf("answer-empty", ap, "the answer of step %q for hypothesis %q declares nothing; give adjust, estimate, or omit with the reason", s.ID, h.ID)
			case h.Kind == HypTerm && a.Omit == "":
				v.errf("answer-term", ap, "term hypothesis %q has no adjustment or estimator; a step can only omit it", h.ID)
			}
			if msg := adjustKind(a.Adjust, h); msg != "" {
				v.errf("adjust-kind", ap+".adjust", "%s", msg)
			}
		}
		r, ok := v.m.Model(s.Model)
		if !ok {
			continue
		}
		for k := range e.Hypotheses {
			h := &e.Hypotheses[k]
			a := AnswerOn(s, h)
			if a.Omit != "" {
				continue
			}
			why, onlyOmit := unanswerable(s, r, h, a)
			if len(why) == 0 {
				continue
			}
			// At the step's declared answer when there is one, else at the step.
			pos, at := v.p.PosOf(sp+".id"), sp+".id"
			if a.Pos.Line > 0 {
				pos, at = a.Pos, sp+".answers"
			}
			msg := fmt.Sprintf("step %q (%s) cannot answer hypothesis %q as declared: %s; %s",
				s.ID, s.Model, h.ID, strings.Join(why, "; "), validAnswers(s, r, h, onlyOmit))
			d := Diagnostic{Severity: Error, Code: "answer-undeclared", Pos: pos, Path: at, Summary: msg,
				Related: []Pos{v.p.PosOf(fmt.Sprintf("%s.hypotheses[%d].id", path, k))}}
			v.ds = append(v.ds, d)
		}
	}
}

// unanswerable lists why step s of the given rules cannot answer h as a
// says (nothing when it can); onlyOmit is true when no adjustment or
// estimator would make it answerable, so the step can only omit h.
func unanswerable(s *Step, r ModelRules, h *Hypothesis, a Answer) (why []string, onlyOmit bool) {
	if h.Kind == HypTerm {
		switch {
		case !r.Model:
			why = append(why, fmt.Sprintf("a %s step fits no model terms to test", s.Model))
		case !hasTerm(s.Fixed, h.Term):
			why = append(why, fmt.Sprintf("term %s is not a fixed term of this step", strings.Join(h.Term, ":")))
		}
		return why, true
	}
	switch {
	case r.Model && h.Factor != "" && !hasTerm(s.Fixed, []string{h.Factor}):
		why, onlyOmit = append(why, fmt.Sprintf("%s is not a fixed term of this step, so it has no marginal means of it", h.Factor)), true
	case !r.Model && s.Compare != "" && h.Factor != "" && h.Factor != s.Compare:
		why, onlyOmit = append(why, fmt.Sprintf("the step compares the levels of %s, not of %s", s.Compare, h.Factor)), true
	}
	if a.Estimate != "" && !slices.Contains(r.Estimates, a.Estimate) {
		why = append(why, fmt.Sprintf("it gives %s estimates, not %s", joinWith(r.Estimates, " or "), a.Estimate))
	}
	if (a.Adjust == AdjustDunnett || a.Adjust == AdjustTukey) && !r.JointAdjust {
		why = append(why, fmt.Sprintf("%s needs the joint distribution of a model's contrasts, and this step compares pairs by separate two-sample tests", a.Adjust))
	}
	if h.Margin != nil && h.Margin.Scale == "ratio" && !isLogType(s.Transform.Kind) {
		why, onlyOmit = append(why, fmt.Sprintf("a ratio margin needs a log scale, and the step uses transform %s", s.Transform.Kind)), true
	}
	return why, onlyOmit
}

// validAnswers says what the step's answers may declare for h.
func validAnswers(s *Step, r ModelRules, h *Hypothesis, onlyOmit bool) string {
	if onlyOmit {
		return fmt.Sprintf("declare under answers of step %q that it omits %q, with the reason", s.ID, h.ID)
	}
	var adj []string
	for _, a := range adjustments {
		switch {
		case a == AdjustDunnett && (h.Kind != HypVersusControl || !r.JointAdjust),
			a == AdjustTukey && (h.Kind != HypPairwise || !r.JointAdjust),
			a == AdjustShaffer && adjustKind(a, h) != "":
			continue
		}
		adj = append(adj, a)
	}
	return fmt.Sprintf("declare under answers of step %q how it answers %q (adjust: %s; estimate: %s), or omit %q there with the reason",
		s.ID, h.ID, joinWith(adj, " or "), joinWith(r.Estimates, " or "), h.ID)
}

// hasTerm reports whether terms hold a term of exactly these columns.
func hasTerm(terms []Term, cols []string) bool {
	want := slices.Sorted(slices.Values(cols))
	for _, t := range terms {
		if slices.Equal(slices.Sorted(slices.Values(t.Columns)), want) {
			return true
		}
	}
	return false
}

// notComputable checks that every check says what it counts as when it
// cannot be computed on the data, itself or through its endpoint.
func (v *validator) notComputable(e *Endpoint, path string) {
	for j, s := range e.Steps {
		for k, c := range s.Checks {
			if c.NotComputable != "" {
				continue
			}
			v.errf("not-computable-undeclared", fmt.Sprintf("%s.steps[%d].checks[%d]", path, j, k),
				"check %s of step %q does not say what it counts as when it cannot be computed on the data (too few or too many residuals, a group with one value); declare not-computable: fail, pass or stop on the check or on endpoint %q",
				c.Test, s.ID, e.ID)
		}
	}
}
