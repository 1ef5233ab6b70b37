package infer

import (
	"fmt"
	"math"
)

// Transform kinds: the ladder of the plan format (same names).
const (
	TransformNone       = "none"
	TransformLog        = "log"
	TransformLogOffset  = "log-offset"   // log(y + Offset)
	TransformLog10      = "log10"        // log10(y)
	TransformSqrt       = "sqrt"         // sqrt(y)
	TransformReciprocal = "reciprocal"   // 1/y
	TransformArcsine    = "arcsine-sqrt" // asin(sqrt(y)), y a proportion
	TransformBoxCox     = "box-cox"      // (y^λ - 1)/λ, log y at λ = 0 (Box & Cox 1964 JRSS B 26:211)
)

// Transform is a response transformation applied before fitting.
type Transform struct {
	Kind   string
	Offset float64 // log-offset
	Lambda float64 // box-cox
}

// IsLog reports whether differences on the analysis scale are logs of
// ratios (log, log-offset, log10, box-cox with λ = 0).
func (t Transform) IsLog() bool {
	switch t.Kind {
	case TransformLog, TransformLogOffset, TransformLog10:
		return true
	case TransformBoxCox:
		return t.Lambda == 0
	}
	return false
}

// logBase returns the base of the logarithm of a log-type transform.
func (t Transform) logBase() float64 {
	if t.Kind == TransformLog10 {
		return 10
	}
	return math.E
}

// check validates the kind and its parameter.
func (t Transform) check() error {
	switch t.Kind {
	case TransformNone, "", TransformLog, TransformLog10, TransformSqrt, TransformReciprocal, TransformArcsine:
		return nil
	case TransformLogOffset:
		if !(t.Offset > 0) || math.IsInf(t.Offset, 0) {
			return fmt.Errorf("log-offset transform needs a positive offset, got %v", t.Offset)
		}
		return nil
	case TransformBoxCox:
		if math.IsNaN(t.Lambda) || math.IsInf(t.Lambda, 0) {
			return fmt.Errorf("box-cox transform needs a finite lambda, got %v", t.Lambda)
		}
		return nil
	}
	return fmt.Errorf("unknown transform %q", t.Kind)
}

// Apply returns the transformed value of y, or an error when y is outside
// the transform's domain.
func (t Transform) Apply(y float64) (float64, error) {
	if err := t.check(); err != nil {
		return math.NaN(), err
	}
	bad := func() (float64, error) {
		return math.NaN(), fmt.Errorf("value %v is outside the domain of the %s transform", y, t.Kind)
	}
	switch t.Kind {
	case TransformNone, "":
		return y, nil
	case TransformLog:
		if !(y > 0) {
			return bad()
		}
		return math.Log(y), nil
	case TransformLogOffset:
		if !(y+t.Offset > 0) {
			return bad()
		}
		return math.Log(y + t.Offset), nil
	case TransformLog10:
		if !(y > 0) {
			return bad()
		}
		return math.Log10(y), nil
	case TransformSqrt:
		if !(y >= 0) {
			return bad()
		}
		return math.Sqrt(y), nil
	case TransformReciprocal:
		if y == 0 || math.IsNaN(y) {
			return bad()
		}
		return 1 / y, nil
	case TransformArcsine:
		if !(y >= 0 && y <= 1) {
			return bad()
		}
		return math.Asin(math.Sqrt(y)), nil
	default: // box-cox
		if !(y > 0) {
			return bad()
		}
		if t.Lambda == 0 {
			return math.Log(y), nil
		}
		return math.Expm1(t.Lambda*math.Log(y)) / t.Lambda, nil
	}
}

