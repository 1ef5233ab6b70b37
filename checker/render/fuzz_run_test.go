package render

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"runtime/debug"
	"testing"
	"time"

	"furrow/checker/internal/fixture"
	"furrow/checker/method"
	"furrow/internal/testkit"

	"furrow/checker/engine"
	"furrow/checker/record"
	"furrow/plan"
)

// This file holds FuzzRun: the whole run (read, contract, exclusions,
// cascade, record, report) on mutated copies of the example data. The
// property is robustness only: Run returns a result or an error, never
// panics and never hangs; a returned result encodes to a record that
// validates against the audit schema, its report renders, and no check is
// recorded as passed on a p-value that is not a number.

// fuzzExample is one example plan with its data parsed into cells.
type fuzzExample struct {
	name   string
	plan   []byte // plan.yaml bytes
	delim  rune
	header []string
	rows   [][]string
	unit   int // index of the unit column, -1 when none
	resp   int // index of the first response column
}

// fuzzPalette holds the cell texts a mutation can write. Index 0 is
// replaced by the fuzzed free text.
var fuzzPalette = []string{
	"", "0", "-1", "1e308", "-1e308", "1e-308", "5e-324", "NaN", "Inf", "-Inf",
	"NA", "abc", "1e400", "1", "2", "-0", "0.5", "1000000",
}

// Mutation kinds; each mutation is four bytes: kind, a, b, c.
const (
	opSet      = iota // cell (row a, column b) := palette[c]
	opText            // cell (row a, column b) := the fuzzed text
	opDup             // duplicate row a
	opDrop            // drop row a
	opSwap            // swap column b between rows a and c
	opSingle          // keep only row a
	opSame            // every row becomes a copy of row a
	opColumn          // every cell of column b := palette[c]
	opOneUnit         // the level of column b at row a keeps only the unit of row a
	opResponse        // every response cell := palette[c] (a constant response)
	opCount
)

// fuzzMaxRows bounds the work of one input: duplication stops here.
const fuzzMaxRows = 400

// fuzzMaxOps bounds the number of mutations applied per input.
const fuzzMaxOps = 12

func loadFuzzExamples(tb testing.TB) []fuzzExample {
	tb.Helper()
	var out []fuzzExample
	for _, name := range exampleNames {
		dir := filepath.Join("..", "..", "examples", name)
		pp := filepath.Join(dir, "plan.yaml")
		src, err := os.ReadFile(pp)
		if err != nil {
			tb.Fatal(err)
		}
		p, ds, err := plan.Parse(pp, src, method.Default)
		if err != nil || ds.HasErrors() {
			tb.Fatalf("example %s: %v %v", name, err, ds)
		}
		raw, err := os.ReadFile(filepath.Join(dir, p.Data.File))
		if err != nil {
			tb.Fatal(err)
		}
		delim := ','
		if p.Data.Delimiter != "" {
			delim = []rune(p.Data.Delimiter)[0]
		}
		cr := csv.NewReader(bytes.NewReader(raw))
		cr.Comma = delim
		recs, err := cr.ReadAll()
		if err != nil || len(recs) < 2 {
			tb.Fatalf("example %s data: %v", name, err)
		}
		ex := fuzzExample{name: name, plan: src, delim: delim, header: recs[0], rows: recs[1:], unit: -1, resp: -1}
		for _, c := range p.Columns {
			for j, h := range ex.header {
				if h != c.Name {
					continue
				}
				if c.Role == plan.RoleUnit {
					ex.unit = j
				}
				if c.Role == plan.RoleResponse && ex.resp < 0 {
					ex.resp = j
				}
			}
		}
		out = append(out, ex)
	}
	return out
}

// mutate applies ops to a copy of the example's rows.
func (ex *fuzzExample) mutate(ops []byte, text string) [][]string {
	rows := make([][]string, len(ex.rows))
	for i, r := range ex.rows {
		rows[i] = append([]string(nil), r...)
	}
	nc := len(ex.header)
	val := func(c byte) string {
		i := int(c) % len(fuzzPalette)
		if i == 0 {
			return text
		}
		return fuzzPalette[i]
	}
	for k := 0; k+3 < len(ops) && k/4 < fuzzMaxOps; k += 4 {
		kind, a, b, c := int(ops[k])%opCount, int(ops[k+1]), int(ops[k+2])%nc, ops[k+3]
		if len(rows) == 0 {
			break
		}
		a %= len(rows)
		switch kind {
		case opSet:
			rows[a][b] = val(c)
		case opText:
			rows[a][b] = text
		case opDup:
			if len(rows) < fuzzMaxRows {
				dup := append([]string(nil), rows[a]...)
				rows = append(rows[:a+1], append([][]string{dup}, rows[a+1:]...)...)
			}
		case opDrop:
			rows = append(rows[:a], rows[a+1:]...)
		case opSwap:
			o := int(c) % len(rows)
			rows[a][b], rows[o][b] = rows[o][b], rows[a][b]
		case opSingle:
			rows = [][]string{rows[a]}
		case opSame:
			keep := append([]string(nil), rows[a]...)
			for i := range rows {
				rows[i] = append([]string(nil), keep...)
			}
		case opColumn:
			v := val(c)
			for i := range rows {
				rows[i][b] = v
			}
		case opOneUnit:
			if ex.unit < 0 {
				continue
			}
			level, unit := rows[a][b], rows[a][ex.unit]
			var kept [][]string
			for _, r := range rows {
				if r[b] != level || r[ex.unit] == unit {
					kept = append(kept, r)
				}
			}
			rows = kept
		case opResponse:
			v := val(c)
			for i := range rows {
				rows[i][ex.resp] = v
			}
		}
	}
	return rows
}

