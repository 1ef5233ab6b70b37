package rank

import (
	"fmt"

	"furrow/stats/dist"
)

// FriedmanResult is the outcome of a Friedman test.
type FriedmanResult struct {
	// Stat is the tie-corrected Friedman chi-squared statistic.
	Stat float64
	// DF is k - 1.
	DF float64
	// P is the upper-tail χ²(k-1) p-value.
	P float64
	// RankSums holds the within-block rank sum of each treatment.
	RankSums []float64
	// Blocks and Treatments are b and k.
	Blocks, Treatments int
}

// Friedman tests for treatment differences in a randomised complete block
// design (Friedman 1937, JASA 32:675). data[i][j] is the response of
// treatment j in block i; every block must have the same k >= 2 treatments.
// Values are ranked within blocks (mid-ranks for ties) and
//
//	S = 12 Σ_j (R_j - b(k+1)/2)² / (b k (k+1) - Σ(t³-t)/(k-1))
//
// with the tie sum over all blocks, is referred to χ²(k-1). The input is
// not modified.
func Friedman(data [][]float64) (FriedmanResult, error) {
	b := len(data)
	if b < 1 {
		return FriedmanResult{}, fmt.Errorf("friedman: %w: no blocks", ErrTooFew)
	}
	k := len(data[0])
	if k < 2 {
		return FriedmanResult{}, fmt.Errorf("friedman: %w: %d treatments, need at least 2", ErrTooFew, k)
	}
	res := FriedmanResult{RankSums: make([]float64, k), Blocks: b, Treatments: k, DF: float64(k - 1)}
	var ties float64
	for i, row := range data {
		if len(row) != k {
			return FriedmanResult{}, fmt.Errorf("friedman: block %d has %d values, block 1 has %d", i+1, len(row), k)
		}
		if err := checkFinite(row); err != nil {
			return FriedmanResult{}, fmt.Errorf("friedman: block %d: %w", i+1, err)
		}
		r, t := midranks(row)
		ties += t
		for j, v := range r {
			res.RankSums[j] += v
		}
	}
	bf, kf := float64(b), float64(k)
	den := bf*kf*(kf+1) - ties/(kf-1)
	if den <= 1e-9*bf*kf*(kf+1) {
		return FriedmanResult{}, fmt.Errorf("friedman: %w within every block", ErrAllTied)
	}
	centre := bf * (kf + 1) / 2
	var s float64
	for _, rj := range res.RankSums {
		d := rj - centre
		s += d * d
	}
	res.Stat = 12 * s / den
	res.P = dist.ChiSqUpper(res.Stat, res.DF)
	return res, nil
}
