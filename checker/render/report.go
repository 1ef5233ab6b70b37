package render

import (
	"bytes"
	_ "embed"
	"encoding/csv"
	"fmt"
	"html/template"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"unicode"

	"furrow/checker/record"
)

// Report file names inside a run directory.
const (
	ReportHTMLName = "report.html"
	ReportMDName   = "report.md"
)

// Report is the human view of a run, built from the Result alone so that
// the report can never disagree with the audit record.
type Report struct {
	R        *record.Result
	Verdicts []EndpointVerdict
	Figures  map[string][]Figure // step key "endpoint/step" -> figures
	// DataFigures are the data-level figures per endpoint id: the response
	// by each factor, the cell means of two factors and, for repeated
	// measures, one line per unit.
	DataFigures map[string][]Figure
	FigureErr   []string // figures that could not be drawn, with the reason
}

// EndpointVerdict is the plain-words answer of one endpoint.
type EndpointVerdict struct {
	Endpoint string
	Primary  bool
	Reported string // step id
	Status   string // plain words
	Answers  []string
}

// BuildReport derives the report view from a run result and draws the
// figures from the data the record carries.
func BuildReport(r *record.Result) *Report {
	rep := &Report{R: r, Figures: map[string][]Figure{}, DataFigures: map[string][]Figure{}}
	for _, e := range r.Endpoints {
		rep.Verdicts = append(rep.Verdicts, endpointVerdict(&e))
		if e.Observed != nil {
			figs, errs := dataFigures(e.ID, e.Observed)
			rep.DataFigures[e.ID] = figs
			rep.FigureErr = append(rep.FigureErr, errs...)
		}
		for _, s := range e.Steps {
			if !s.Executed || s.Figures == nil {
				continue
			}
			key := e.ID + "/" + s.ID
			figs, errs := stepFigures(key, &e, &s)
			rep.Figures[key] = figs
			rep.FigureErr = append(rep.FigureErr, errs...)
		}
	}
	return rep
}

func endpointVerdict(e *record.EndpointResult) EndpointVerdict {
	v := EndpointVerdict{Endpoint: e.ID, Primary: e.Primary, Reported: e.Reported}
	var path []string
	var accepted *record.StepResult
	for i := range e.Steps {
		if e.Steps[i].Executed {
			path = append(path, e.Steps[i].ID)
		}
		if e.Steps[i].ID == e.Reported {
			accepted = &e.Steps[i]
		}
	}
	after := ""
	if len(path) > 1 {
		after = fmt.Sprintf(" after %d fallbacks (%s)", len(path)-1, strings.Join(path, " → "))
		if len(path) == 2 {
			after = fmt.Sprintf(" after 1 fallback (%s)", strings.Join(path, " → "))
		}
	}
	switch e.Status {
	case record.EndpointAccepted:
		v.Status = fmt.Sprintf("step %s accepted%s: its assumption checks passed", e.Reported, after)
		if accepted != nil && accepted.Decision.Reason == record.ReasonNoChecks {
			v.Status = fmt.Sprintf("step %s accepted%s: it declares no assumption checks", e.Reported, after)
		}
	case record.EndpointAssumptionsUnmet:
		v.Status = fmt.Sprintf("step %s reported as the last resort%s: its assumption checks failed, so its results must be read with that caution", e.Reported, after)
	default:
		v.Status = "no step could be fitted; no results are reported"
	}
	for _, h := range e.Hypotheses {
		v.Answers = append(v.Answers, hypothesisAnswer(&h)...)
	}
	return v
}

// hypothesisAnswer states each comparison of a hypothesis in plain words.
func hypothesisAnswer(h *record.HypothesisResult) []string {
	if !h.Assessable {
		if h.Note == "" {
			return []string{fmt.Sprintf("%s: not assessable on step %s.", h.ID, h.Step)}
		}
		return []string{fmt.Sprintf("%s: not assessable: %s.", h.ID, strings.TrimSuffix(h.Note, "."))}
	}
	if h.TermTest != nil {
		t := h.TermTest
		word := "no evidence of an effect"
		if float64(t.P) < float64(h.Alpha) {
			word = "an effect is shown"
		}
		return []string{fmt.Sprintf("%s: term %s, F = %s on %s and %s df, %s: %s at alpha = %s.",
			h.ID, t.Term, fmtNum(t.F), fmtNum(t.DF), fmtNum(t.DenDF), pEq(t.P), word, fmtNum(h.Alpha))}
	}
	var out []string
	var rejected []string
	equiv := false
	for _, c := range h.Comparisons {
		if c.Equivalence != nil {
			equiv = true
			verdict := c.Equivalence.Verdict
			if verdict == "not shown" {
				verdict = h.Kind + " not shown"
			}
			out = append(out, fmt.Sprintf("%s: %s versus %s: %s (%s).", h.ID, c.Level, c.Against, verdict, intervalText(&c)))
			continue
		}
		word := "not shown to differ"
		if c.Reject {
			word = "differs"
			switch h.Sides {
			case "less":
				word = "is lower"
			case "greater":
				word = "is higher"
			}
			rejected = append(rejected, c.Level+" versus "+c.Against)
		}
		out = append(out, fmt.Sprintf("%s: %s versus %s %s (%s, %s).", h.ID, c.Level, c.Against, word, pText(&c), intervalText(&c)))
	}
	if len(h.Comparisons) > maxListedComparisons && !equiv {
		// Many pairwise comparisons: one summary line instead of a list;
		// the full table follows in the hypotheses section.
		list := "none"
		if len(rejected) > 0 {
			list = strings.Join(rejected, "; ")
		}
		return []string{fmt.Sprintf("%s: %d of %d comparisons differ at alpha = %s (%s): %s.", h.ID, len(rejected), len(h.Comparisons), fmtNum(h.Alpha), h.AdjustUsed, list)}
	}
	return out
}

