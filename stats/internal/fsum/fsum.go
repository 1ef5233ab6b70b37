// Package fsum is the one compensated summation used by the stats
// packages: Neumaier's improvement of Kahan's compensated sum (Kahan 1965,
// "Further remarks on reducing truncation errors", Commun ACM 8:40;
// Neumaier 1974, "Rundungsfehleranalyse einiger Verfahren zur Summation
// endlicher Summen", Z Angew Math Mech 54:39). The error of the result is
// bounded by about one rounding of the exact sum plus n ε² Σ|x_i|,
// whatever the order or the signs of the terms.
package fsum

import "math"

// Sum is a running compensated sum. The zero value is an empty sum.
type Sum struct{ s, c float64 }

// Add adds x to the sum.
func (k *Sum) Add(x float64) {
	t := k.s + x
	if math.Abs(k.s) >= math.Abs(x) {
		k.c += (k.s - t) + x
	} else {
		k.c += (x - t) + k.s
	}
	k.s = t
}

// Value returns the sum so far.
func (k *Sum) Value() float64 { return k.s + k.c }

// Of returns Σ x by compensated summation.
func Of(x []float64) float64 {
	var k Sum
	for _, v := range x {
		k.Add(v)
	}
	return k.Value()
}

// Mean returns the compensated mean of x (NaN for an empty x).
func Mean(x []float64) float64 {
	return Of(x) / float64(len(x))
}
