package plan_test

import (
	"os"
	"strings"
	"testing"

	"furrow/checker/method"
	"furrow/internal/testkit"
	"furrow/plan"
)

// Efficacy formulas against hand-computed worked examples. The formulas
// are written from memory of Abbott (1925, J. Econ. Entomol. 18:265),
// Henderson & Tilton (1955, J. Econ. Entomol. 48:157) and
// Schneider-Orelli (1947); no table of those papers was at hand, so the
// expected values are computed by hand from the formulas (shown beside
// each case), and the identities between the formulas that the papers
// state (Henderson-Tilton reduces to Abbott when the counts before
// treatment are equal; Schneider-Orelli is Abbott applied to survivors)
// are checked on many values. Tolerance 1e-12 absolute (exact arithmetic
// on these inputs agrees to about 1e-14).
func TestDerivedFunctionsWorkedExamples(t *testing.T) {
	cases := []struct {
		fn   string
		x    []float64
		want float64
	}{
		{"abbott", []float64{10, 50}, 80},                                           // 100 (1 - 10/50)
		{"henderson_tilton", []float64{100, 20, 80, 120}, 100 * (1 - 1600.0/12000)}, // 86.667
		{"schneider_orelli", []float64{60, 20}, 50},                                 // 100 (60-20)/(100-20)
		{"daily_gain", []float64{300, 250, 100}, 0.5},                               // (300-250)/100
		{"feed_conversion", []float64{150, 50}, 3},                                  // 150/50
		{"standard_moisture", []float64{8000, 20, 14}, 8000 * 80.0 / 86},            // 7441.86
	}
	for _, c := range cases {
		f := plan.DerivedFunctionByName(c.fn)
		if f == nil {
			t.Fatalf("no built-in %s", c.fn)
		}
		got, ok := f.Eval(c.x)
		if !ok {
			t.Fatalf("%s%v: zero divisor reported", c.fn, c.x)
		}
		testkit.CheckClose(t, c.fn, got, c.want, 1e-12)
	}
	ab, ht, so := plan.DerivedFunctionByName("abbott"), plan.DerivedFunctionByName("henderson_tilton"), plan.DerivedFunctionByName("schneider_orelli")
	for _, tc := range [][3]float64{{3, 40, 55}, {0, 12, 7}, {17, 17, 90}, {250, 3, 1000}} {
		pre, tAfter, cAfter := tc[0]+1, tc[1], tc[2]
		a, _ := ab.Eval([]float64{tAfter, cAfter})
		h, _ := ht.Eval([]float64{pre, tAfter, pre, cAfter})
		testkit.CheckClose(t, "henderson-tilton with equal pre-counts = abbott", h, a, 1e-12)
		b, k := 100*tAfter/(tAfter+cAfter+1), 100*cAfter/(tAfter+cAfter+5)
		s, _ := so.Eval([]float64{b, k})
		a2, _ := ab.Eval([]float64{100 - b, 100 - k})
		testkit.CheckClose(t, "schneider-orelli = abbott on survivors", s, a2, 1e-12)
	}
	if _, ok := ab.Eval([]float64{3, 0}); ok {
		t.Error("abbott with a zero control: want a zero divisor")
	}
	if _, ok := so.Eval([]float64{3, 100}); ok {
		t.Error("schneider-orelli with 100% control mortality: want a zero divisor")
	}
}

// derivedPlan is the base plan with a derived block appended.
func derivedPlan(t *testing.T, columns, derived string) string {
	t.Helper()
	src, err := os.ReadFile("testdata/base.yaml")
	if err != nil {
		t.Fatal(err)
	}
	s := strings.Replace(string(src), "design:\n", columns+"design:\n", 1)
	return s + "derived:\n" + derived
}

const derivedColumns = `  - name: alive
    role: covariate
    unit: insects
    min: 1
    max: 5000
  - name: weight
    role: covariate
    unit: kg
    min: 0
  - name: days
    role: covariate
    unit: d
    min: 0
  - name: mortality
    role: covariate
    unit: "%"
    min: 0
    max: 99
`