// maxListedComparisons is the most comparisons of one hypothesis the
// verdict lists one by one; above it the verdict summarises.
const maxListedComparisons = 8

// pText gives the adjusted p-value, or the unadjusted one labelled as such
// when no adjustment was computed.
func pText(c *record.Comparison) string {
	if math.IsNaN(float64(c.PAdjusted)) {
		return "unadjusted " + pEq(c.P)
	}
	return "adjusted " + pEq(c.PAdjusted)
}

func intervalText(c *record.Comparison) string {
	if c.Ratio != 0 && !math.IsNaN(float64(c.Ratio)) {
		if math.IsNaN(float64(c.RatioLower)) {
			return "ratio " + fmtNum(c.Ratio)
		}
		return fmt.Sprintf("ratio %s, CI %s to %s", fmtNum(c.Ratio), fmtNum(c.RatioLower), fmtNum(c.RatioUpper))
	}
	if math.IsNaN(float64(c.Lower)) {
		return "difference " + fmtNum(c.Estimate)
	}
	return fmt.Sprintf("difference %s, CI %s to %s", fmtNum(c.Estimate), fmtNum(c.Lower), fmtNum(c.Upper))
}

// pEq writes "p = 0.0123" or "p < 0.0001".
func pEq(n record.Num) string {
	s := fmtP(n)
	if strings.HasPrefix(s, "<") {
		return "p " + s
	}
	return "p = " + s
}

func stepFigures(key string, e *record.EndpointResult, s *record.StepResult) ([]Figure, []string) {
	d := s.Figures
	var figs []Figure
	var errs []string
	add := func(f Figure, err error) {
		if err != nil {
			errs = append(errs, fmt.Sprintf("%s: %v", key, err))
			return
		}
		figs = append(figs, f)
	}
	// Rank tests have no model residuals; their figures show the analysed
	// values only.
	modelBased := s.Model.Kind == "linear" || s.Model.Kind == "mixed" || s.Model.Kind == "welch"
	fitted, resid := floats(d.Fitted), floats(d.Residuals)
	if modelBased && len(resid) > 0 && len(fitted) == len(resid) {
		add(ResidualsVersusFitted(key+"/residuals-fitted", fitted, resid))
	}
	if modelBased && len(resid) >= 3 {
		add(NormalQQ(key+"/qq", resid))
		add(ResidualHistogram(key+"/histogram", resid))
	}
	vals := floats(d.Values)
	if len(d.Groups) == len(vals) && len(vals) > 0 {
		levels := uniqueInOrder(d.Groups)
		if e.Observed != nil {
			for _, f := range e.Observed.Factors {
				if f.Name == s.Model.Compare || (s.Model.Compare == "" && f.Role == "treatment") {
					levels = f.Levels
				}
			}
		}
		factor := s.Model.Compare
		if factor == "" {
			factor = "treatment"
		}
		scale := "analysed value"
		if s.Results != nil && s.Results.Scale != "" {
			scale = s.Results.Scale
		}
		add(BoxPoints(key+"/box", factor, scale, levels, d.Groups, vals))
	}
	if s.Results != nil && len(s.Results.MarginalMeans) > 0 {
		mm := s.Results.MarginalMeans
		labels := make([]string, len(mm))
		est, lo, hi := make([]float64, len(mm)), make([]float64, len(mm)), make([]float64, len(mm))
		for i, m := range mm {
			labels[i] = m.Level
			est[i], lo[i], hi[i] = float64(m.Response), float64(m.ResponseLower), float64(m.ResponseUpper)
		}
		add(MeansWithCI(key+"/means", "Estimated marginal means of "+e.Response, "response scale", labels, est, lo, hi))
	}
	return figs, errs
}

