package contract

import (
	"furrow/schema"

	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"furrow/checker/table"
	"furrow/plan"
)

// CheckData checks a table against the plan's data contract: the declared
// columns are present, numeric columns hold numbers in their plausible
// range, factor columns hold declared levels, each unit appears once per
// time point (and sub-sample) and keeps its treatment, block, site and
// factors, and each treatment cell holds the declared number of units.
// Every finding is positioned in the data file and carries, in Related,
// the plan line that declared the expectation. The summary describes what
// was found. A nil plan or table gives no findings and a nil summary.
func CheckData(p *plan.Plan, t *table.Table) (plan.Diagnostics, *DesignSummary) {
	if p == nil || t == nil {
		return nil, nil
	}
	c := &contractCheck{p: p, t: t, lim: table.NewLimiter(), decl: map[string]*plan.Column{}}
	for i := range p.Columns {
		col := &p.Columns[i]
		if _, dup := c.decl[col.Name]; !dup {
			c.decl[col.Name] = col
		}
	}
	c.columns()
	if t.NumRows() == 0 {
		// A header with nothing under it: say so once, rather than letting
		// every step fail later for want of observations.
		c.diags = append(c.diags, plan.Diagnostic{Severity: plan.Error, Code: "data-no-rows",
			Pos: t.HeaderPos(1), Summary: "the data hold a header row but no data rows"})
	}
	c.values()
	c.units()
	c.replication()
	c.diags = append(c.diags, c.lim.Summaries()...)
	return c.diags.Sort(), c.summary()
}

// contractCheck carries the state of one CheckData call.
type contractCheck struct {
	p     *plan.Plan
	t     *table.Table
	lim   *table.Limiter
	diags plan.Diagnostics
	decl  map[string]*plan.Column

	// filled by units and replication, used by summary
	unitCol   *table.Column
	unitFirst map[string]int // unit -> first table row
	unitOrder []string
	cellCols  []*plan.Column
	cells     []CellCount
	lost      []LostUnit

	// CheckKept: the units the exclusions removed whole, with the rule
	kept bool
	gone map[string]string
}

func (c *contractCheck) add(col string, d plan.Diagnostic) {
	c.lim.Add(&c.diags, d.Code, col, d)
}

// at says where a cell is in words: "" for CSV (the position says it), or
// "cell D17: " for XLSX, where users think in cell references.
func (c *contractCheck) at(row, col int) string {
	if c.t.Format == table.FormatXLSX && col > 0 {
		return "cell " + table.CellRef(c.t.RowNumber(row), col) + ": "
	}
	return ""
}

// present returns the declared columns found in the table, in plan order.
func (c *contractCheck) present(roles ...string) []*plan.Column {
	var out []*plan.Column
	for i := range c.p.Columns {
		pc := &c.p.Columns[i]
		if c.decl[pc.Name] != pc || c.t.Column(pc.Name) == nil {
			continue
		}
		if len(roles) == 0 || slices.Contains(roles, pc.Role) {
			out = append(out, pc)
		}
	}
	return out
}

// maxUndeclared is the most undeclared file columns reported one by one;
// more are one finding with their count.
const maxUndeclared = 5

