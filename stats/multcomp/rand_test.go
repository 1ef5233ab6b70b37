package multcomp

import "math/rand/v2"

// newRand is the seeded generator of the property tests.
func newRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 20260214)) }