// dataFigures draws the observed response by each design factor, the
// cell-means plot of the first two factors (or of the treatment and the
// repeated measure) and the lines-per-unit plot of a repeated measure.
func dataFigures(id string, od *record.ObservedData) ([]Figure, []string) {
	var figs []Figure
	var errs []string
	add := func(f Figure, err error) {
		if err != nil {
			errs = append(errs, fmt.Sprintf("%s: %v", id, err))
			return
		}
		figs = append(figs, f)
	}
	vals := floats(od.Values)
	if len(vals) == 0 {
		return nil, nil
	}
	type factor struct {
		name           string
		levels, values []string
	}
	var fs []factor
	for _, f := range od.Factors {
		// Blocks are usually labelled within sites, so a plot by block
		// label mixes unrelated plots; treatment and factors come first.
		if len(f.Values) != len(vals) || f.Role == "block" {
			continue
		}
		levels := f.Levels
		if len(levels) == 0 {
			levels = uniqueInOrder(f.Values)
		}
		fs = append(fs, factor{f.Name, levels, f.Values})
	}
	// Treatment first, then other factors, then sites.
	rank := map[string]int{"treatment": 0, "factor": 1, "site": 2}
	roles := map[string]string{}
	for _, f := range od.Factors {
		roles[f.Name] = f.Role
	}
	sort.SliceStable(fs, func(i, j int) bool { return rank[roles[fs[i].name]] < rank[roles[fs[j].name]] })
	for _, f := range fs {
		if od.Repeat != "" && len(od.RepeatValues) == len(vals) && len(od.RepeatLevels) > 0 {
			// One box per level and time would hide the change; draw the
			// last level of the repeated measure, where effects show.
			last := od.RepeatLevels[len(od.RepeatLevels)-1]
			var v []float64
			var g []string
			for i := range vals {
				if od.RepeatValues[i] == last {
					v = append(v, vals[i])
					g = append(g, f.values[i])
				}
			}
			add(BoxPoints(id+"/box-"+f.name, f.name, od.Response+" at "+last, f.levels, g, v))
			continue
		}
		add(BoxPoints(id+"/box-"+f.name, f.name, od.Response, f.levels, f.values, vals))
	}
	switch {
	case len(fs) > 0 && od.Repeat != "" && len(od.RepeatValues) == len(vals):
		add(CellMeans(id+"/cells", od.Repeat, fs[0].name, od.Response, od.RepeatLevels, fs[0].levels, od.RepeatValues, fs[0].values, vals))
	case len(fs) > 1:
		a, b := fs[0], fs[1]
		if len(b.levels) > len(a.levels) {
			a, b = b, a
		}
		add(CellMeans(id+"/cells", a.name, b.name, od.Response, a.levels, b.levels, a.values, b.values, vals))
	}
	if od.Repeat != "" && len(od.Unit) == len(vals) && len(od.RepeatValues) == len(vals) {
		add(UnitLines(id+"/units", od.Repeat, od.Response, od.RepeatLevels, od.Unit, od.RepeatValues, vals))
	}
	return figs, errs
}

func uniqueInOrder(xs []string) []string {
	seen := map[string]bool{}
	var out []string
	for _, x := range xs {
		if !seen[x] {
			seen[x] = true
			out = append(out, x)
		}
	}
	return out
}

func floats(ns []record.Num) []float64 {
	out := make([]float64, len(ns))
	for i, n := range ns {
		out[i] = float64(n)
	}
	return out
}

// fmtNum formats a number with 4 significant digits (fixed, documented
// precision for the human report; the audit record keeps full precision).
func fmtNum(n record.Num) string {
	f := float64(n)
	switch {
	case math.IsNaN(f):
		return "-"
	case math.IsInf(f, 1):
		return "inf"
	case math.IsInf(f, -1):
		return "-inf"
	case f == 0:
		return "0"
	}
	a := math.Abs(f)
	if a >= 1e6 || a < 1e-4 {
		return strconv.FormatFloat(f, 'e', 3, 64)
	}
	return strconv.FormatFloat(f, 'g', 4, 64)
}

// fmtP formats a p-value: four decimals, or "< 0.0001".
func fmtP(n record.Num) string {
	f := float64(n)
	if math.IsNaN(f) {
		return "-"
	}
	if f < 0.0001 {
		return "< 0.0001"
	}
	return strconv.FormatFloat(f, 'f', 4, 64)
}

//go:embed report.css
var reportCSS string

//go:embed report.tmpl.html
var reportHTMLTmpl string

var reportFuncs = template.FuncMap{
	"num": fmtNum,
	"p":   fmtP,
	"pct": func(n record.Num) string {
		if math.IsNaN(float64(n)) {
			return "-"
		}
		return strconv.FormatFloat(100*float64(n), 'f', 1, 64) + "%"
	},
	"svg":  func(s string) template.HTML { return template.HTML(s) },
	"join": strings.Join,
	"nums": func(ns []record.Num) string {
		var parts []string
		for _, n := range ns {
			parts = append(parts, fmtNum(n))
		}
		return strings.Join(parts, ", ")
	},
	"stepkey": func(e, s string) string { return e + "/" + s },
	"verdictClass": func(v record.Verdict) string {
		return "v-" + v.String()
	},
	"inc":       func(i int) int { return i + 1 },
	"lostText":  lostUnitsText,
	"rowsText":  rowsText,
	"unused":    unusedText,
	"lostWhy":   lostWhy,
	"orDash":    orDash,
	"peq":       pEq,
	"answer":    answerText,
	"terms":     hypothesisTerms,
	"ivheader":  intervalHeader,
	"meansText": meansText,
	"sides":     sidesWords,
	"ci": func(lo, hi record.Num) string {
		if math.IsNaN(float64(lo)) && math.IsNaN(float64(hi)) {
			return "-"
		}
		return fmtNum(lo) + " to " + fmtNum(hi)
	},
}

var reportTemplate = template.Must(template.New("report").Funcs(reportFuncs).Parse(reportHTMLTmpl))

// HTML renders the self-contained report page: inline CSS and SVG, no
// scripts, nothing fetched.
func (rep *Report) HTML() ([]byte, error) {
	var b bytes.Buffer
	view := struct {
		*Report
		CSS     template.CSS
		Caution string
	}{rep, template.CSS(reportCSS), Caution}
	if err := reportTemplate.Execute(&b, view); err != nil {
		return nil, fmt.Errorf("rendering report: %w", err)
	}
	return b.Bytes(), nil
}

