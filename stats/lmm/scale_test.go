package lmm

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/internal/testkit"
)

// TestColMapIdentities: for seeded X (intercept first, intercept in the
// middle, no intercept; a covariate with offset 1e6) the map of scale.go
// satisfies its defining identities to rounding: X b = Xs g + ybar row by
// row for b = coef(g), l'b = (M'l)'g + offset, l'(M C M')l = (M'l)'C(M'l),
// and (L M) g = L b - (offsets) for a hypothesis L.
func TestColMapIdentities(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	n, p := 40, 4
	for _, ic := range []int{0, 2, -1} {
		X := mat.NewDense(n, p, nil)
		y := make([]float64, n)
		w := make([]float64, n)
		for i := 0; i < n; i++ {
			for j := 0; j < p; j++ {
				switch {
				case j == ic:
					X.Set(i, j, 1)
				case j == p-1:
					X.Set(i, j, 1e6+rng.NormFloat64())
				default:
					X.Set(i, j, rng.NormFloat64())
				}
			}
			y[i] = 5 + rng.NormFloat64()
			w[i] = 0.5 + rng.Float64()
		}
		cm, err := newColMap(y, X, w)
		if err != nil {
			t.Fatal(err)
		}
		if cm.ic != ic {
			t.Fatalf("intercept found in column %d, want %d", cm.ic, ic)
		}
		// Any positive scales satisfy the identities; these are unlike 1.
		for j := range cm.scale {
			cm.scale[j] = math.Pow(10, float64(3*j-4))
		}
		g := make([]float64, p)
		for j := range g {
			g[j] = rng.NormFloat64()
		}
		b := cm.coef(g)
		get := cm.centredRows(X)
		row := make([]float64, p)
		for i := 0; i < n; i++ {
			get(i, row)
			xs := cm.ybar
			for j, v := range row {
				xs += v / cm.scale[j] * g[j]
			}
			xb, mag := 0.0, math.Abs(cm.ybar)
			for j := 0; j < p; j++ {
				xb += X.At(i, j) * b[j]
				mag += math.Abs(X.At(i, j) * b[j])
			}
			// Rounding of the size of the largest terms summed (X b sums
			// terms of size 1e6 |b_x| that cancel).
			testkit.CheckWithin(t, fmt.Sprintf("ic %d row %d: X b vs Xs g + ybar", ic, i), xb, xs, 0, 1e-14*mag)
		}
		l := []float64{0.3, -1, 2, 1e6 + 0.25}
		ls, off := cm.contrast(l)
		var lb, lg, mag float64
		for j := range l {
			lb += l[j] * b[j]
			lg += ls[j] * g[j]
			mag += math.Abs(l[j] * b[j])
		}
		testkit.CheckWithin(t, fmt.Sprintf("ic %d: l'b", ic), lg+off, lb, 0, 1e-14*mag)
		// Covariance: a random SPD C on g.
		A := mat.NewDense(p, p, nil)
		for i := 0; i < p; i++ {
			for j := 0; j < p; j++ {
				A.Set(i, j, rng.NormFloat64())
			}
		}
		var AA mat.Dense
		AA.Mul(A, A.T())
		C := symPart(&AA)
		V := cm.cov(C)
		lv := mat.NewVecDense(p, l)
		lsv := mat.NewVecDense(p, ls)
		want := mat.Inner(lsv, C, lsv)
		testkit.CheckWithin(t, fmt.Sprintf("ic %d: l'(M C M')l", ic), mat.Inner(lv, V, lv), want, 1e-6, 0)
		L := mat.NewDense(2, p, append(append([]float64(nil), l...), 1, 0, 0, 0))
		LM := cm.hypothesis(L)
		for i := 0; i < 2; i++ {
			r, _ := cm.contrast(mat.Row(nil, i, L))
			for j := 0; j < p; j++ {
				testkit.CheckWithin(t, "L M", LM.At(i, j), r[j], 0, 0)
			}
		}
	}
}

// TestRankRelativePerColumn: the rank decision does not depend on a
// column's units. A covariate at scale 1e-12 or 1e12 (without an offset,
// and with one of 1e4 times that scale: offset and spread in the same
// units) is accepted and fits as at scale 1 (coefficient scaled back,
// criterion shifted by 2 log scale, the rest equal); a column equal to
// another times 1e-12 or 1e12, or to a multiple of it plus a constant, is
// rank deficient.
func TestRankRelativePerColumn(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	n, q := 60, 12
	y := make([]float64, n)
	x := make([]float64, n)
	idx := make([]int, n)
	u := make([]float64, q)
	for a := range u {
		u[a] = rng.NormFloat64()
	}
	for i := range y {
		idx[i] = i % q
		x[i] = rng.NormFloat64()
		y[i] = 1 + 0.5*x[i] + u[idx[i]] + rng.NormFloat64()
	}
	g := []Grouping{{Name: "g", Index: idx, Levels: q}}
	design := func(cols ...func(i int) float64) *mat.Dense {
		X := mat.NewDense(n, len(cols), nil)
		for i := 0; i < n; i++ {
			for j, c := range cols {
				X.Set(i, j, c(i))
			}
		}
		return X
	}
	one := func(int) float64 { return 1 }
	base, err := Fit(y, design(one, func(i int) float64 { return x[i] }), g, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, sc := range []float64{1e-12, 1e12} {
		for _, offset := range []float64{0, 1e4 * sc} {
			fit, err := Fit(y, design(one, func(i int) float64 { return offset + sc*x[i] }), g, nil)
			if err != nil {
				t.Fatalf("scale %g offset %g: %v", sc, offset, err)
			}
			name := fmt.Sprintf("scale %g offset %g", sc, offset)
			testkit.CheckWithin(t, name+" criterion", fit.Objective, base.Objective+2*math.Log(sc), 0, 1e-9)
			testkit.CheckWithin(t, name+" slope", fit.Coef[1].Estimate, base.Coef[1].Estimate/sc, 1e-9, 0)
			testkit.CheckWithin(t, name+" slope df", fit.Coef[1].DF, base.Coef[1].DF, 1e-7, 0)
			testkit.CheckWithin(t, name+" variance", fit.Components[0].Variance, base.Components[0].Variance, 1e-8, 0)
		}
	}
	for _, f := range []float64{1e-12, 1e12} {
		for _, c := range []float64{0, 3} {
			X := design(one, func(i int) float64 { return x[i] }, func(i int) float64 { return f * (x[i] + c) })
			if _, err := Fit(y, X, g, nil); !errors.Is(err, ErrRankDeficient) {
				t.Errorf("column = %g (x + %g): error %v, want ErrRankDeficient", f, c, err)
			}
		}
	}
}

// TestNonFiniteX: a NaN or infinite entry of X is an error naming its row
// and column, never a fit.
func TestNonFiniteX(t *testing.T) {
	n := 12
	y := make([]float64, n)
	idx := make([]int, n)
	for i := range y {
		y[i] = float64(i%5) + 0.1*float64(i)
		idx[i] = i % 4
	}
	for _, v := range []float64{math.NaN(), math.Inf(1), math.Inf(-1)} {
		X := mat.NewDense(n, 2, nil)
		for i := 0; i < n; i++ {
			X.Set(i, 0, 1)
			X.Set(i, 1, float64(i))
		}
		X.Set(7, 1, v)
		_, err := Fit(y, X, []Grouping{{Name: "g", Index: idx, Levels: 4}}, nil)
		if err == nil || err.Error() != "fitting mixed model: model matrix row 7, column 1 is not a finite number" {
			t.Errorf("X[7][1] = %v: error %v", v, err)
		}
	}
}
