package infer

import (
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/design"

	"furrow/internal/testkit"
)

// contrastRef holds testdata/ref_contrasts.json, written by
// testdata/ref_contrasts.R (R 4.2.2, emmeans 1.8.4.1, 17 significant
// digits).
type contrastRef struct {
	NitrogenData struct {
		Block, Irrigation, Nitrogen []string
		Soiln, Yield                []float64
		IrrigationLevels            []string  `json:"irrigation_levels"`
		NitrogenLevels              []string  `json:"nitrogen_levels"`
		Rates                       []float64 `json:"rates"`
	} `json:"nitrogen_data"`
	ProductsData struct {
		Product, Site []string
		Gain          []float64
		ProductLevels []string `json:"product_levels"`
		SiteLevels    []string `json:"site_levels"`
	} `json:"products_data"`
	Poly struct {
		Values []float64
		Coef   [][]float64
		Names  []string
	}
	NitrogenFit struct {
		DFResidual float64 `json:"df_residual"`
	} `json:"nitrogen_fit"`
	ProductsFit struct {
		DFResidual float64 `json:"df_residual"`
	} `json:"products_fit"`
	tables map[string]json.RawMessage
}

// refTable is one emmeans summary, column-wise in emmeans' row order.
type refTable struct {
	Contrast, Irrigation, Nitrogen, Product, Site []string
	IrrigationPairwise                            []string `json:"irrigation_pairwise"`
	NitrogenPairwise                              []string `json:"nitrogen_pairwise"`
	NitrogenRobson                                []string `json:"nitrogen_robson"`
	Estimate, Response, Ratio                     []float64
	SE, DF, Lower, Upper, T, P                    []float64
	Delta                                         float64
}

func loadContrastRef(t *testing.T) *contrastRef {
	t.Helper()
	path := filepath.Join("testdata", "ref_contrasts.json")
	var r contrastRef
	testkit.DecodeFile(t, path, &r)
	testkit.DecodeFile(t, path, &r.tables)
	return &r
}

func (r *contrastRef) table(t *testing.T, key string) refTable {
	t.Helper()
	raw, ok := r.tables[key]
	if !ok {
		t.Fatalf("reference table %s missing from ref_contrasts.json", key)
	}
	var tab refTable
	if err := json.Unmarshal(raw, &tab); err != nil {
		t.Fatalf("decoding %s: %v", key, err)
	}
	return tab
}

func factorOf(t *testing.T, name string, values, levels []string) design.Factor {
	t.Helper()
	f := design.Factor{Name: name, Levels: levels, Codes: make([]int, len(values))}
	for i, v := range values {
		f.Codes[i] = indexOf(levels, v)
		if f.Codes[i] < 0 {
			t.Fatalf("%s: level %q not in %v", name, v, levels)
		}
	}
	return f
}

// nitrogenFit fits f(yield) ~ block + irrigation * nitrogen + soiln to the
// invented nitrogen trial by QR and returns the fit and its design.
func nitrogenFit(t *testing.T, r *contrastRef, tr Transform) (*ols, *design.Matrix) {
	t.Helper()
	d := r.NitrogenData
	fr, err := design.NewFrame([]design.Factor{
		factorOf(t, "block", d.Block, []string{"B1", "B2", "B3", "B4"}),
		factorOf(t, "irrigation", d.Irrigation, d.IrrigationLevels),
		factorOf(t, "nitrogen", d.Nitrogen, d.NitrogenLevels),
	}, []design.Numeric{{Name: "soiln", Values: d.Soiln}})
	if err != nil {
		t.Fatal(err)
	}
	terms := []design.Term{{Vars: []string{"block"}}, {Vars: []string{"irrigation"}}, {Vars: []string{"nitrogen"}},
		{Vars: []string{"irrigation", "nitrogen"}}, {Vars: []string{"soiln"}}}
	m, err := design.Build(fr, design.Spec{Intercept: true, Terms: terms})
	if err != nil {
		t.Fatal(err)
	}
	y := make([]float64, len(d.Yield))
	for i, v := range d.Yield {
		if y[i], err = tr.Apply(v); err != nil {
			t.Fatal(err)
		}
	}
	fit := fitOLS(t, m.X, y)
	if fit.df != r.NitrogenFit.DFResidual {
		t.Fatalf("residual df %v, R %v", fit.df, r.NitrogenFit.DFResidual)
	}
	return fit, m
}

// productsFit fits log(gain) ~ site * product to the invented products
// trial.
func productsFit(t *testing.T, r *contrastRef) (*ols, *design.Matrix) {
	t.Helper()
	d := r.ProductsData
	fr, err := design.NewFrame([]design.Factor{
		factorOf(t, "site", d.Site, d.SiteLevels),
		factorOf(t, "product", d.Product, d.ProductLevels),
	}, nil)
	if err != nil {
		t.Fatal(err)
	}
	terms := []design.Term{{Vars: []string{"site"}}, {Vars: []string{"product"}}, {Vars: []string{"site", "product"}}}
	m, err := design.Build(fr, design.Spec{Intercept: true, Terms: terms})
	if err != nil {
		t.Fatal(err)
	}
	y := make([]float64, len(d.Gain))
	for i, v := range d.Gain {
		y[i] = math.Log(v)
	}
	fit := fitOLS(t, m.X, y)
	if fit.df != r.ProductsFit.DFResidual {
		t.Fatalf("residual df %v, R %v", fit.df, r.ProductsFit.DFResidual)
	}
	return fit, m
}