// Markdown renders the verdict, the decision trail and the key tables.
func (rep *Report) Markdown() []byte {
	r := rep.R
	var b bytes.Buffer
	w := func(format string, args ...any) { fmt.Fprintf(&b, format, args...) }
	w("# Analysis report: %s\n\n", mdCell(r.Trial.Title))
	if r.Unregistered {
		w("> **UNREGISTERED RUN.** This analysis was run without a matching registration record.\n\n")
	}
	w("| Item | Value |\n| --- | --- |\n")
	w("| Trial | %s |\n| Plan version | %s |\n| Plan hash | `%s` |\n", mdCell(r.Trial.ID), mdCell(r.Trial.PlanVersion), r.Inputs.PlanHash)
	w("| Registered | %s |\n", registeredText(r))
	w("| Data | %s (`%s`)%s |\n", mdCode(r.Inputs.DataPath), r.Inputs.DataFileSHA256, otherDataText(r))
	w("| Rows read / kept after exclusions | %d / %d |\n", r.Inputs.Rows, r.Inputs.RowsKept)
	w("| Tool | %s %s |\n\n", r.Tool.Name, r.Tool.Version)
	for _, v := range rep.Verdicts {
		kind := "Secondary"
		if v.Primary {
			kind = "Primary"
		}
		w("## %s endpoint %s\n\n%s.\n\n", kind, mdCode(v.Endpoint), mdCell(upperFirst(v.Status)))
		for _, a := range v.Answers {
			w("- %s\n", mdCell(a))
		}
		if len(v.Answers) > 0 {
			w("\n")
		}
	}
	for _, e := range r.Endpoints {
		w("## Decision trail: %s\n\n", mdCode(e.ID))
		w("| Step | Model | n | Check | Statistic | p | Fails below | Verdict | Decision | Rule |\n")
		w("| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |\n")
		for _, s := range e.Steps {
			if !s.Executed {
				w("| %s | %s | - | - | - | - | - | - | not reached | - |\n", mdCode(s.ID), mdCell(s.Model.Kind))
				continue
			}
			dec := s.Decision.Action.String()
			if s.Decision.Next != "" {
				dec += " to " + mdCode(s.Decision.Next)
			}
			if len(s.Checks) == 0 {
				w("| %s | %s | %d | - | - | - | - | - | %s | %s |\n", mdCode(s.ID), mdCell(s.Model.Text), s.N, dec, mdCell(s.Decision.Rule))
			}
			// The decision goes on the row of the check whose rule made it
			// (the first failing one), else on the step's first row.
			at := 0
			for i, c := range s.Checks {
				if c.Pos == s.Decision.Rule {
					at = i
					break
				}
			}
			for i, c := range s.Checks {
				id, model, n := "", "", ""
				if i == 0 {
					id, model, n = mdCode(s.ID), mdCell(s.Model.Text), strconv.Itoa(s.N)
				}
				d := ""
				if i == at {
					d = dec
				}
				test := c.Test
				if len(c.By) > 0 {
					test += " by " + strings.Join(mdCells(c.By), ", ")
				}
				w("| %s | %s | %s | %s | %s | %s | %s | %s | %s | %s |\n", id, model, n, test, fmtNum(c.Statistic), fmtP(c.P), fmtNum(c.FailBelow), c.Verdict, d, mdCell(c.Pos))
			}
		}
		w("\n")
		w("### Rows: `%s`\n\n%s\n\n", e.ID, rowsText(r, &e))
		w("| Step | n | Rows used | Rows not used |\n| --- | --- | --- | --- |\n")
		for _, s := range e.Steps {
			if s.Fit == nil {
				continue
			}
			w("| `%s` | %d | %d | %s |\n", s.ID, s.N, s.Rows, mdCell(unusedText(s.Unused)))
		}
		w("\n")
		for _, s := range e.Steps {
			if s.Results == nil {
				continue
			}
			w("### Results of step %s (scale: %s)\n\n", mdCode(s.ID), mdCell(s.Results.Scale))
			if s.Model.Equation != "" {
				w("Model: %s.\n\n", mdCell(s.Model.Equation))
			}
			writeMDTables(&b, s.Results)
		}
		for _, h := range e.Hypotheses {
			if len(h.Comparisons) == 0 {
				continue
			}
			w("### Hypothesis %s (%s, adjustment %s)\n\n", mdCode(h.ID), h.Kind, h.AdjustUsed)
			w("%s. %s.\n\n", mdCell(upperFirst(answerText(h))), mdCell(hypothesisTerms(h)))
			if h.Note != "" {
				w("%s.\n\n", mdCell(upperFirst(strings.TrimSuffix(h.Note, "."))))
			}
			iv := intervalHeader(h)
			w("| Comparison | n | Estimate | SE | df | p | p adjusted | Lower (%s) | Upper (%s) | Ratio | Ratio lower | Ratio upper | Verdict |\n", iv, iv)
			w("| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |\n")
			for _, c := range h.Comparisons {
				verdict := "not rejected"
				if c.Reject {
					verdict = "rejected"
				}
				if c.Equivalence != nil {
					verdict = c.Equivalence.Verdict
				}
				w("| %s | %d / %d | %s | %s | %s | %s | %s | %s | %s | %s | %s | %s | %s |\n", mdCell(c.Label), c.N, c.NAgainst, fmtNum(c.Estimate), fmtNum(c.SE), fmtNum(c.DF),
					fmtP(c.P), fmtP(c.PAdjusted), fmtNum(c.Lower), fmtNum(c.Upper), fmtNum(c.Ratio), fmtNum(c.RatioLower), fmtNum(c.RatioUpper), verdict)
			}
			w("\n")
		}
	}
	if d := r.Design; d != nil {
		w("## Design as seen\n\n%d rows", d.Rows)
		if d.UnitColumn != "" {
			w(", %d units (%s)", d.Units, mdCode(d.UnitColumn))
		}
		w(", before exclusions")
		if d.Replicates > 0 {
			w("; the plan declares %d units per cell", d.Replicates)
		}
		w(".\n\n")
		if len(d.Cells) > 0 {
			w("| %s | units |\n|%s --- |\n", strings.Join(mdCells(d.CellColumns), " | "), strings.Repeat(" --- |", len(d.CellColumns)))
			for _, c := range d.Cells {
				w("| %s | %d |\n", strings.Join(mdCells(c.Levels), " | "), c.Units)
			}
			w("\n")
		}
		if len(d.Missing) > 0 {
			var parts []string
			for _, m := range d.Missing {
				parts = append(parts, fmt.Sprintf("%s %d", mdCode(m.Column), m.Missing))
			}
			w("Missing values: %s.\n\n", strings.Join(parts, ", "))
		}
	}
	if d := r.Design; d != nil && (d.LeastUnits != nil || len(r.LostUnits) > 0) {
		w("## Lost units\n\n%s\n\n", lostUnitsText(r))
		if len(r.LostUnits) > 0 {
			w("| %s | block | unit | lost because |\n|%s --- | --- | --- |\n", strings.Join(d.CellColumns, " | "), strings.Repeat(" --- |", len(d.CellColumns)))
			for _, l := range r.LostUnits {
				cells := make([]string, len(l.Cell))
				for k, c := range l.Cell {
					cells[k] = mdCell(c)
				}
				w("| %s | %s | %s | %s |\n", strings.Join(cells, " | "), mdCell(orDash(l.Block)), mdCell(orDash(l.Unit)), mdCell(lostWhy(l)))
			}
			w("\n")
		}
	}
	if len(r.Exclusions) > 0 {
		w("## Rows excluded\n\n| Row | Unit | Rule | Rule position |\n| --- | --- | --- | --- |\n")
		for _, x := range r.Exclusions {
			w("| %d | %s | %s | %s |\n", x.Row, mdCell(x.Unit), mdCode(x.Rule), mdCell(x.RulePos))
		}
		w("\n")
	}
	if len(r.PlanWarnings) > 0 {
		w("## Plan warnings\n\n")
		for _, f := range r.PlanWarnings {
			w("- %s: %s\n", mdCell(f.Pos), mdCell(f.Summary))
		}
		w("\n")
	}
	if len(r.DataWarnings) > 0 {
		w("## Data warnings\n\n")
		for _, f := range r.DataWarnings {
			w("- %s: %s\n", mdCell(f.Pos), mdCell(f.Summary))
		}
		w("\n")
	}
	w("## Caution\n\n%s\n", Caution)
	return b.Bytes()
}

