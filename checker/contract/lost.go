package contract

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"furrow/checker/table"
	"furrow/plan"
)

// LostUnit is one experimental unit the design declares (design.replicates
// per cell) that the analysis does not have: the data hold no row of it,
// or a declared exclusion removed every row of it.
type LostUnit struct {
	// Cell is the unit's level of each cell column (DesignSummary.CellColumns:
	// the site first when there is one, then treatment and factors).
	Cell []string
	// Block is the unit's block. For a unit with no row in the data it is
	// the block that lacks a unit of the cell, known when every block
	// holds the same number of the cell's units (replicates divided by
	// the blocks); "" when the plan has no block column or the blocks do
	// not tell.
	Block string
	// Unit is the unit's identifier; "" for a unit with no row in the
	// data (its identifier is not known).
	Unit string
	// Rule is the id of the exclusion rule that removed every row of the
	// unit; "" for a unit with no row in the data.
	Rule string
}

// Codes of the lost-unit findings.
const (
	// CodeUnitsLost: a cell holds fewer units than design.replicates, at
	// least the plan's least-units (a warning; the analysis goes on).
	CodeUnitsLost = "data-units-lost"
	// CodeUnitsBelowLeast: a cell (or treatment level) holds fewer units
	// than the plan's least-units (an error with below: stop, else a warning).
	CodeUnitsBelowLeast = "data-units-below-least"
)

// CheckKept checks the plan's least-units rule after the declared
// exclusions. t is the table as read; gone maps each unit that the
// exclusions removed whole (every row of it) to the rule that removed it.
// It reports each cell that lost a unit to an exclusion, as CheckData
// reports cells short in the file, and every treatment level that the
// exclusions bring below a least-units count per treatment; and it lists
// every lost unit, those with no row in the data and those removed, in
// cell order. Without design.replicates and least-units it returns
// nothing.
func CheckKept(p *plan.Plan, t *table.Table, gone map[string]string) (plan.Diagnostics, []LostUnit) {
	if p == nil || t == nil || p.Design.Replicates <= 0 || p.Design.LeastUnits == nil {
		return nil, nil
	}
	c := &contractCheck{p: p, t: t, lim: table.NewLimiter(), decl: map[string]*plan.Column{}}
	for i := range p.Columns {
		col := &p.Columns[i]
		if _, dup := c.decl[col.Name]; !dup {
			c.decl[col.Name] = col
		}
	}
	c.indexUnits()
	c.gone = gone
	c.kept = true
	c.replication()
	return c.diags.Sort(), c.lost
}

// indexUnits fills unitCol, unitFirst and unitOrder without any finding.
func (c *contractCheck) indexUnits() {
	units := c.present(plan.RoleUnit)
	if len(units) == 0 {
		return
	}
	uc := c.t.Column(units[0].Name)
	c.unitCol = uc
	c.unitFirst = map[string]int{}
	for i, u := range uc.Text {
		if uc.Missing[i] {
			continue
		}
		if _, ok := c.unitFirst[u]; !ok {
			c.unitFirst[u] = i
			c.unitOrder = append(c.unitOrder, u)
		}
	}
}

// cellTally counts the units of one treatment cell in the data.
type cellTally struct {
	n       int
	first   int            // table row of the cell's first unit
	blocks  map[string]int // units per block level
	removed []LostUnit     // units the exclusions removed whole (CheckKept)
	gone    int            // table row of the first removed unit
}

// lostIn returns the units a cell with fewer than want units lacks in the
// data: want - n of them, each placed in the block that lacks it when
// every block holds the same number of the cell's units.
func lostIn(parts []string, tl *cellTally, want int, blockLevels []string) []LostUnit {
	missing := want - tl.n
	if missing <= 0 {
		return nil
	}
	var out []LostUnit
	if nb := len(blockLevels); nb > 0 && want%nb == 0 {
		each := want / nb
		over := false
		for _, b := range blockLevels {
			if tl.blocks[b] > each {
				over = true
			}
		}
		if !over {
			for _, b := range blockLevels {
				for k := tl.blocks[b]; k < each; k++ {
					out = append(out, LostUnit{Cell: slices.Clone(parts), Block: b})
				}
			}
			if len(out) == missing {
				return out
			}
			out = nil
		}
	}
	for range missing {
		out = append(out, LostUnit{Cell: slices.Clone(parts)})
	}
	return out
}

