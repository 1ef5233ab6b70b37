package glm

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// plotCounts builds the issue-13 benchmark: n rows, n/10 plots, 4
// treatments (treatment coding), a random plot intercept with sd 0.4 and
// Poisson counts with mean exp(1 + effect + plot). Seeded, invented data;
// testdata/glmm_bench_ref.R builds the same design with R's generator.
func plotCounts(n int) (*mat.Dense, []float64, []RandomIntercept) {
	rng := rand.New(rand.NewPCG(uint64(n), 13))
	plots := n / 10
	u := make([]float64, plots)
	for i := range u {
		u[i] = 0.4 * rng.NormFloat64()
	}
	eff := []float64{0, 0.3, -0.5, 0.8}
	X := mat.NewDense(n, 4, nil)
	y := make([]float64, n)
	idx := make([]int, n)
	for i := 0; i < n; i++ {
		pl := i / 10
		trt := pl % 4
		idx[i] = pl
		X.Set(i, 0, 1)
		if trt > 0 {
			X.Set(i, trt, 1)
		}
		y[i] = poissonDraw(rng, math.Exp(1+eff[trt]+u[pl]))
	}
	return X, y, []RandomIntercept{{Name: "plot", Index: idx, Levels: plots}}
}

func poissonDraw(rng *rand.Rand, mu float64) float64 {
	l, k, p := math.Exp(-mu), 0.0, 1.0
	for {
		p *= rng.Float64()
		if p <= l {
			return k
		}
		k++
	}
}

func BenchmarkMixedPoisson(b *testing.B) {
	X, y, g := plotCounts(100000)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		r, err := FitMixed(X, y, Poisson, g, nil)
		if err != nil || !r.Converged {
			b.Fatal(err)
		}
	}
}