func writeMDTables(b *bytes.Buffer, d *record.StepDetail) {
	w := func(format string, args ...any) { fmt.Fprintf(b, format, args...) }
	if d.Test != nil {
		w("Global test: %s, statistic %s, df %s, p = %s.\n\n", d.Test.Method, fmtNum(d.Test.Statistic), reportFuncs["nums"].(func([]record.Num) string)(d.Test.DF), fmtP(d.Test.P))
	}
	if len(d.Anova) > 0 {
		w("| Term | Type | df | Den. df | SS | MS | F | p |\n| --- | --- | --- | --- | --- | --- | --- | --- |\n")
		for _, a := range d.Anova {
			w("| %s | %d | %s | %s | %s | %s | %s | %s |\n", mdCell(a.Term), a.Type, fmtNum(a.DF), fmtNum(a.DenDF), fmtNum(a.SS), fmtNum(a.MS), fmtNum(a.F), fmtP(a.P))
		}
		w("\n")
	}
	if len(d.VarianceComponents) > 0 {
		w("| Random term | Variance | SD | Share of total | Boundary |\n| --- | --- | --- | --- | --- |\n")
		for _, v := range d.VarianceComponents {
			w("| %s | %s | %s | %s | %t |\n", mdCell(v.Group), fmtNum(v.Variance), fmtNum(v.SD), reportFuncs["pct"].(func(record.Num) string)(v.Share), v.Boundary)
		}
		w("\n")
	}
	if len(d.MarginalMeans) > 0 {
		w("%s.\n\n", meansText(d))
		w("| Level | Mean (analysis scale) | SE | df | Lower | Upper | Response scale | Lower | Upper |\n| --- | --- | --- | --- | --- | --- | --- | --- | --- |\n")
		for _, m := range d.MarginalMeans {
			w("| %s | %s | %s | %s | %s | %s | %s | %s | %s |\n", mdCell(m.Level), fmtNum(m.Estimate), fmtNum(m.SE), fmtNum(m.DF), fmtNum(m.Lower), fmtNum(m.Upper), fmtNum(m.Response), fmtNum(m.ResponseLower), fmtNum(m.ResponseUpper))
		}
		w("\n")
	}
	if len(d.GroupSummaries) > 0 {
		w("| Level | n | Mean | Median | SD |\n| --- | --- | --- | --- | --- |\n")
		for _, g := range d.GroupSummaries {
			w("| %s | %d | %s | %s | %s |\n", mdCell(g.Level), g.N, fmtNum(g.Mean), fmtNum(g.Median), fmtNum(g.SD))
		}
		w("\n")
	}
}

// otherDataText is the note the verdict gives when the run analysed a
// file other than the plan's data.file ("" when it did not); quote
// surrounds the declared path.
func otherDataText(r *record.Result) string {
	if r.Inputs.DataAsDeclared() {
		return ""
	}
	return ", not the plan's data.file " + mdCode(r.Inputs.DataDeclared)
}