// cellWords names a cell: `site "S1", treatment "candidate"`.
func cellWords(cols []*plan.Column, parts []string) string {
	names := make([]string, len(parts))
	for k, pc := range cols {
		names[k] = pc.Name + " " + table.Quote(parts[k])
	}
	return strings.Join(names, ", ")
}

// lostWords says which units a cell lost: `1 lost (block "B2")`,
// `exclusion "welfare" removed unit "103"`.
func lostWords(absent, removed []LostUnit) string {
	var parts []string
	if len(absent) > 0 {
		what := "lost"
		if len(removed) > 0 {
			what = "not in the data"
		}
		s := strconv.Itoa(len(absent)) + " " + what
		var blocks []string
		per := map[string]int{}
		told := true
		for _, l := range absent {
			if l.Block == "" {
				told = false
			}
			if per[l.Block] == 0 {
				blocks = append(blocks, l.Block)
			}
			per[l.Block]++
		}
		if told && len(blocks) == len(absent) {
			for k, b := range blocks {
				blocks[k] = strconv.Quote(b)
			}
			s += " (" + table.Plural(len(blocks), "block ", "blocks ") + strings.Join(blocks, ", ") + ")"
		} else if told {
			// two or more from one block: "1 in block "B1", 2 in block "B2""
			for k, b := range blocks {
				blocks[k] = fmt.Sprintf("%d in block %q", per[b], b)
			}
			s += " (" + strings.Join(blocks, ", ") + ")"
		}
		parts = append(parts, s)
	}
	byRule := map[string][]string{}
	var rules []string
	for _, l := range removed {
		if byRule[l.Rule] == nil {
			rules = append(rules, l.Rule)
		}
		byRule[l.Rule] = append(byRule[l.Rule], strconv.Quote(l.Unit))
	}
	for _, r := range rules {
		us := byRule[r]
		parts = append(parts, fmt.Sprintf("exclusion %q removed %s%s", r, table.Plural(len(us), "unit ", "units "), strings.Join(us, ", ")))
	}
	return strings.Join(parts, "; ")
}

// belowWords is the verdict of a count below the least the plan accepts.
func belowWords(l *plan.LeastUnits) (plan.Severity, string) {
	if l.Below == plan.BelowStop {
		return plan.Error, "so the run stops, as the plan declares (least-units below: stop)"
	}
	return plan.Warning, "and the analysis goes on with a warning, as the plan declares (least-units below: warn)"
}

