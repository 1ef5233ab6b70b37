package infer

import (
	"encoding/json"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// ols is a least-squares fit by Householder QR (gonum), used as the test
// model: V = s² (R'R)⁻¹ and the residual df for every contrast.
type ols struct {
	beta []float64
	cov  *mat.SymDense
	df   float64
}

func (o *ols) Coefficients() []float64 { return append([]float64(nil), o.beta...) }
func (o *ols) CoefCov() *mat.SymDense {
	return mat.NewSymDense(o.cov.SymmetricDim(), append([]float64(nil), o.cov.RawSymmetric().Data...))
}
func (o *ols) DF([]float64) float64 { return o.df }

func fitOLS(t testing.TB, x *mat.Dense, y []float64) *ols {
	t.Helper()
	n, p := x.Dims()
	var qr mat.QR
	qr.Factorize(x)
	var b mat.Dense
	if err := qr.SolveTo(&b, false, mat.NewDense(n, 1, append([]float64(nil), y...))); err != nil {
		t.Fatal(err)
	}
	beta := make([]float64, p)
	for i := range beta {
		beta[i] = b.At(i, 0)
	}
	var fit mat.VecDense
	fit.MulVec(x, mat.NewVecDense(p, beta))
	var rss float64
	for i := range y {
		r := y[i] - fit.AtVec(i)
		rss += r * r
	}
	df := float64(n - p)
	s2 := rss / df
	var rd mat.Dense
	qr.RTo(&rd)
	r := mat.NewTriDense(p, mat.Upper, nil)
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			r.SetTri(i, j, rd.At(i, j))
		}
	}
	var rinv mat.TriDense
	if err := rinv.InverseTri(r); err != nil {
		t.Fatal(err)
	}
	var c mat.Dense
	c.Mul(&rinv, rinv.T())
	cov := mat.NewSymDense(p, nil)
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			cov.SetSym(i, j, s2*c.At(i, j))
		}
	}
	return &ols{beta: beta, cov: cov, df: df}
}

// refJSON decodes the R reference values written by
// ../multcomp/testdata/ref.R (R 4.2.2, emmeans 1.8.4.1, multcomp 1.4.22),
// which serve both packages.
func refJSON(t testing.TB, key string, v any) {
	t.Helper()
	var raw map[string]json.RawMessage
	testkit.DecodeFile(t, filepath.Join("..", "multcomp", "testdata", "ref.json"), &raw)
	if err := json.Unmarshal(raw[key], v); err != nil {
		t.Fatalf("decoding %s: %v", key, err)
	}
}

// oneWay builds a cell-means design (one indicator column per level, in
// the order of levels) and the identity L of its marginal means.
func oneWay(t testing.TB, groups []string, levels []string, y []float64) (*ols, *mat.Dense) {
	t.Helper()
	idx := map[string]int{}
	for i, l := range levels {
		idx[l] = i
	}
	x := mat.NewDense(len(y), len(levels), nil)
	for i, g := range groups {
		j, ok := idx[g]
		if !ok {
			t.Fatalf("unknown level %q", g)
		}
		x.Set(i, j, 1)
	}
	m := fitOLS(t, x, y)
	L := mat.NewDense(len(levels), len(levels), nil)
	for i := range levels {
		L.Set(i, i, 1)
	}
	return m, L
}