// rowsText says how many rows the reported step used of those read and
// what its n counts.
func rowsText(r *record.Result, e *record.EndpointResult) string {
	var rep *record.StepResult
	for i := range e.Steps {
		if e.Steps[i].ID == e.Reported {
			rep = &e.Steps[i]
		}
	}
	if rep == nil {
		return fmt.Sprintf("%d rows read; no step is reported.", r.Inputs.Rows)
	}
	what := "n counts rows"
	switch rep.Model.Derive {
	case "change", "baseline":
		what = fmt.Sprintf("n counts units, one observation from each unit's rows at %s and %s", rep.Model.From, rep.Model.To)
	case "unit-mean":
		what = "n counts unit means, each from the unit's rows averaged"
	}
	return fmt.Sprintf("Rows analysed: %d of the %d rows read, by the reported step %s (n = %d; %s). Each step's rows used and the rows it did not use, with the reason, add up to the rows read.",
		e.RowsAnalysed, r.Inputs.Rows, rep.ID, rep.N, what)
}

// maxRowsListed is the most row numbers the report lists per reason.
const maxRowsListed = 10

// unusedText groups a step's unused rows by reason: "excluded by
// no-baseline: rows 48, 49; missing response: rows 87, 113, 133".
func unusedText(us []record.UnusedRow) string {
	if len(us) == 0 {
		return "none"
	}
	var keys []string
	rows := map[string][]int{}
	for _, u := range us {
		k := strings.ReplaceAll(u.Reason, "-", " ")
		switch {
		case u.Reason == record.UnusedExcluded:
			k = "excluded by " + u.Rule
		case u.Column != "" && u.Reason == record.UnusedMissingCovariate:
			k = "missing " + u.Column
		case u.Reason == record.UnusedIncompleteBlock:
			k = "incomplete " + u.Column
		}
		if rows[k] == nil {
			keys = append(keys, k)
		}
		rows[k] = append(rows[k], u.Row)
	}
	var parts []string
	for _, k := range keys {
		rs := rows[k]
		var nums []string
		for i, r := range rs {
			if i == maxRowsListed {
				nums = append(nums, fmt.Sprintf("and %d more", len(rs)-maxRowsListed))
				break
			}
			nums = append(nums, strconv.Itoa(r))
		}
		parts = append(parts, fmt.Sprintf("%s: %s %s", k, plural(len(rs), "row", "rows"), strings.Join(nums, ", ")))
	}
	return strings.Join(parts, "; ")
}

// lostUnitsText says what the plan accepts when units are lost and how
// many were: "The plan accepts at least 3 units per cell (below that the
// run stops; plan.yaml:51:16). 1 unit is lost; the analysis went on with
// the units left."
func lostUnitsText(r *record.Result) string {
	var b strings.Builder
	if l := r.Design.LeastUnits; l != nil {
		below := "the run stops"
		if l.Below == "warn" {
			below = "the analysis goes on with a warning"
		}
		per := "per cell"
		if l.Per == "treatment" {
			per = "per treatment level"
		}
		fmt.Fprintf(&b, "The plan accepts at least %d %s %s (below that %s; %s). ", l.Count, plural(l.Count, "unit", "units"), per, below, l.Pos)
	}
	switch n := len(r.LostUnits); n {
	case 0:
		b.WriteString("No unit is lost.")
	default:
		fmt.Fprintf(&b, "%d %s lost; the analysis went on with the units left.", n, plural(n, "unit is", "units are"))
	}
	return b.String()
}