func TestDerivedLint(t *testing.T) {
	cases := []struct {
		name, derived, want string // want "" = no derived finding
	}{
		{"abbott", "  - {name: eff, unit: \"%\", formula: \"abbott(alive, control.alive)\", reference: block}\n", ""},
		{"schneider", "  - {name: so, unit: \"%\", formula: \"schneider_orelli(mortality, control.mortality)\", reference: trial}\n", ""},
		{"ratio", "  - {name: r, unit: kg/d, formula: \"weight / days\", when-zero: missing}\n", ""},
		{"undeclared", "  - {name: r, unit: kg, formula: \"weight + wieght\"}\n", `column "wieght" is not a declared numeric column`},
		{"factor", "  - {name: r, unit: kg, formula: \"weight + block\"}\n", `column "block" is not a declared numeric column`},
		{"mixed", "  - {name: r, unit: kg, formula: \"weight + days\"}\n", "+ mixes units: the left side is in kg, the right side in d"},
		{"zero", "  - {name: r, unit: kg/d, formula: \"weight / days\"}\n", "a divisor of r can be zero"},
		{"zero-ok", "  - {name: r, unit: kg/insects, formula: \"weight / alive\"}\n", ""},
		{"zero-builtin", "  - {name: e, unit: \"%\", formula: \"abbott(weight, control.weight)\", reference: block}\n", "a divisor of e can be zero"},
		{"unit", "  - {name: r, unit: g/d, formula: \"weight / alive\"}\n", "declares unit g/d but its formula gives kg/insects"},
		{"reference", "  - {name: e, unit: \"%\", formula: \"abbott(alive, control.alive)\"}\n", "declare reference: block or trial"},
		{"builtin-units", "  - {name: e, unit: \"%\", formula: \"abbott(alive, weight)\", when-zero: stop}\n", "treated is in insects but control is in kg"},
		{"not-builtin", "  - {name: e, unit: \"%\", formula: \"now()\"}\n", "now is not a built-in function"},
		{"syntax", "  - {name: e, unit: \"%\", formula: \"alive +\"}\n", "the formula of e"},
		{"name", "  - {name: weight, unit: kg, formula: \"weight\"}\n", "has the name of a column"},
		{"compare", "  - {name: e, unit: kg, formula: \"weight > 3\"}\n", "operator > is not allowed"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p, ds, _ := plan.Parse("p.yaml", []byte(derivedPlan(t, derivedColumns, c.derived)), method.Default)
			var got []string
			for _, d := range ds {
				if strings.HasPrefix(d.Path, "derived") || strings.HasPrefix(d.Code, "derived") {
					got = append(got, d.Pos.String()+": "+d.Summary)
					if d.Pos.Line == 0 {
						t.Errorf("finding without a line: %s", d.Summary)
					}
				}
			}
			if c.want == "" {
				if len(got) > 0 || p == nil {
					t.Fatalf("want no derived finding, got %q (all: %v)", got, ds)
				}
				return
			}
			if len(got) != 1 || !strings.Contains(got[0], c.want) {
				t.Fatalf("want one finding containing %q, got %q (all: %v)", c.want, got, ds)
			}
		})
	}
}

func TestDerivedEvalAndHash(t *testing.T) {
	src := derivedPlan(t, derivedColumns, "  - {name: eff, unit: \"%\", formula: \"henderson_tilton(alive, alive * 0.5, control.alive, control.alive)\", reference: block}\n")
	p, ds, _ := plan.Parse("p.yaml", []byte(src), method.Default)
	if p == nil || ds.HasErrors() {
		t.Fatalf("plan refused: %v", ds)
	}
	f, err := plan.CompileDerived(p.Derived[0], plan.FormulaColumns(p))
	if err != nil {
		t.Fatal(err)
	}
	got, err := f.Eval(map[string]float64{"alive": 40}, map[string]float64{"alive": 60})
	if err != nil {
		t.Fatal(err)
	}
	testkit.CheckClose(t, "henderson-tilton 40,20,60,60", got, 50, 1e-12) // 100 (1 - 20*60/(40*60))
	if _, err := f.Eval(map[string]float64{"alive": 0}, map[string]float64{"alive": 60}); !plan.IsZeroDivisor(err) {
		t.Errorf("zero pre-count: want a zero divisor, got %v", err)
	}
	base, _, _ := plan.Parse("p.yaml", []byte(strings.SplitN(src, "derived:\n", 2)[0]), method.Default)
	if plan.Hash(base) == plan.Hash(p) {
		t.Error("the derived block does not change the plan hash")
	}
	p2, _, _ := plan.Parse("p.yaml", []byte(strings.Replace(src, "0.5", "0.25", 1)), method.Default)
	if plan.Hash(p2) == plan.Hash(p) {
		t.Error("a changed formula does not change the plan hash")
	}
}
