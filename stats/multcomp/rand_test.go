package multcomp

import "math/rand/v2"

// newRand is the seeded generator of the property tests.
func newRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 20260214)) }

// randomWeights are m weights summing to 1 or, one time in three, less.
func randomWeights(rng *rand.Rand, m int) []float64 {
	w := make([]float64, m)
	sum := 0.0
	for i := range w {
		if rng.IntN(4) > 0 {
			w[i] = rng.Float64()
		}
		sum += w[i]
	}
	if sum == 0 {
		w[0], sum = 1, 1
	}
	scale := 1.0
	if rng.IntN(3) == 0 {
		scale = rng.Float64()
	}
	for i := range w {
		w[i] *= scale / sum
	}
	return w
}