func (ex *fuzzExample) csvBytes(rows [][]string) []byte {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Comma = ex.delim
	_ = w.Write(ex.header)
	_ = w.WriteAll(rows)
	return buf.Bytes()
}

// fuzzRunOnce writes the mutated data beside a copy of the plan and checks
// the run's properties.
func fuzzRunOnce(t *testing.T, ex *fuzzExample, data []byte) {
	t.Helper()
	dir := t.TempDir()
	pp := filepath.Join(dir, "plan.yaml")
	if err := os.WriteFile(pp, ex.plan, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "plots.csv"), data, 0o644); err != nil {
		t.Fatal(err)
	}
	type outcome struct {
		r     *record.Result
		err   error
		panic any
		stack []byte
	}
	done := make(chan outcome, 1)
	go func() {
		defer func() {
			if v := recover(); v != nil {
				done <- outcome{panic: v, stack: debug.Stack()}
			}
		}()
		r, err := engine.Run(engine.RunOptions{PlanPath: pp, OutDir: filepath.Join(dir, "run"), Now: fixture.T0, Tool: record.ToolInfo{Version: "fuzz"}, Unregistered: true})
		done <- outcome{r: r, err: err}
	}()
	var o outcome
	select {
	case o = <-done:
	case <-time.After(2 * time.Minute):
		// A hang guard, not a speed measurement: one run of an example
		// takes well under a second.
		t.Fatalf("%s: Run did not return within two minutes on:\n%s", ex.name, data)
	}
	if o.panic != nil {
		t.Fatalf("%s: Run panicked: %v\n%s\ndata:\n%s", ex.name, o.panic, o.stack, data)
	}
	if o.err != nil {
		if o.r != nil {
			t.Fatalf("%s: Run returned both a result and an error %v", ex.name, o.err)
		}
		if o.err.Error() == "" {
			t.Fatalf("%s: empty error", ex.name)
		}
		t.Logf("%s: error: %v", ex.name, o.err)
		return
	}
	if o.r == nil {
		t.Fatalf("%s: Run returned neither a result nor an error", ex.name)
	}
	checkFuzzResult(t, ex.name, o.r, data)
	for _, ep := range o.r.Endpoints {
		t.Logf("%s: endpoint %s: status %v, reported %q", ex.name, ep.ID, ep.Status, ep.Reported)
	}
}

// checkFuzzResult checks the properties of a returned result.
func checkFuzzResult(t *testing.T, name string, r *record.Result, data []byte) {
	t.Helper()
	fixture.CheckSane(t, name, r, data, func(r *record.Result) error { _, err := BuildReport(r).HTML(); return err })
}

// fuzzOps builds a mutation list from (kind, a, b, c) quadruples.
func fuzzOps(q ...int) []byte {
	b := make([]byte, len(q))
	for i, v := range q {
		b[i] = byte(v)
	}
	return b
}