// groupsOf converts design's conditional grid to infer's groups, with the
// plain level names as row labels (the grid factor is a single factor).
func groupsOf(t *testing.T, m *design.Matrix, factor, by string) []Group {
	t.Helper()
	gg, err := m.MeansGridBy([]string{factor}, []string{by})
	if err != nil {
		t.Fatal(err)
	}
	out := make([]Group, len(gg))
	for i, g := range gg {
		out[i] = Group{By: g.By, L: g.L, Labels: plainLevels(g.Labels)}
	}
	return out
}

// plainLevels turns "factor[level]" labels into "level".
func plainLevels(labels []string) []string {
	out := make([]string, len(labels))
	for i, l := range labels {
		l = l[strings.Index(l, "[")+1:]
		out[i] = strings.TrimSuffix(l, "]")
	}
	return out
}

func flatten(gs []GroupEstimates) []Estimate {
	var out []Estimate
	for _, g := range gs {
		out = append(out, g.Estimates...)
	}
	return out
}

// Tolerances against emmeans, relative. emmeans computes the same closed
// forms from the same least-squares fit (its coefficients from R's QR,
// ours from gonum's), so the agreement is at rounding level. A quantity
// that is a difference can be near zero while its rounding error is set
// by its parts, so estimates are compared relative to the larger of
// themselves and their SE, t relative to the larger of itself and 1 and
// interval limits relative to the larger of themselves and the interval's
// half-width (testkit.CheckWithin with those absolute floors); SEs, p and
// back-transformed values plainly relative. The worst disagreement
// measured on linux/amd64 over the tables is logged by each test and
// given beside each tolerance, which is about 100 times it and far
// inside the 1e-6 asked of this reference. Degrees of freedom are
// compared exactly.
const (
	tolEstimate = 5e-12 // estimates, SEs, t, limits, responses, ratios: worst 3.5e-14
	tolP        = 1e-11 // unadjusted, holm and bonferroni p, equivalence t and p: worst 1.2e-13
)

type agreement struct{ est, p float64 }

// scaledErr is the disagreement that CheckWithin(got, want, tol,
// tol·scale) bounds: |got - want| / max(|want|, scale).
func scaledErr(got, want, scale float64) float64 {
	return math.Abs(got-want) / math.Max(math.Abs(want), scale)
}

// checkEstimates compares estimates with an emmeans table row by row:
// estimate, SE, df, t, p and the interval.
func checkEstimates(t *testing.T, what string, got []Estimate, want refTable, worst *agreement) {
	t.Helper()
	if len(got) != len(want.Estimate) {
		t.Fatalf("%s: %d estimates, emmeans %d", what, len(got), len(want.Estimate))
	}
	for i, e := range got {
		name := fmt.Sprintf("%s %s (row %d)", what, e.Label, i+1)
		half := 0.5 * (want.Upper[i] - want.Lower[i])
		for _, c := range []struct {
			q         string
			got, want float64
			scale     float64 // the floor of the relative comparison
		}{
			{"estimate", e.Estimate, want.Estimate[i], want.SE[i]}, {"SE", e.SE, want.SE[i], 0}, {"t", e.T, want.T[i], 1},
			{"lower", e.Lower, want.Lower[i], half}, {"upper", e.Upper, want.Upper[i], half},
		} {
			testkit.CheckWithin(t, name+" "+c.q+" (emmeans)", c.got, c.want, tolEstimate, tolEstimate*c.scale)
			worst.est = math.Max(worst.est, scaledErr(c.got, c.want, c.scale))
		}
		testkit.CheckRelClose(t, name+" p (emmeans)", e.P, want.P[i], tolP)
		worst.p = math.Max(worst.p, testkit.RelErr(e.P, want.P[i]))
		if e.DF != want.DF[i] {
			t.Errorf("%s df = %v, emmeans %v", name, e.DF, want.DF[i])
		}
	}
}

// checkBy checks that the by labels of gs are "factor[level]" of the
// emmeans by column, in emmeans' order.
func checkBy(t *testing.T, what, factor string, gs []GroupEstimates, col []string) {
	t.Helper()
	k := 0
	for _, g := range gs {
		for range g.Estimates {
			if want := factor + "[" + col[k] + "]"; g.By != want {
				t.Fatalf("%s row %d: by %q, emmeans %q", what, k+1, g.By, want)
			}
			k++
		}
	}
}

func identitySym(k int) *mat.SymDense {
	s := mat.NewSymDense(k, nil)
	for i := 0; i < k; i++ {
		s.SetSym(i, i, 1)
	}
	return s
}
