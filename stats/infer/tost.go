package infer

import (
	"fmt"
	"math"

	"furrow/stats/dist"
)

// Margin scales.
const (
	MarginDifference = "difference" // bounds on the analysis scale
	MarginRatio      = "ratio"      // ratio bounds for a log-type analysis scale
)

// Margin is an equivalence or non-inferiority margin for a difference
// test - comparator. With Scale "ratio" the bounds are ratios (e.g. 0.80 and
// 1.25) and become log(bound) in the base of the transform (for log-offset
// the ratio refers to y + offset).
type Margin struct {
	Scale        string
	Lower, Upper float64
}

// analysisBounds returns the margin on the analysis scale.
func (m Margin) analysisBounds(t Transform) (lo, hi float64, err error) {
	switch m.Scale {
	case MarginDifference, "":
		return m.Lower, m.Upper, nil
	case MarginRatio:
		if !t.IsLog() {
			return 0, 0, fmt.Errorf("a ratio margin needs a log-type transform, the analysis uses %q", t.Kind)
		}
		lb := math.Log(t.logBase())
		lo, hi = math.Inf(-1), math.Inf(1)
		if m.Lower != 0 {
			if !(m.Lower > 0) {
				return 0, 0, fmt.Errorf("ratio margin lower bound %v is not positive", m.Lower)
			}
			lo = math.Log(m.Lower) / lb
		}
		if m.Upper != 0 {
			if !(m.Upper > 0) {
				return 0, 0, fmt.Errorf("ratio margin upper bound %v is not positive", m.Upper)
			}
			hi = math.Log(m.Upper) / lb
		}
		return lo, hi, nil
	}
	return 0, 0, fmt.Errorf("unknown margin scale %q", m.Scale)
}

// Equivalence is the result of two one-sided tests.
type Equivalence struct {
	Estimate     float64 // difference on the analysis scale
	SE, DF       float64
	Lower, Upper float64 // margin on the analysis scale
	TLower       float64 // (d - Lower)/SE, tests H0: δ <= Lower
	TUpper       float64 // (d - Upper)/SE, tests H0: δ >= Upper
	PLower       float64
	PUpper       float64
	P            float64 // max(PLower, PUpper)
	// CILower and CIUpper form the (1 - 2α) interval; equivalence at
	// level α holds exactly when it lies inside the margin.
	CILower, CIUpper float64
	Alpha            float64
	Equivalent       bool // P < Alpha
}

// TOST tests equivalence of a difference d = l'β (an Estimate from
// Contrast, Pairwise, LevelContrasts, InteractionContrasts or the by-group
// functions: any comparison) within a margin by Schuirmann's two one-sided tests
// (Schuirmann 1987 J Pharmacokinet Biopharm 15:657): equivalence is claimed
// when both H0: δ <= Lower and H0: δ >= Upper are rejected at level alpha,
// which is the same as the (1 - 2α) confidence interval lying inside
// (Lower, Upper).
func TOST(d Estimate, t Transform, margin Margin, alpha float64) (Equivalence, error) {
	if !(alpha > 0 && alpha < 0.5) {
		return Equivalence{}, fmt.Errorf("equivalence test: alpha must be in (0, 0.5), got %v", alpha)
	}
	lo, hi, err := margin.analysisBounds(t)
	if err != nil {
		return Equivalence{}, fmt.Errorf("equivalence test: %w", err)
	}
	if !(lo < hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return Equivalence{}, fmt.Errorf("equivalence test: margin (%v, %v) on the analysis scale is not a finite interval", lo, hi)
	}
	if !(d.SE > 0) || !(d.DF > 0) {
		return Equivalence{}, fmt.Errorf("equivalence test: difference has SE %v and df %v", d.SE, d.DF)
	}
	e := Equivalence{Estimate: d.Estimate, SE: d.SE, DF: d.DF, Lower: lo, Upper: hi, Alpha: alpha}
	e.TLower = (d.Estimate - lo) / d.SE
	e.TUpper = (d.Estimate - hi) / d.SE
	e.PLower = dist.TUpper(e.TLower, d.DF)
	e.PUpper = dist.TUpper(-e.TUpper, d.DF)
	e.P = math.Max(e.PLower, e.PUpper)
	q := dist.TUpperQuantile(alpha, d.DF)
	e.CILower, e.CIUpper = d.Estimate-q*d.SE, d.Estimate+q*d.SE
	e.Equivalent = e.P < alpha
	return e, nil
}

// Better says which direction of the response is desirable.
type Better int

// Directions for non-inferiority.
const (
	HigherIsBetter Better = iota
	LowerIsBetter
)

// NonInferiority is the result of a one-sided non-inferiority test.
type NonInferiority struct {
	Estimate float64
	SE, DF   float64
	// Bound is the margin on the analysis scale: the lower limit of
	// acceptable differences (higher is better) or the upper one (lower is
	// better).
	Bound float64
	T     float64 // (d - Bound)/SE
	P     float64
	// CIBound is the one-sided (1 - α) confidence limit, the matching end
	// of the (1 - 2α) two-sided interval: lower limit for higher-is-better,
	// upper for lower-is-better.
	CIBound     float64
	Alpha       float64
	NonInferior bool // P < Alpha
}

// NonInferiorityTest tests H0: δ <= Lower (higher is better; the margin's
// Lower bound is used) or H0: δ >= Upper (lower is better; Upper is used)
// with a one-sided t test at level alpha, the one-sided half of TOST.
func NonInferiorityTest(d Estimate, t Transform, margin Margin, better Better, alpha float64) (NonInferiority, error) {
	if !(alpha > 0 && alpha < 0.5) {
		return NonInferiority{}, fmt.Errorf("non-inferiority test: alpha must be in (0, 0.5), got %v", alpha)
	}
	lo, hi, err := margin.analysisBounds(t)
	if err != nil {
		return NonInferiority{}, fmt.Errorf("non-inferiority test: %w", err)
	}
	if !(d.SE > 0) || !(d.DF > 0) {
		return NonInferiority{}, fmt.Errorf("non-inferiority test: difference has SE %v and df %v", d.SE, d.DF)
	}
	n := NonInferiority{Estimate: d.Estimate, SE: d.SE, DF: d.DF, Alpha: alpha}
	q := dist.TUpperQuantile(alpha, d.DF)
	switch better {
	case HigherIsBetter:
		n.Bound = lo
		n.T = (d.Estimate - lo) / d.SE
		n.P = dist.TUpper(n.T, d.DF)
		n.CIBound = d.Estimate - q*d.SE
	case LowerIsBetter:
		n.Bound = hi
		n.T = (d.Estimate - hi) / d.SE
		n.P = dist.TUpper(-n.T, d.DF)
		n.CIBound = d.Estimate + q*d.SE
	default:
		return NonInferiority{}, fmt.Errorf("non-inferiority test: unknown direction %d", better)
	}
	if math.IsInf(n.Bound, 0) || math.IsNaN(n.Bound) {
		return NonInferiority{}, fmt.Errorf("non-inferiority test: the margin has no finite bound on the needed side (%v)", n.Bound)
	}
	n.NonInferior = n.P < alpha
	return n, nil
}
