package infer

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"furrow/stats/internal/fsum"
)

// polyTol is the relative size below which the part of a power left after
// removing the lower-degree polynomials is taken as zero: the values are
// then too close together to carry a polynomial of that degree.
const polyTol = 1e-10

// OrthogonalPolynomials returns the orthogonal polynomial contrasts of
// degrees 1 to degree for levels at the quantitative values x, which may be
// unequally spaced (Robson 1959, Biometrics 15:187). With equal weights on
// the levels, the powers z, z², ... of the centred values z = x - mean(x)
// are orthogonalised by Gram-Schmidt against the constant and against each
// other, in order of degree, and each is scaled to unit length. So
// contrast d is a polynomial of degree d in x, the contrasts are
// orthonormal and each sums to zero; the sign makes the coefficient of
// x^d positive (the linear contrast increases with x). For equally spaced
// values they are R's contr.poly (normalised, not emmeans' integer
// "poly" coefficients); for unequal spacing R's contr.poly(k, scores = x).
//
// The estimate of a trend contrast is Σ c_i μ_i with Σ c_i² = 1: for
// means exactly linear in x, μ_i = α + β x_i, the linear estimate is
// β·sqrt(Σ (x_i - mean x)²) and the higher degrees are zero.
//
// Numerically the centred values are first divided by their largest
// absolute value (which leaves the normalised polynomials unchanged) and
// each power is orthogonalised twice (modified Gram-Schmidt with one
// reorthogonalisation, enough for full orthogonality in floating point;
// Giraud, Langou & Rozložník 2005, Comput Math Appl 50:1069). It is an
// error for x to have fewer than two values, a value that is not finite,
// a value twice, or degree outside 1 to len(x) - 1.
func OrthogonalPolynomials(x []float64, degree int) ([][]float64, error) {
	k := len(x)
	if k < 2 {
		return nil, fmt.Errorf("orthogonal polynomials: %d values; a trend needs two or more", k)
	}
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("orthogonal polynomials: value %v is not finite", v)
		}
	}
	sorted := slices.Clone(x)
	slices.Sort(sorted)
	for i := 1; i < k; i++ {
		if sorted[i] == sorted[i-1] {
			return nil, fmt.Errorf("orthogonal polynomials: value %v given twice", sorted[i])
		}
	}
	if degree < 1 || degree > k-1 {
		return nil, fmt.Errorf("orthogonal polynomials: degree %d outside 1 to %d for %d values", degree, k-1, k)
	}
	mean := fsum.Mean(x)
	z := make([]float64, k)
	scale := 0.0
	for i, v := range x {
		z[i] = v - mean
		scale = math.Max(scale, math.Abs(z[i]))
	}
	for i := range z {
		z[i] /= scale
	}
	constant := make([]float64, k)
	for i := range constant {
		constant[i] = 1 / math.Sqrt(float64(k))
	}
	basis := [][]float64{constant}
	power := make([]float64, k)
	for i := range power {
		power[i] = 1
	}
	out := make([][]float64, 0, degree)
	for d := 1; d <= degree; d++ {
		for i := range power {
			power[i] *= z[i]
		}
		v := slices.Clone(power)
		n0 := norm(v)
		for pass := 0; pass < 2; pass++ {
			for _, q := range basis {
				r := dot(q, v)
				for i := range v {
					v[i] -= r * q[i]
				}
			}
		}
		n := norm(v)
		if !(n > polyTol*n0) {
			return nil, fmt.Errorf("orthogonal polynomials: the values are too close together for a polynomial of degree %d", d)
		}
		for i := range v {
			v[i] /= n
		}
		basis = append(basis, v)
		out = append(out, v)
	}
	return out, nil
}

func dot(a, b []float64) float64 {
	var s fsum.Sum
	for i := range a {
		s.Add(a[i] * b[i])
	}
	return s.Value()
}

func norm(a []float64) float64 { return math.Sqrt(dot(a, a)) }

// polyName is the name of the trend of degree d: linear, quadratic, cubic,
// quartic, then "degree d" (emmeans' names).
func polyName(d int) string {
	names := [...]string{"linear", "quadratic", "cubic", "quartic"}
	if d <= len(names) {
		return names[d-1]
	}
	return fmt.Sprintf("degree %d", d)
}

// PolynomialContrasts returns the orthogonal polynomial trend contrasts of
// degrees 1 to degree over levels whose quantitative values are values
// (OrthogonalPolynomials), as comparisons named "linear", "quadratic",
// "cubic", "quartic", "degree 5", ...
func PolynomialContrasts(levels []string, values []float64, degree int) ([]LevelContrast, error) {
	if len(levels) != len(values) {
		return nil, fmt.Errorf("polynomial contrasts: %d levels and %d values", len(levels), len(values))
	}
	for i, l := range levels {
		if indexOf(levels[:i], l) >= 0 {
			return nil, fmt.Errorf("polynomial contrasts: level %q given twice", l)
		}
	}
	if len(levels) == 0 {
		return nil, errors.New("polynomial contrasts: no levels")
	}
	polys, err := OrthogonalPolynomials(values, degree)
	if err != nil {
		return nil, fmt.Errorf("polynomial contrasts: %w", err)
	}
	out := make([]LevelContrast, len(polys))
	for d, p := range polys {
		out[d] = LevelContrast{Name: polyName(d + 1), Levels: slices.Clone(levels), Coef: p, Comparison: true}
	}
	return out, nil
}
