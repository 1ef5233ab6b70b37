package glm

import (
	"math"
	"math/rand/v2"
	"testing"
)

// benchData is a blocked trial of 1e5 plots: 10 treatments in 20 blocks,
// each cell repeated 500 times, Poisson counts with mean about 4 per unit
// area and plot areas 0.5-1.5 as an offset (so a few percent of zeros,
// and the separation check runs its interior-rank test).
func benchData(b testing.TB) (y, off []float64) {
	rng := rand.New(rand.NewPCG(2025, 13))
	n := 10 * 20 * 500
	y, off = make([]float64, n), make([]float64, n)
	for i := range y {
		area := 0.5 + rng.Float64()
		off[i] = math.Log(area)
		mu := area * math.Exp(1.4+0.05*float64((i/10)%20)-0.08*float64(i%10))
		y[i] = poisson(rng, mu)
	}
	return y, off
}

// BenchmarkPoisson1e5 fits the Poisson GLM block + trt + offset to 1e5
// rows (29 columns).
func BenchmarkPoisson1e5(b *testing.B) {
	m := blockedReps(b, 10, 20, 500)
	y, off := benchData(b)
	b.ResetTimer()
	for range b.N {
		r, err := FitModel(m, y, Poisson, &Options{Offset: off})
		if err != nil {
			b.Fatal(err)
		}
		if r.Iter == 0 {
			b.Fatal("no iterations")
		}
	}
}

// BenchmarkNegBinomial1e5 fits the same design as a negative binomial
// with θ estimated, to over-dispersed counts (gamma-mixed Poisson, θ = 2).
func BenchmarkNegBinomial1e5(b *testing.B) {
	m := blockedReps(b, 10, 20, 500)
	rng := rand.New(rand.NewPCG(2025, 14))
	n, _ := m.X.Dims()
	y := make([]float64, n)
	for i := range y {
		g := -math.Log(rng.Float64()) - math.Log(rng.Float64()) // gamma(2), theta 2
		y[i] = poisson(rng, g/2*math.Exp(1.4+0.05*float64((i/10)%20)-0.08*float64(i%10)))
	}
	b.ResetTimer()
	for range b.N {
		if _, err := FitModel(m, y, NegBinomial, nil); err != nil {
			b.Fatal(err)
		}
	}
}
