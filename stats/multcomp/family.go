package multcomp

import "fmt"

// Side is the alternative hypothesis of a family of comparisons.
type Side int

// Alternatives. For Greater the hypotheses are H0: δ <= 0 against δ > 0; for
// Less, H0: δ >= 0 against δ < 0.
const (
	TwoSided Side = iota
	Greater
	Less
)

// String returns "two-sided", "greater" or "less".
func (s Side) String() string {
	switch s {
	case TwoSided:
		return "two-sided"
	case Greater:
		return "greater"
	case Less:
		return "less"
	}
	return fmt.Sprintf("Side(%d)", int(s))
}

// Comparison is one member of a family of simultaneous comparisons.
type Comparison struct {
	Estimate float64 // estimated difference
	SE       float64 // its standard error
	T        float64 // Estimate/SE
	// PAdjusted is the single-step adjusted p-value: the probability, under
	// the complete null hypothesis, that the largest statistic of the family
	// is at least as extreme as this one.
	PAdjusted float64
	// Lower and Upper are the simultaneous confidence limits; a one-sided
	// family has an infinite limit on one side.
	Lower, Upper float64
}

// Family is a set of comparisons with simultaneous inference.
type Family struct {
	Method string  // "tukey" or "dunnett"
	Side   Side    // alternative
	Level  float64 // simultaneous confidence level, e.g. 0.95
	DF     float64 // error degrees of freedom (+Inf: known variance)
	// Critical is the multiplier of the SE in the simultaneous intervals, on
	// the t scale (for Tukey it is the studentised-range quantile over √2).
	Critical    float64
	Comparisons []Comparison
	// Algorithm names how the simultaneous probabilities were computed:
	// AlgQuadrature (deterministic, about 1e-10 relative or better) or
	// AlgQMC (randomised quasi-Monte Carlo, see MaxTUpperQMC).
	Algorithm string
	// AbsError is the largest estimated absolute error of the adjusted
	// p-values and of the critical value's tail probability; 0 for
	// quadrature.
	AbsError float64
	// QMC describes the rule when Algorithm is AlgQMC.
	QMC *QMCResult
}

// Algorithms recorded in Family.Algorithm.
const (
	AlgQuadrature = "quadrature"
	AlgQMC        = "randomised quasi-Monte Carlo"
)