// numberText writes a number read from a cell for a message: its text, or
// when that is long its value in shortest form.
func numberText(text string, v float64) string {
	if len(text) <= table.QuoteMax {
		return text
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// columns reports declared columns missing from the file and file columns
// the plan does not declare.
func (c *contractCheck) columns() {
	var undeclared, missing []string
	for _, tc := range c.t.Columns() {
		if c.decl[tc.Name] == nil {
			undeclared = append(undeclared, tc.Name)
		}
	}
	for i := range c.p.Columns {
		pc := &c.p.Columns[i]
		if c.decl[pc.Name] == pc && c.t.Column(pc.Name) == nil {
			missing = append(missing, pc.Name)
		}
	}
	for _, name := range missing {
		pc := c.decl[name]
		s := fmt.Sprintf("column %q (%s) declared in the plan is not in the data", name, pc.Role)
		if g := suggestColumn(name, undeclared, missing); g != "" {
			s += fmt.Sprintf("; did you mean %s?", table.Quote(g))
		}
		c.diags = append(c.diags, plan.Diagnostic{
			Severity: plan.Error, Code: "data-column-missing",
			Pos: c.t.HeaderPos(0), Summary: s, Related: table.RelatedPos(pc.Pos),
		})
	}
	if len(undeclared) > maxUndeclared {
		// One finding for them all: a header of a million names is one
		// thing to fix, not a million.
		var names []string
		for _, name := range undeclared[:3] {
			names = append(names, table.Quote(name))
		}
		first := c.t.Column(undeclared[0])
		c.diags = append(c.diags, plan.Diagnostic{
			Severity: plan.Warning, Code: "data-column-undeclared",
			Pos: c.t.HeaderPos(first.Index),
			Summary: fmt.Sprintf("%d columns are not declared in the plan (%s and %d more, from column %d on); they are carried along unchecked",
				len(undeclared), strings.Join(names, ", "), len(undeclared)-3, first.Index),
		})
		return
	}
	for _, name := range undeclared {
		tc := c.t.Column(name)
		s := fmt.Sprintf("column %s is not declared in the plan; it is carried along unchecked", table.Quote(name))
		if g := suggestColumn(name, missing, undeclared); g != "" {
			s += fmt.Sprintf(" (is it the declared %q?)", g)
		}
		c.diags = append(c.diags, plan.Diagnostic{
			Severity: plan.Warning, Code: "data-column-undeclared",
			Pos: c.t.HeaderPos(tc.Index), Summary: s,
		})
	}
}

// values checks every cell of the declared columns and counts missing
// values.
func (c *contractCheck) values() {
	for _, pc := range c.present() {
		tc := c.t.Column(pc.Name)
		switch {
		case pc.IsNumeric():
			c.numbers(pc, tc)
		case pc.IsFactor() && len(pc.Levels) > 0:
			c.levels(pc, tc)
		}
		c.missingValues(pc, tc)
	}
}

func (c *contractCheck) numbers(pc *plan.Column, tc *table.Column) {
	dec := c.p.Data.Decimal
	if dec == "" {
		dec = "."
	}
	var outRule *plan.Exclusion
	for i := range c.p.Exclusions {
		e := &c.p.Exclusions[i]
		if e.When == plan.WhenOutOfRange && e.Column == pc.Name {
			outRule = e
			break
		}
	}
	for i, v := range tc.Num {
		if tc.Missing[i] {
			continue
		}
		if math.IsNaN(v) {
			s := fmt.Sprintf("%scolumn %q: %s is not a number", c.at(i, tc.Index), pc.Name, table.Quote(tc.Text[i]))
			rel := table.RelatedPos(pc.Pos)
			if table.Overflows(tc.Text[i], dec[0]) || table.Overflows(tc.Text[i], '.') {
				s = fmt.Sprintf("%scolumn %q: %s is out of the range of a double (its magnitude is beyond 1.8e308)", c.at(i, tc.Index), pc.Name, table.Quote(tc.Text[i]))
			} else if _, ok := table.ParseNumber(tc.Text[i], ','); ok && dec == "." {
				s += `; it has a decimal comma: declare decimal: "," in the data section`
				rel = append(rel, table.RelatedPos(c.p.Data.Pos)...)
			} else if _, ok := table.ParseNumber(tc.Text[i], '.'); ok && dec == "," {
				s += `; it has a decimal point, but the plan declares decimal: ","`
				rel = append(rel, table.RelatedPos(c.p.Data.Pos)...)
			}
			c.add(pc.Name, plan.Diagnostic{Severity: plan.Error, Code: "data-not-number",
				Pos: c.t.Pos(i, tc.Index), Summary: s, Related: rel})
			continue
		}
		if (pc.Min != nil && v < *pc.Min) || (pc.Max != nil && v > *pc.Max) {
			d := plan.Diagnostic{Severity: plan.Error, Code: "data-out-of-range",
				Pos: c.t.Pos(i, tc.Index), Related: table.RelatedPos(pc.Pos),
				Summary: fmt.Sprintf("%scolumn %q: %s is outside the plausible range %s", c.at(i, tc.Index), pc.Name, numberText(tc.Text[i], v), rangeWords(pc.Min, pc.Max)),
			}
			if outRule != nil {
				d.Severity = plan.Warning
				d.Summary += fmt.Sprintf("; exclusion %q drops it", outRule.ID)
				d.Related = append(d.Related, table.RelatedPos(outRule.Pos)...)
			}
			c.add(pc.Name, d)
		}
	}
}

// rangeWords writes a plausible range: "[0, 20000]", "at least 0", "at most 5".
func rangeWords(lo, hi *float64) string {
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	switch {
	case lo != nil && hi != nil:
		return "[" + f(*lo) + ", " + f(*hi) + "]"
	case lo != nil:
		return "at least " + f(*lo)
	case hi != nil:
		return "at most " + f(*hi)
	}
	return "(none)"
}

func (c *contractCheck) levels(pc *plan.Column, tc *table.Column) {
	declared := map[string]bool{}
	for _, l := range pc.Levels {
		declared[l] = true
	}
	seen := map[string]bool{}
	for i, s := range tc.Text {
		if tc.Missing[i] {
			continue
		}
		seen[s] = true
		if declared[s] {
			continue
		}
		msg := fmt.Sprintf("%scolumn %q: level %s is not declared (declared: %s)", c.at(i, tc.Index), pc.Name, table.Quote(s), strings.Join(pc.Levels, ", "))
		if g := schema.Suggest(s, pc.Levels); g != "" {
			msg += fmt.Sprintf("; did you mean %q?", g)
		}
		c.add(pc.Name, plan.Diagnostic{Severity: plan.Error, Code: "data-level-undeclared",
			Pos: c.t.Pos(i, tc.Index), Summary: msg, Related: table.RelatedPos(pc.Pos)})
	}
	for _, l := range pc.Levels {
		if !seen[l] {
			c.diags = append(c.diags, plan.Diagnostic{Severity: plan.Warning, Code: "data-level-unseen",
				Pos:     c.t.HeaderPos(tc.Index),
				Summary: fmt.Sprintf("column %q: declared level %q does not occur in the data", pc.Name, l),
				Related: table.RelatedPos(pc.Pos)})
		}
	}
}

func (c *contractCheck) missingValues(pc *plan.Column, tc *table.Column) {
	var rows []int
	for i, m := range tc.Missing {
		if m {
			rows = append(rows, c.t.RowNumber(i))
		}
	}
	if len(rows) == 0 {
		return
	}
	c.diags = append(c.diags, plan.Diagnostic{Severity: plan.Warning, Code: "data-missing-values",
		Pos:     c.t.HeaderPos(tc.Index),
		Summary: fmt.Sprintf("column %q: %d of %d values are missing (%s)", pc.Name, len(rows), c.t.NumRows(), rowList(rows, 5)),
		Related: table.RelatedPos(c.p.Data.Pos)})
}

// rowList writes "row 4" or "rows 4, 9, 12 and 3 more".
func rowList(rows []int, max int) string {
	var b strings.Builder
	b.WriteString(table.Plural(len(rows), "row ", "rows "))
	for i, r := range rows {
		if i == max {
			fmt.Fprintf(&b, " and %d more", len(rows)-max)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.Itoa(r))
	}
	return b.String()
}

// units checks duplicate unit x time records, units whose design columns
// change between rows, and units with no record at a declared time.
func (c *contractCheck) units() {
	units := c.present(plan.RoleUnit)
	if len(units) == 0 {
		return
	}
	upc := units[0]
	uc := c.t.Column(upc.Name)
	c.unitCol = uc
	c.unitFirst = map[string]int{}
	fixed := c.present(plan.RoleTreatment, plan.RoleFactor, plan.RoleBlock, plan.RoleSite)
	var rpc *plan.Column
	var rc *table.Column
	if rs := c.present(plan.RoleRepeat); len(rs) > 0 {
		rpc, rc = rs[0], c.t.Column(rs[0].Name)
	}
	perKey := max(1, c.p.Design.Subsamples)

	type keyState struct {
		first, n int
	}
	records := map[string]*keyState{}
	firstVal := make([]map[string]int, len(fixed)) // unit -> first non-missing row
	reported := make([]map[string]bool, len(fixed))
	for k := range fixed {
		firstVal[k] = map[string]int{}
		reported[k] = map[string]bool{}
	}
	timesSeen := map[string]map[string]bool{}

	for i, u := range uc.Text {
		if uc.Missing[i] {
			continue
		}
		if _, ok := c.unitFirst[u]; !ok {
			c.unitFirst[u] = i
			c.unitOrder = append(c.unitOrder, u)
		}
		// duplicate records
		key, what := u, "unit "+table.Quote(u)
		if rc != nil {
			tv := rc.Text[i]
			if rc.Missing[i] {
				tv = "\x00missing"
			} else {
				if timesSeen[u] == nil {
					timesSeen[u] = map[string]bool{}
				}
				timesSeen[u][tv] = true
			}
			key += "\x00" + tv
			what = fmt.Sprintf("unit %s at %s %s", table.Quote(u), rpc.Name, table.Quote(rc.Text[i]))
		}
		ks := records[key]
		if ks == nil {
			records[key] = &keyState{first: i, n: 1}
		} else {
			ks.n++
			if ks.n > perKey {
				d := plan.Diagnostic{Severity: plan.Error, Code: "data-duplicate-record",
					Pos: c.t.Pos(i, 0), Related: table.RelatedPos(upc.Pos)}
				if perKey == 1 {
					d.Summary = fmt.Sprintf("%s appears again (first at row %d)", what, c.t.RowNumber(ks.first))
				} else {
					d.Summary = fmt.Sprintf("%s has more than %d records, the declared sub-samples (first at row %d)", what, perKey, c.t.RowNumber(ks.first))
					d.Related = append(d.Related, table.RelatedPos(c.p.Design.Pos)...)
				}
				c.add(upc.Name, d)
			}
		}
		// design columns constant within a unit
		for k, fpc := range fixed {
			fc := c.t.Column(fpc.Name)
			if fc.Missing[i] {
				continue
			}
			j, ok := firstVal[k][u]
			if !ok {
				firstVal[k][u] = i
				continue
			}
			if fc.Text[j] != fc.Text[i] && !reported[k][u] {
				reported[k][u] = true
				c.add(fpc.Name, plan.Diagnostic{Severity: plan.Error, Code: "data-unit-inconsistent",
					Pos: c.t.Pos(i, fc.Index),
					Summary: fmt.Sprintf("%sunit %s has %s %s here but %s at row %d; a unit keeps its %s in every row",
						c.at(i, fc.Index), table.Quote(u), fpc.Name, table.Quote(fc.Text[i]), table.Quote(fc.Text[j]), c.t.RowNumber(j), fpc.Role),
					Related: table.RelatedPos(fpc.Pos)})
			}
		}
	}
	// units with no record at a declared time
	if rpc != nil && len(rpc.Levels) > 0 {
		for _, u := range c.unitOrder {
			for _, l := range rpc.Levels {
				if !timesSeen[u][l] {
					c.add(rpc.Name, plan.Diagnostic{Severity: plan.Warning, Code: "data-record-missing",
						Pos:     c.t.Pos(c.unitFirst[u], 0),
						Summary: fmt.Sprintf("unit %s has no record at %s %q", table.Quote(u), rpc.Name, l),
						Related: table.RelatedPos(rpc.Pos)})
				}
			}
		}
	}
}

// replication counts units per treatment cell (treatment and other fixed
// factors, per site) and compares the count with design.replicates: a
// surplus is an error; a shortfall is an error when the plan declares no
// least-units, else it is judged by that rule (see shortfall).
func (c *contractCheck) replication() {
	c.cellCols = c.present(plan.RoleSite)
	if len(c.cellCols) > 1 {
		c.cellCols = c.cellCols[:1]
	}
	c.cellCols = append(c.cellCols, c.present(plan.RoleTreatment, plan.RoleFactor)...)
	if len(c.cellCols) == 0 {
		return
	}
	// one representative row per unit (each row when there is no unit column)
	var reps []int
	if c.unitCol != nil {
		for _, u := range c.unitOrder {
			reps = append(reps, c.unitFirst[u])
		}
	} else {
		for i := range c.t.NumRows() {
			reps = append(reps, i)
		}
	}
	// levels of each cell column: declared, else as seen
	levels := make([][]string, len(c.cellCols))
	tcs := make([]*table.Column, len(c.cellCols))
	for k, pc := range c.cellCols {
		tcs[k] = c.t.Column(pc.Name)
		if len(pc.Levels) > 0 {
			levels[k] = pc.Levels
		} else {
			levels[k] = seenLevels(tcs[k], reps)
		}
	}
	// the block of each unit, when the plan has a block column
	var bc *table.Column
	var blockLevels []string
	if bs := c.present(plan.RoleBlock); len(bs) > 0 {
		bc = c.t.Column(bs[0].Name)
		blockLevels = bs[0].Levels
		if len(blockLevels) == 0 {
			blockLevels = seenLevels(bc, reps)
		}
	}
	tallies := map[string]*cellTally{}
	for _, i := range reps {
		parts := make([]string, len(tcs))
		ok := true
		for k, tc := range tcs {
			if tc.Missing[i] {
				ok = false
				break
			}
			parts[k] = tc.Text[i]
		}
		if !ok {
			continue
		}
		key := strings.Join(parts, "\x00")
		tl := tallies[key]
		if tl == nil {
			tl = &cellTally{first: i, blocks: map[string]int{}}
			tallies[key] = tl
		}
		tl.n++
		block := ""
		if bc != nil && !bc.Missing[i] {
			block = bc.Text[i]
			tl.blocks[block]++
		}
		if c.unitCol != nil {
			u := c.unitCol.Text[i]
			if rule, gone := c.gone[u]; gone {
				if len(tl.removed) == 0 {
					tl.gone = i
				}
				tl.removed = append(tl.removed, LostUnit{Cell: slices.Clone(parts), Block: block, Unit: u, Rule: rule})
			}
		}
	}
	want := c.p.Design.Replicates
	each := func(fn func([]string)) { ForEachCombination(levels, fn) }
	if combinations(levels) > maxCells {
		// Too many undeclared levels to list every cell: list those seen.
		each = func(fn func([]string)) {
			seen := map[string]bool{}
			for _, i := range reps {
				parts := make([]string, len(tcs))
				for k, tc := range tcs {
					parts[k] = tc.Text[i]
				}
				key := strings.Join(parts, "\x00")
				if tl, ok := tallies[key]; ok && tl.first == i && !seen[key] {
					seen[key] = true
					fn(parts)
				}
			}
		}
	}
	var keys []string
	var cellParts [][]string
	each(func(parts []string) {
		key := strings.Join(parts, "\x00")
		tl := tallies[key]
		if tl == nil {
			tl = &cellTally{first: -1, blocks: map[string]int{}}
			tallies[key] = tl
		}
		n := tl.n
		c.cells = append(c.cells, CellCount{Levels: slices.Clone(parts), Units: n})
		keys = append(keys, key)
		cellParts = append(cellParts, slices.Clone(parts))
		if c.kept || want <= 0 || n == want || (n < want && c.p.Design.LeastUnits != nil) {
			return
		}
		pos := plan.Pos{File: c.t.PosFile()}
		if tl.first >= 0 {
			pos = c.t.Pos(tl.first, 0)
		}
		c.diags = append(c.diags, plan.Diagnostic{Severity: plan.Error, Code: "data-replication",
			Pos:     pos,
			Summary: fmt.Sprintf("%s: %d %s, the plan declares %d per cell", cellWords(c.cellCols, parts), n, table.Plural(n, "unit", "units"), want),
			Related: table.RelatedPos(c.p.Design.Pos)})
	})
	if want > 0 && c.p.Design.LeastUnits != nil {
		c.shortfall(keys, cellParts, tallies, blockLevels)
	}
}

// maxCells bounds the cells CheckData lists from the levels' product.
const maxCells = 100000

// combinations returns the number of level combinations, capped above
// maxCells.
func combinations(levels [][]string) int {
	n := 1
	for _, l := range levels {
		n *= len(l)
		if n > maxCells {
			return maxCells + 1
		}
	}
	return n
}

// seenLevels lists the non-missing values of a column in the given rows,
// in order of first appearance.
func seenLevels(tc *table.Column, rows []int) []string {
	seen := map[string]bool{}
	var out []string
	for _, i := range rows {
		if s := tc.Text[i]; !tc.Missing[i] && !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	return out
}

// ForEachCombination calls fn with every combination of levels, the last
// column varying fastest.
func ForEachCombination(levels [][]string, fn func([]string)) {
	parts := make([]string, len(levels))
	var rec func(k int)
	rec = func(k int) {
		if k == len(levels) {
			fn(parts)
			return
		}
		for _, l := range levels[k] {
			parts[k] = l
			rec(k + 1)
		}
	}
	rec(0)
}