// Inverse maps an analysis-scale value back to the response scale. Values
// beyond the image of the transform are mapped to the nearest end of the
// response range: a negative square root to 0, an arcsine value outside
// [0, π/2] to 0 or 1, and a Box-Cox value with λx + 1 <= 0 to 0 (λ > 0) or
// +Inf (λ < 0). The reciprocal maps 0 to +Inf and is decreasing.
func (t Transform) Inverse(x float64) float64 {
	switch t.Kind {
	case TransformLog:
		return math.Exp(x)
	case TransformLogOffset:
		return math.Exp(x) - t.Offset
	case TransformLog10:
		return math.Pow(10, x)
	case TransformSqrt:
		if x < 0 {
			return 0
		}
		return x * x
	case TransformReciprocal:
		if x == 0 {
			return math.Inf(1)
		}
		return 1 / x
	case TransformArcsine:
		switch {
		case x <= 0:
			return 0
		case x >= math.Pi/2:
			return 1
		}
		s := math.Sin(x)
		return s * s
	case TransformBoxCox:
		if t.Lambda == 0 {
			return math.Exp(x)
		}
		u := t.Lambda*x + 1
		if u <= 0 {
			if t.Lambda > 0 {
				return 0
			}
			return math.Inf(1)
		}
		return math.Exp(math.Log1p(t.Lambda*x) / t.Lambda)
	}
	return x
}

// decreasing reports whether Inverse reverses order.
func (t Transform) decreasing() bool { return t.Kind == TransformReciprocal }

// BackMean is a marginal mean on the response scale.
type BackMean struct {
	Label string
	// Response is the back-transformed mean: for log-type transforms the
	// geometric mean (of y + offset, minus the offset, for log-offset), for
	// sqrt the square of the mean root, and so on. It is the response-scale
	// median under symmetric analysis-scale errors, not the arithmetic mean.
	Response float64
	// Lower and Upper are the interval endpoints transformed one by one
	// (swapped for the reciprocal, which reverses order); no SE is
	// back-transformed.
	Lower, Upper float64
}

// BackTransformMeans maps marginal means and their intervals to the
// response scale.
func BackTransformMeans(t Transform, means []Estimate) ([]BackMean, error) {
	if err := t.check(); err != nil {
		return nil, fmt.Errorf("back-transforming means: %w", err)
	}
	out := make([]BackMean, len(means))
	for i, e := range means {
		b := BackMean{Label: e.Label, Response: t.Inverse(e.Estimate), Lower: t.Inverse(e.Lower), Upper: t.Inverse(e.Upper)}
		if t.decreasing() {
			b.Lower, b.Upper = t.Inverse(e.Upper), t.Inverse(e.Lower)
			// An interval on the 1/y scale that contains 0 corresponds to
			// y-values on both sides of infinity; the upper limit is then
			// unbounded.
			if e.Lower <= 0 && e.Upper >= 0 {
				b.Upper = math.Inf(1)
				b.Lower = math.Min(t.Inverse(e.Upper), t.Inverse(e.Lower))
				if e.Upper == 0 {
					b.Lower = math.Inf(-1)
				}
			}
		}
		out[i] = b
	}
	return out, nil
}

// BackRatio is a difference of log-scale means expressed as a ratio.
type BackRatio struct {
	Label        string
	Ratio        float64 // base^difference: the ratio of geometric means
	Lower, Upper float64 // interval endpoints exponentiated one by one
}

// BackTransformDifferences expresses differences of log-type means as
// ratios of geometric means (for log-offset: of geometric means of
// y + offset) with their intervals. Differences on any other scale have no
// response-scale counterpart, and asking for one is an error.
func BackTransformDifferences(t Transform, diffs []Estimate) ([]BackRatio, error) {
	if err := t.check(); err != nil {
		return nil, fmt.Errorf("back-transforming differences: %w", err)
	}
	if !t.IsLog() {
		return nil, fmt.Errorf("back-transforming differences: the %s scale has no ratio interpretation; report differences on the analysis scale", t.Kind)
	}
	b := t.logBase()
	out := make([]BackRatio, len(diffs))
	for i, e := range diffs {
		out[i] = BackRatio{Label: e.Label, Ratio: math.Pow(b, e.Estimate), Lower: math.Pow(b, e.Lower), Upper: math.Pow(b, e.Upper)}
	}
	return out, nil
}