// shortfall reports the cells with fewer units than design.replicates
// under the plan's least-units rule (CheckData: units missing from the
// file; CheckKept: units the exclusions removed), checks the least count
// per treatment, and collects the lost units. keys, tallies and cellParts
// are the cells in listing order.
func (c *contractCheck) shortfall(keys []string, cellParts [][]string, tallies map[string]*cellTally, blockLevels []string) {
	l := c.p.Design.LeastUnits
	want := c.p.Design.Replicates
	trt := -1
	for k, pc := range c.cellCols {
		if pc.Role == plan.RoleTreatment {
			trt = k
		}
	}
	// The treatment key: the site level (when the first cell column is a
	// site) and the treatment level.
	trtKey := func(parts []string) string {
		if trt < 0 {
			return ""
		}
		if c.cellCols[0].Role == plan.RoleSite && trt > 0 {
			return parts[0] + "\x00" + parts[trt]
		}
		return parts[trt]
	}
	perTrt := l.Per == plan.LeastPerTreatment && trt >= 0
	type trtCount struct {
		file, kept, removed int
		first, gone         int // table rows: first unit, first removed unit
		parts               []string
	}
	trts := map[string]*trtCount{}
	var trtOrder []string
	for k, key := range keys {
		tl := tallies[key]
		absent := lostIn(cellParts[k], tl, want, blockLevels)
		c.lost = append(c.lost, absent...)
		c.lost = append(c.lost, tl.removed...)
		if perTrt {
			tk := trtKey(cellParts[k])
			tc := trts[tk]
			if tc == nil {
				tc = &trtCount{first: -1}
				if c.cellCols[0].Role == plan.RoleSite && trt > 0 {
					tc.parts = []string{cellParts[k][0], cellParts[k][trt]}
				} else {
					tc.parts = []string{cellParts[k][trt]}
				}
				trts[tk] = tc
				trtOrder = append(trtOrder, tk)
			}
			tc.file += tl.n
			tc.kept += tl.n - len(tl.removed)
			tc.removed += len(tl.removed)
			if tc.first < 0 && tl.n > 0 {
				tc.first = tl.first
			}
			if len(tl.removed) > 0 && tc.removed == len(tl.removed) {
				tc.gone = tl.gone
			}
		}
	}
	trtCols := func() []*plan.Column {
		if c.cellCols[0].Role == plan.RoleSite && trt > 0 {
			return []*plan.Column{c.cellCols[0], c.cellCols[trt]}
		}
		return []*plan.Column{c.cellCols[trt]}
	}
	related := append(table.RelatedPos(c.p.Design.Pos), table.RelatedPos(l.Pos)...)
	for k, key := range keys {
		tl := tallies[key]
		if tl.n > want {
			continue // a surplus: data-replication, reported by CheckData
		}
		n := tl.n
		ctx := ""
		if c.kept {
			if len(tl.removed) == 0 {
				continue // reported by CheckData
			}
			n -= len(tl.removed)
			ctx = " after the declared exclusions"
		} else if n == want {
			continue
		}
		parts := cellParts[k]
		var absent []LostUnit
		if tl.n < want {
			absent = lostIn(parts, tl, want, blockLevels)
		}
		pos := plan.Pos{File: c.t.PosFile()}
		switch {
		case c.kept:
			pos = c.t.Pos(tl.gone, 0)
		case tl.n > 0:
			pos = c.t.Pos(tl.first, 0)
		}
		d := plan.Diagnostic{Severity: plan.Warning, Code: CodeUnitsLost, Pos: pos, Related: related}
		head := fmt.Sprintf("%s: %d of the %d units the plan declares per cell%s; %s", cellWords(c.cellCols, parts), n, want, ctx, lostWords(absent, tl.removed))
		switch {
		case !perTrt && n < l.Count:
			sev, verdict := belowWords(l)
			d.Severity, d.Code = sev, CodeUnitsBelowLeast
			d.Summary = fmt.Sprintf("%s; that is below the least %d per cell the plan accepts, %s", head, l.Count, verdict)
		case !perTrt:
			d.Summary = fmt.Sprintf("%s; the plan accepts at least %d per cell, so this loss does not stop the analysis", head, l.Count)
		default:
			tc := trts[trtKey(parts)]
			left := tc.file
			if c.kept {
				left = tc.kept
			}
			if left >= l.Count {
				d.Summary = fmt.Sprintf("%s; %s keeps %d, at least the %d per treatment the plan accepts, so this loss does not stop the analysis",
					head, cellWords(trtCols(), tc.parts), left, l.Count)
			} else {
				d.Summary = head
			}
		}
		c.diags = append(c.diags, d)
	}
	if !perTrt {
		return
	}
	for _, tk := range trtOrder {
		tc := trts[tk]
		left, ctx := tc.file, ""
		if c.kept {
			if tc.removed == 0 {
				continue
			}
			left, ctx = tc.kept, " after the declared exclusions"
		}
		if left >= l.Count {
			continue
		}
		pos := plan.Pos{File: c.t.PosFile()}
		switch {
		case c.kept:
			pos = c.t.Pos(tc.gone, 0)
		case tc.first >= 0:
			pos = c.t.Pos(tc.first, 0)
		}
		sev, verdict := belowWords(l)
		c.diags = append(c.diags, plan.Diagnostic{Severity: sev, Code: CodeUnitsBelowLeast, Pos: pos, Related: related,
			Summary: fmt.Sprintf("%s: %d %s over its cells%s, below the least %d per treatment the plan accepts, %s",
				cellWords(trtCols(), tc.parts), left, table.Plural(left, "unit", "units"), ctx, l.Count, verdict)})
	}
}
