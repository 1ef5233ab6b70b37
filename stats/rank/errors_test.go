package rank

import (
	"errors"
	"math"
	"testing"

	"furrow/internal/testkit"
)

// TestDegenerate checks that data problems give errors, never panics.
func TestDegenerate(t *testing.T) {
	nan := math.NaN()
	a := []float64{1, 2, 3, 4}
	cases := map[string]func() error{
		"kw one group":      func() error { _, e := KruskalWallis([][]float64{a}); return e },
		"kw empty group":    func() error { _, e := KruskalWallis([][]float64{a, nil}); return e },
		"kw all tied":       func() error { _, e := KruskalWallis([][]float64{{2, 2}, {2, 2, 2}}); return e },
		"kw nan":            func() error { _, e := KruskalWallis([][]float64{a, {1, nan}}); return e },
		"friedman none":     func() error { _, e := Friedman(nil); return e },
		"friedman one trt":  func() error { _, e := Friedman([][]float64{{1}, {2}}); return e },
		"friedman ragged":   func() error { _, e := Friedman([][]float64{{1, 2}, {2, 3, 4}}); return e },
		"friedman all tied": func() error { _, e := Friedman([][]float64{{1, 1, 1}, {5, 5, 5}}); return e },
		"friedman inf":      func() error { _, e := Friedman([][]float64{{1, math.Inf(1)}, {1, 2}}); return e },
		"sr all zero":       func() error { _, e := SignedRank([]float64{0, 0, 0}, Options{}); return e },
		"sr empty":          func() error { _, e := SignedRank(nil, Options{}); return e },
		"sr nan":            func() error { _, e := SignedRank([]float64{1, nan}, Options{}); return e },
		"sr nan mu":         func() error { _, e := SignedRank(a, Options{Mu: nan}); return e },
		"sr exact ties":     func() error { _, e := SignedRank([]float64{1, 1, 2}, Options{Method: MethodExact}); return e },
		"sr exact zeros":    func() error { _, e := SignedRank([]float64{0, 1, 2}, Options{Method: MethodExact}); return e },
		"sr paired length":  func() error { _, e := SignedRankPaired(a, a[:3], Options{}); return e },
		"rs empty":          func() error { _, e := RankSum(a, nil, Options{}); return e },
		"rs all tied":       func() error { _, e := RankSum([]float64{3, 3}, []float64{3, 3, 3}, Options{}); return e },
		"rs exact ties": func() error {
			_, e := RankSum([]float64{1, 2}, []float64{2, 3}, Options{Method: MethodExact})
			return e
		},
		"rs nan":            func() error { _, e := RankSum([]float64{nan}, a, Options{}); return e },
		"ve none":           func() error { _, e := VanElteren(nil, Options{}); return e },
		"ve three trts":     func() error { _, e := VanElteren([]Stratum{{Groups: [][]float64{a, a, a}}}, Options{}); return e },
		"ve no information": func() error { _, e := VanElteren([]Stratum{{Groups: [][]float64{a, nil}}}, Options{}); return e },
		"ve nan":            func() error { _, e := VanElteren([]Stratum{{Groups: [][]float64{a, {nan}}}}, Options{}); return e },
		"vek mismatch": func() error {
			_, e := VanElterenK([]Stratum{{Groups: [][]float64{a, a}}, {Groups: [][]float64{a}}})
			return e
		},
		"vek all tied":       func() error { _, e := VanElterenK([]Stratum{{Groups: [][]float64{{1, 1}, {1}}}}); return e },
		"vek empty treatmnt": func() error { _, e := VanElterenK([]Stratum{{Groups: [][]float64{a, {5, 6}, nil}}}); return e },
		"welch one group":    func() error { _, e := Welch([][]float64{a}); return e },
		"welch size one":     func() error { _, e := Welch([][]float64{a, {3}}); return e },
		"welch zero var":     func() error { _, e := Welch([][]float64{a, {3, 3, 3}}); return e },
		"welch nan":          func() error { _, e := Welch([][]float64{a, {3, nan}}); return e },
	}
	for name, f := range cases {
		if err := f(); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	if _, err := KruskalWallis([][]float64{{2, 2}, {2}}); !errors.Is(err, ErrAllTied) {
		t.Errorf("all tied: %v, want ErrAllTied", err)
	}
	if _, err := Welch([][]float64{a, {3}}); !errors.Is(err, ErrTooFew) {
		t.Errorf("welch size one: %v, want ErrTooFew", err)
	}
}

// TestExactDistributions checks properties of the exact null
// distributions: they sum to 1, are symmetric, and match the counts of
// Wilcoxon (1945) for n = 4 (P(V = 0) = 1/16, P(V = 5) = 2/16) and, for
// m = 3, n = 4, the C(7, 3) = 35 subsets, 5 of which give U = 6 (counted
// by hand; R 4.2.2 dwilcox(6, 3, 4) * 35 = 5). Symmetry and the exact
// counts were measured exact on linux/amd64 (a few ulps are allowed, and
// symmetry is relative: the tails reach 1e-61); the sums reach 1 to
// 3.6e-15.
func TestExactDistributions(t *testing.T) {
	for _, n := range []int{1, 4, 10, 50, 200} {
		p := signedRankDist(n)
		var s float64
		for i := range p {
			s += p[i]
			if !testkit.RelClose(p[i], p[len(p)-1-i], 1e-15) {
				t.Fatalf("signed-rank n=%d not symmetric at %d", n, i)
			}
		}
		if !testkit.Close(s, 1, 1e-13) {
			t.Errorf("signed-rank n=%d sums to %g", n, s)
		}
	}
	if p := signedRankDist(4); !testkit.Close(p[0], 1.0/16, 1e-15) || !testkit.Close(p[5], 2.0/16, 1e-15) {
		t.Errorf("n=4: %v", p)
	}
	p := rankSumDist(3, 4)
	if len(p) != 13 || !testkit.Close(p[0], 1.0/35, 1e-15) || !testkit.Close(p[6], 5.0/35, 1e-15) {
		t.Errorf("rank-sum 3,4: %v", p)
	}
	for u := range p {
		if !testkit.Close(p[u], p[12-u], 1e-15) {
			t.Errorf("rank-sum 3,4 not symmetric at %d", u)
		}
	}
}

// TestVanElterenOneStratum checks that a single stratum reduces to the
// rank-sum normal approximation without continuity correction (property;
// van Elteren 1960).
func TestVanElterenOneStratum(t *testing.T) {
	x := []float64{3.1, 4.2, 4.2, 5.9, 7.0}
	y := []float64{1.0, 2.5, 4.2, 3.3, 2.2, 6.1}
	ve, err := VanElteren([]Stratum{{Groups: [][]float64{x, y}}}, Options{Alternative: Greater})
	if err != nil {
		t.Fatal(err)
	}
	rs, err := RankSum(x, y, Options{Alternative: Greater, Method: MethodNormal, NoContinuity: true})
	if err != nil {
		t.Fatal(err)
	}
	// Measured agreement Z 3.0e-16, p 5.9e-16 relative.
	testkit.CheckClose(t, "Z", ve.Z, rs.Z, 1e-14)
	testkit.CheckRelClose(t, "p", ve.P, rs.P, 2e-14)
}

func BenchmarkRankSumExact50(b *testing.B) {
	x := make([]float64, 50)
	y := make([]float64, 50)
	for i := range x {
		x[i] = float64(2*i) + 0.5
		y[i] = float64(2*i + 1)
	}
	for i := 0; i < b.N; i++ {
		if _, err := RankSum(x, y, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
