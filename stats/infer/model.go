package infer

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
	"furrow/stats/internal/fsum"
	"furrow/stats/multcomp"
)

// Model is a fitted linear model as seen by inference: its coefficient
// estimates β, their covariance and the degrees of freedom of a contrast
// l'β (the residual df for ordinary least squares; Satterthwaite or
// Kenward-Roger df for mixed models). stats/lm and stats/lmm fits satisfy
// it.
type Model interface {
	Coefficients() []float64
	CoefCov() *mat.SymDense
	DF(l []float64) float64
}

// Side is the alternative hypothesis of a test or the side of an interval.
type Side = multcomp.Side

// Alternatives, shared with stats/multcomp.
const (
	TwoSided = multcomp.TwoSided
	Greater  = multcomp.Greater
	Less     = multcomp.Less
)

// Options control tests and intervals. The zero value means a two-sided
// test with 95% intervals.
type Options struct {
	Level float64 // confidence level in (0, 1); 0 means 0.95
	Side  Side
}

func (o Options) level() (float64, error) {
	if o.Level == 0 {
		return 0.95, nil
	}
	if !(o.Level > 0 && o.Level < 1) {
		return 0, fmt.Errorf("confidence level must be in (0, 1), got %v", o.Level)
	}
	return o.Level, nil
}

// Estimate is a linear function l'β of the coefficients with its inference.
type Estimate struct {
	Label    string
	L        []float64 // the coefficient row (a copy)
	Estimate float64
	SE       float64
	DF       float64
	T        float64 // Estimate/SE, the test of l'β = 0
	// P is the p-value for the alternative of the options used: two-sided
	// P(|T| >= |t|), Greater P(T >= t), Less P(T <= t).
	P float64
	// Lower and Upper are the confidence limits at Level; a one-sided
	// interval is infinite on one side.
	Lower, Upper float64
	Level        float64
	Side         Side
}

// modelParts checks the model and returns β and V.
func modelParts(m Model) ([]float64, *mat.SymDense, error) {
	beta := m.Coefficients()
	v := m.CoefCov()
	if v == nil {
		return nil, nil, errors.New("model has no coefficient covariance")
	}
	if v.SymmetricDim() != len(beta) {
		return nil, nil, fmt.Errorf("model has %d coefficients but a %d×%d covariance", len(beta), v.SymmetricDim(), v.SymmetricDim())
	}
	for i, b := range beta {
		if math.IsNaN(b) || math.IsInf(b, 0) {
			return nil, nil, fmt.Errorf("coefficient %d is %v", i, b)
		}
	}
	return beta, v, nil
}

// estimate computes l'β, its SE and df.
func estimate(m Model, beta []float64, v *mat.SymDense, l []float64, label string, opt Options) (Estimate, error) {
	level, err := opt.level()
	if err != nil {
		return Estimate{}, err
	}
	if len(l) != len(beta) {
		return Estimate{}, fmt.Errorf("contrast %q has %d entries for %d coefficients", label, len(l), len(beta))
	}
	lc := append([]float64(nil), l...)
	var est float64
	var k fsum.Sum
	for i := range lc {
		k.Add(lc[i] * beta[i])
	}
	est = k.Value()
	lv := mat.NewVecDense(len(lc), lc)
	variance := mat.Inner(lv, v, lv)
	if !(variance > 0) || math.IsInf(variance, 0) {
		return Estimate{}, fmt.Errorf("contrast %q has variance %v; it is not estimable or the model is degenerate", label, variance)
	}
	se := math.Sqrt(variance)
	df := m.DF(append([]float64(nil), lc...))
	if math.IsNaN(df) || df <= 0 {
		return Estimate{}, fmt.Errorf("contrast %q has %v degrees of freedom", label, df)
	}
	e := Estimate{Label: label, L: lc, Estimate: est, SE: se, DF: df, T: est / se, Level: level, Side: opt.Side}
	switch opt.Side {
	case TwoSided:
		e.P = dist.TTwoSided(e.T, df)
		q := dist.TUpperQuantile((1-level)/2, df)
		e.Lower, e.Upper = est-q*se, est+q*se
	case Greater:
		e.P = dist.TUpper(e.T, df)
		q := dist.TUpperQuantile(1-level, df)
		e.Lower, e.Upper = est-q*se, math.Inf(1)
	case Less:
		e.P = dist.TUpper(-e.T, df)
		q := dist.TUpperQuantile(1-level, df)
		e.Lower, e.Upper = math.Inf(-1), est+q*se
	default:
		return Estimate{}, fmt.Errorf("unknown alternative %v", opt.Side)
	}
	return e, nil
}

// Contrast returns the estimate, SE, df, t statistic, p-value and
// confidence interval of l'β:
//
//	SE = sqrt(l' V l),  t = l'β / SE,  CI = l'β ± t_{df}(level) · SE.
func Contrast(m Model, l []float64, label string, opt Options) (Estimate, error) {
	beta, v, err := modelParts(m)
	if err != nil {
		return Estimate{}, fmt.Errorf("contrast %q: %w", label, err)
	}
	e, err := estimate(m, beta, v, l, label, opt)
	if err != nil {
		return Estimate{}, fmt.Errorf("contrast: %w", err)
	}
	return e, nil
}

// Contrasts applies Contrast to every row of L; labels name the rows (nil
// gives "row 1", "row 2", ...).
func Contrasts(m Model, L mat.Matrix, labels []string, opt Options) ([]Estimate, error) {
	beta, v, err := modelParts(m)
	if err != nil {
		return nil, fmt.Errorf("contrasts: %w", err)
	}
	r, c := L.Dims()
	if c != len(beta) {
		return nil, fmt.Errorf("contrasts: L has %d columns for %d coefficients", c, len(beta))
	}
	if labels != nil && len(labels) != r {
		return nil, fmt.Errorf("contrasts: %d labels for %d rows", len(labels), r)
	}
	out := make([]Estimate, r)
	for i := 0; i < r; i++ {
		l := make([]float64, c)
		for j := range l {
			l[j] = L.At(i, j)
		}
		label := fmt.Sprintf("row %d", i+1)
		if labels != nil {
			label = labels[i]
		}
		e, err := estimate(m, beta, v, l, label, opt)
		if err != nil {
			return nil, fmt.Errorf("contrasts: %w", err)
		}
		out[i] = e
	}
	return out, nil
}