// fuzzRunSeeds are the degenerate cases the corpus starts from; a plain
// go test runs each of them once. The column index of each
// example's response is looked up at run time via opResponse, so the
// seeds do not depend on column order.
var fuzzRunSeeds = []struct {
	ex   uint8
	ops  []byte
	text string
}{
	{0, nil, ""},
	{1, nil, ""},
	{2, nil, ""},
	{0, fuzzOps(opResponse, 0, 0, 1), ""},                            // constant response 0
	{1, fuzzOps(opResponse, 0, 0, 13), ""},                           // constant response 1
	{2, fuzzOps(opResponse, 0, 0, 14), ""},                           // constant response 2
	{0, fuzzOps(opSingle, 5, 0, 0), ""},                              // a single row
	{1, fuzzOps(opSingle, 3, 0, 0), ""},                              // a single row
	{2, fuzzOps(opSingle, 7, 0, 0), ""},                              // a single row
	{0, fuzzOps(opSame, 2, 0, 0), ""},                                // all rows identical
	{1, fuzzOps(opSame, 2, 0, 0), ""},                                // all rows identical
	{2, fuzzOps(opSame, 2, 0, 0), ""},                                // all rows identical
	{0, fuzzOps(opSet, 0, 5, 3, opSet, 1, 5, 5), ""},                 // huge and tiny responses
	{1, fuzzOps(opSet, 0, 3, 7, opSet, 4, 3, 8), ""},                 // NaN and Inf text
	{2, fuzzOps(opSet, 0, 4, 2, opSet, 3, 4, 1, opSet, 6, 4, 0), ""}, // negative, zero, empty
	{0, fuzzOps(opDup, 0, 0, 0, opDup, 0, 0, 0), ""},                 // duplicated rows
	{1, fuzzOps(opDup, 9, 0, 0), ""},                                 // duplicated row
	{2, fuzzOps(opDrop, 0, 0, 0, opDrop, 10, 0, 0), ""},              // dropped rows
	{0, fuzzOps(opDrop, 1, 0, 0), ""},                                // unit lacks its harvest row
	{0, fuzzOps(opSwap, 0, 3, 5), ""},                                // swapped treatment levels
	{1, fuzzOps(opSwap, 0, 2, 9), ""},                                // swapped varieties
	{2, fuzzOps(opSwap, 0, 1, 20), ""},                               // swapped irrigation
	{0, fuzzOps(opOneUnit, 0, 3, 0), ""},                             // a treatment with one unit
	{1, fuzzOps(opOneUnit, 0, 2, 0), ""},                             // a variety with one unit
	{2, fuzzOps(opOneUnit, 0, 2, 0), ""},                             // a nitrogen level with one unit
	{2, fuzzOps(opOneUnit, 0, 1, 0), ""},                             // an irrigation level with one unit
	{0, fuzzOps(opColumn, 0, 0, 13), ""},                             // one site only
	{2, fuzzOps(opColumn, 0, 0, 13), ""},                             // one block only
	{1, fuzzOps(opText, 0, 3, 0), "1,5e308"},                         // decimal-comma huge value
	{0, fuzzOps(opResponse, 0, 0, 12), ""},                           // overflowing response
	{2, fuzzOps(opResponse, 0, 0, 5), ""},                            // subnormal response
}

func seedExample(exs []fuzzExample, i uint8) *fuzzExample { return &exs[int(i)%len(exs)] }

// FuzzRun runs the whole pipeline on mutated example data. Run it with
// go test -fuzz=FuzzRun -fuzztime=60s ./checker/render; the committed corpus in
// testdata/fuzz/FuzzRun holds the inputs that once crashed.
func FuzzRun(f *testing.F) {
	exs := loadFuzzExamples(f)
	for _, s := range fuzzRunSeeds {
		f.Add(s.ex, s.ops, s.text)
	}
	f.Fuzz(func(t *testing.T, exi uint8, ops []byte, text string) {
		text = text[:min(len(text), 64)]
		ex := seedExample(exs, exi)
		fuzzRunOnce(t, ex, ex.csvBytes(ex.mutate(ops, text)))
	})
}

// FuzzExplain mutates valid plans as plan's FuzzValidate does; for every
// mutated plan without errors the plan document must build and render to
// Markdown and HTML without a panic. Run it with
// go test -fuzz=FuzzExplain ./checker/render.
func FuzzExplain(f *testing.F) {
	files, _ := filepath.Glob("../../examples/*/plan.yaml")
	more, _ := filepath.Glob("../../plan/testdata/*.yaml")
	for _, file := range append(files, more...) {
		src, err := os.ReadFile(file)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(src, []byte{})
		f.Add(src, []byte{3, 0, 0, 6, 9, 0})
		f.Add(src, []byte{1, 40, 9, 2, 5, 1})
	}
	f.Fuzz(func(t *testing.T, src, ops []byte) {
		if len(src) > 1<<14 {
			return
		}
		mut, ok := testkit.MutateYAML(src, ops)
		if !ok {
			mut = src
		}
		p, ds, err := plan.Parse("fuzz.yaml", mut, method.Default)
		if err != nil || p == nil || ds.HasErrors() {
			return
		}
		doc := Explain(p, plan.Hash(p))
		if len(doc.Sections) == 0 {
			t.Fatalf("plan document without sections\n%s", mut)
		}
		if len(doc.Markdown()) == 0 || len(doc.HTML()) == 0 {
			t.Fatalf("plan document renders empty\n%s", mut)
		}
	})
}