// lostWhy says why a unit is lost.
func lostWhy(l record.LostUnit) string {
	if l.Rule != "" {
		return "exclusion " + l.Rule + " removed its rows"
	}
	return "no row in the data"
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

func registeredText(r *record.Result) string {
	switch {
	case r.Unregistered:
		return "no: unregistered run"
	case r.Inputs.Registration != nil && r.Inputs.Registration.Matches:
		return fmt.Sprintf("yes (chain of %d, head `%s`)", len(r.Inputs.Registration.Chain), r.Inputs.Registration.Head)
	}
	return "no matching registration"
}

// mdCell writes text from the plan or the data (names, levels, labels,
// notes, messages) so that Markdown shows it as text: the characters that
// could start emphasis, a link, an image, code, a table cell or inline
// HTML are escaped with a backslash (CommonMark 0.30, backslash escapes),
// and line breaks become spaces, so nothing a plan or data file holds can
// add markup, links or script to report.md.
func mdCell(s string) string {
	rs := []rune(s)
	var b strings.Builder
	for i, r := range rs {
		next := rune(0)
		if i+1 < len(rs) {
			next = rs[i+1]
		}
		esc := false
		switch r {
		case '\\', '`', '*', '_', '[', ']', '|', '~':
			esc = true
		case '<': // an HTML tag, comment or autolink
			esc = unicode.IsLetter(next) || next == '/' || next == '!' || next == '?'
		case '&': // an entity
			esc = unicode.IsLetter(next) || next == '#'
		case '!': // an image
			esc = next == '['
		case '>': // a quote when it leads
			esc = i == 0
		case '#', '-', '+': // a heading or a list item when it leads, with a space after
			esc = i == 0 && (next == ' ' || next == '\t')
		case '\n', '\r':
			b.WriteByte(' ')
			continue
		}
		if esc {
			b.WriteByte('\\')
		}
		b.WriteRune(r)
	}
	return b.String()
}

// mdCells escapes each text with mdCell.
func mdCells(ss []string) []string {
	out := make([]string, len(ss))
	for i, s := range ss {
		out[i] = mdCell(s)
	}
	return out
}

// mdCode writes a name from the plan or the data as a code span whose
// content Markdown shows literally: fenced by one more backtick than the
// longest run inside, padded when it starts or ends with a backtick, with
// table-cell bars escaped (GitHub tables unescape them inside code) and
// line breaks as spaces.
func mdCode(s string) string {
	s = strings.NewReplacer("\n", " ", "\r", " ", "|", "\\|").Replace(s)
	longest, run := 0, 0
	for _, r := range s {
		if r == '`' {
			run++
			longest = max(longest, run)
		} else {
			run = 0
		}
	}
	fence := strings.Repeat("`", longest+1)
	if strings.HasPrefix(s, "`") || strings.HasSuffix(s, "`") {
		s = " " + s + " "
	}
	return fence + s + fence
}

func upperFirst(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// CSVTables returns the main result tables as CSV files (name -> bytes),
// one row per table row, with full-precision numbers.
func (rep *Report) CSVTables() (map[string][]byte, error) {
	r := rep.R
	tables := map[string][][]string{
		"checks.csv":       {{"endpoint", "step", "executed", "test", "statistic", "p", "fail_below", "verdict", "action", "reason", "next", "rule"}},
		"anova.csv":        {{"endpoint", "step", "term", "type", "df", "den_df", "ss", "ms", "f", "p"}},
		"coefficients.csv": {{"endpoint", "step", "name", "estimate", "se", "df", "t", "p"}},
		"means.csv":        {{"endpoint", "step", "factor", "level", "estimate", "se", "df", "lower", "upper", "response", "response_lower", "response_upper"}},
		"comparisons.csv":  {{"endpoint", "hypothesis", "step", "label", "estimate", "se", "df", "statistic", "p", "p_adjusted", "lower", "upper", "ratio", "ratio_lower", "ratio_upper", "reject", "verdict"}},
		"variance.csv":     {{"endpoint", "step", "group", "variance", "sd", "share", "boundary"}},
	}
	f := func(n record.Num) string {
		b, _ := n.MarshalJSON()
		return strings.Trim(string(b), `"`)
	}
	for _, e := range r.Endpoints {
		for _, s := range e.Steps {
			d := s.Decision
			if len(s.Checks) == 0 {
				tables["checks.csv"] = append(tables["checks.csv"], []string{e.ID, s.ID, strconv.FormatBool(s.Executed), "", "", "", "", "", d.Action.String(), d.Reason.String(), d.Next, d.Rule})
			}
			for _, c := range s.Checks {
				tables["checks.csv"] = append(tables["checks.csv"], []string{e.ID, s.ID, strconv.FormatBool(s.Executed), c.Test, f(c.Statistic), f(c.P), f(c.FailBelow), c.Verdict.String(), d.Action.String(), d.Reason.String(), d.Next, c.Pos})
			}
			if s.Results == nil {
				continue
			}
			for _, a := range s.Results.Anova {
				tables["anova.csv"] = append(tables["anova.csv"], []string{e.ID, s.ID, a.Term, strconv.Itoa(a.Type), f(a.DF), f(a.DenDF), f(a.SS), f(a.MS), f(a.F), f(a.P)})
			}
			for _, c := range s.Results.Coefficients {
				tables["coefficients.csv"] = append(tables["coefficients.csv"], []string{e.ID, s.ID, c.Name, f(c.Estimate), f(c.SE), f(c.DF), f(c.T), f(c.P)})
			}
			for _, m := range s.Results.MarginalMeans {
				tables["means.csv"] = append(tables["means.csv"], []string{e.ID, s.ID, m.Factor, m.Level, f(m.Estimate), f(m.SE), f(m.DF), f(m.Lower), f(m.Upper), f(m.Response), f(m.ResponseLower), f(m.ResponseUpper)})
			}
			for _, v := range s.Results.VarianceComponents {
				tables["variance.csv"] = append(tables["variance.csv"], []string{e.ID, s.ID, v.Group, f(v.Variance), f(v.SD), f(v.Share), strconv.FormatBool(v.Boundary)})
			}
		}
		for _, h := range e.Hypotheses {
			for _, c := range h.Comparisons {
				verdict := ""
				if c.Equivalence != nil {
					verdict = c.Equivalence.Verdict
				}
				tables["comparisons.csv"] = append(tables["comparisons.csv"], []string{e.ID, h.ID, h.Step, c.Label, f(c.Estimate), f(c.SE), f(c.DF), f(c.Statistic), f(c.P), f(c.PAdjusted), f(c.Lower), f(c.Upper), f(c.Ratio), f(c.RatioLower), f(c.RatioUpper), strconv.FormatBool(c.Reject), verdict})
			}
		}
	}
	out := map[string][]byte{}
	for name, rows := range tables {
		var b bytes.Buffer
		cw := csv.NewWriter(&b)
		if err := cw.WriteAll(neutralised(rows)); err != nil {
			return nil, fmt.Errorf("writing %s: %w", name, err)
		}
		out[name] = b.Bytes()
	}
	return out, nil
}

// TablesDir is the folder, inside a run directory, that holds the result
// tables as CSV files.
const TablesDir = "tables"

// WriteReports renders the report of r and writes DIR/report.html,
// DIR/report.md and DIR/tables/*.csv, each atomically. It is called
// before the audit record is sealed: the record lists the SHA-256 of each
// file written here, so nothing written here may show the record's
// content hash or its list of files (see package record, "Run folder").
func WriteReports(dir string, r *record.Result) error {
	rep := BuildReport(r)
	page, err := rep.HTML()
	if err != nil {
		return err
	}
	if err := record.WriteFileAtomic(filepath.Join(dir, ReportHTMLName), page, 0o644, false); err != nil {
		return err
	}
	if err := record.WriteFileAtomic(filepath.Join(dir, ReportMDName), rep.Markdown(), 0o644, false); err != nil {
		return err
	}
	tables, err := rep.CSVTables()
	if err != nil {
		return err
	}
	tdir := filepath.Join(dir, TablesDir)
	if err := os.MkdirAll(tdir, 0o755); err != nil {
		return fmt.Errorf("creating %s: %w", tdir, err)
	}
	names := make([]string, 0, len(tables))
	for name := range tables {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if err := record.WriteFileAtomic(filepath.Join(tdir, name), tables[name], 0o644, false); err != nil {
			return err
		}
	}
	return nil
}

// answerText says how the reported step answered a hypothesis: the
// adjustment and estimator applied and whether they are the hypothesis's
// own or the ones the step declares (with the plan position).
func answerText(h record.HypothesisResult) string {
	if !h.Assessable && h.AdjustUsed == "" {
		return "not answered on step " + h.Step
	}
	how := "adjustment " + h.AdjustUsed
	if h.Estimator != "" {
		how += " and estimator " + h.Estimator
	}
	if h.Answer == "" {
		return fmt.Sprintf("answered on step %s with %s, as the hypothesis declares", h.Step, how)
	}
	was := ""
	if h.Adjust != h.AdjustUsed {
		was = "; the hypothesis declares adjustment " + h.Adjust
	}
	return fmt.Sprintf("answered on step %s with %s, as the step declares (%s%s)", h.Step, how, h.Answer, was)
}

// hypothesisTerms states the terms a reviewer needs to check a verdict:
// sides, alpha, the intervals' level and whether they are simultaneous,
// and the declared margin with its scale.
func hypothesisTerms(h record.HypothesisResult) string {
	var parts []string
	if h.Kind == "versus-control" || h.Kind == "pairwise" {
		parts = append(parts, upperFirst(sidesWords(h.Sides)))
	}
	parts = append(parts, "alpha = "+fmtNum(h.Alpha))
	if lv := float64(h.Level); !math.IsNaN(lv) && lv > 0 {
		pc := strconv.FormatFloat(100*lv, 'f', -1, 64) + "%"
		if h.Intervals == "simultaneous" {
			parts = append(parts, "simultaneous "+pc+" intervals")
		} else {
			parts = append(parts, pc+" intervals per comparison, not adjusted for multiplicity")
		}
	}
	if m := h.Margin; m != nil {
		var b []string
		if !math.IsNaN(float64(m.Lower)) {
			b = append(b, "lower "+fmtNum(m.Lower))
		}
		if !math.IsNaN(float64(m.Upper)) {
			b = append(b, "upper "+fmtNum(m.Upper))
		}
		parts = append(parts, fmt.Sprintf("margin on the %s scale: %s", m.Scale, strings.Join(b, ", ")))
	}
	return strings.Join(parts, "; ")
}

// intervalHeader says the level of a hypothesis's intervals and whether
// they are simultaneous or per comparison (not adjusted for multiplicity).
func intervalHeader(h record.HypothesisResult) string {
	if math.IsNaN(float64(h.Level)) || h.Level == 0 {
		return ""
	}
	lv := strconv.FormatFloat(100*float64(h.Level), 'f', -1, 64) + "%"
	if h.Intervals == "simultaneous" {
		return lv + ", simultaneous"
	}
	return lv + ", per comparison, unadjusted"
}

// meansText says how a step's marginal means were formed: the level of
// their intervals, the factors averaged over, and the covariate values.
func meansText(d *record.StepDetail) string {
	s := "Marginal means"
	if lv := float64(d.MeansLevel); !math.IsNaN(lv) && lv > 0 {
		s += " with " + strconv.FormatFloat(100*lv, 'f', -1, 64) + "% intervals"
	}
	if len(d.MeansOver) > 0 {
		s += ", averaged with equal weights over " + strings.Join(d.MeansOver, ", ")
	}
	if len(d.MeansAt) > 0 {
		var at []string
		for _, c := range d.MeansAt {
			at = append(at, c.Name+" = "+fmtNum(c.Value))
		}
		s += ", at " + strings.Join(at, ", ") + " (the covariates' means)"
	}
	return s
}

// sidesWords writes the alternative of a test.
func sidesWords(s string) string {
	switch s {
	case "less":
		return "one-sided, alternative: less than"
	case "greater":
		return "one-sided, alternative: greater than"
	}
	return "two-sided"
}

// neutralised returns the rows with every text cell that a spreadsheet
// would run as a formula (one starting with =, +, -, @, a tab or a
// carriage return) prefixed with a single quote, the common practice
// against CSV injection (OWASP, "CSV Injection"). Numbers, including
// negative ones and -inf, are left as they are. rows is not modified.
func neutralised(rows [][]string) [][]string {
	out := make([][]string, len(rows))
	for i, row := range rows {
		out[i] = make([]string, len(row))
		for j, c := range row {
			out[i][j] = c
			if c == "" || !strings.ContainsRune("=+-@\t\r", rune(c[0])) {
				continue
			}
			if _, err := strconv.ParseFloat(c, 64); err != nil {
				out[i][j] = "'" + c
			}
		}
	}
	return out
}
