package rank

import (
	"fmt"

	"furrow/stats/dist"
)

// KruskalWallisResult is the outcome of a Kruskal-Wallis test.
type KruskalWallisResult struct {
	// H is the tie-corrected statistic; HUncorrected the statistic before
	// division by TieCorrection = 1 - Σ(t³-t)/(N³-N).
	H, HUncorrected, TieCorrection float64
	// DF is k - 1.
	DF float64
	// P is the upper-tail χ²(k-1) p-value of H.
	P float64
	// RankSums holds the rank sum of each group.
	RankSums []float64
	// N is the total number of observations; K the number of groups.
	N, K int
}

// KruskalWallis tests whether k >= 2 groups come from the same distribution
// (Kruskal & Wallis 1952, JASA 47:583):
//
//	H = 12/(N(N+1)) Σ n_i (R̄_i - (N+1)/2)² / (1 - Σ(t³-t)/(N³-N))
//
// referred to χ²(k-1). Groups may have a single observation but must not be
// empty. The inputs are not modified.
func KruskalWallis(groups [][]float64) (KruskalWallisResult, error) {
	k := len(groups)
	if k < 2 {
		return KruskalWallisResult{}, fmt.Errorf("kruskal-wallis: %w: %d groups, need at least 2", ErrTooFew, k)
	}
	var all []float64
	for g, x := range groups {
		if len(x) == 0 {
			return KruskalWallisResult{}, fmt.Errorf("kruskal-wallis: group %d is empty", g+1)
		}
		if err := checkFinite(x); err != nil {
			return KruskalWallisResult{}, fmt.Errorf("kruskal-wallis: group %d: %w", g+1, err)
		}
		all = append(all, x...)
	}
	n := len(all)
	r, ties := midranks(all)
	nf := float64(n)
	c := 1 - ties/(nf*nf*nf-nf)
	if c <= 1e-12 {
		return KruskalWallisResult{}, fmt.Errorf("kruskal-wallis: %w", ErrAllTied)
	}
	res := KruskalWallisResult{RankSums: make([]float64, k), N: n, K: k, DF: float64(k - 1), TieCorrection: c}
	off := 0
	centre := (nf + 1) / 2
	var s float64
	for g, x := range groups {
		var rs float64
		for i := range x {
			rs += r[off+i]
		}
		off += len(x)
		res.RankSums[g] = rs
		ni := float64(len(x))
		d := rs/ni - centre
		s += ni * d * d
	}
	res.HUncorrected = 12 / (nf * (nf + 1)) * s
	res.H = res.HUncorrected / c
	res.P = dist.ChiSqUpper(res.H, res.DF)
	return res, nil
}
