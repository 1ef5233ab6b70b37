package assume

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
)

// BreuschPaganResult is the outcome of the studentised Breusch-Pagan test.
type BreuschPaganResult struct {
	// Stat is Koenker's statistic n R² (chi-squared under homoscedasticity).
	Stat float64
	// DF is the number of regressors (excluding the intercept).
	DF float64
	// P is the upper-tail chi-squared p-value.
	P float64
	// N is the number of residuals.
	N int
}

// BreuschPaganFitted tests whether the residual variance changes with the
// fitted values: BreuschPagan with the single regressor fitted.
func BreuschPaganFitted(resid, fitted []float64) (BreuschPaganResult, error) {
	if len(resid) != len(fitted) {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: %d residuals but %d fitted values", len(resid), len(fitted))
	}
	if len(fitted) < 3 {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: %w: %d residuals, need at least 3", ErrTooFew, len(fitted))
	}
	z := mat.NewDense(len(fitted), 1, append([]float64(nil), fitted...))
	return BreuschPagan(resid, z)
}

// BreuschPagan is Koenker's (1981, J Econometrics 17:107) studentised form
// of the Breusch & Pagan (1979, Econometrica 47:1287) test: regress the
// squared residuals e² on an intercept and the columns of z (n × p, without
// an intercept column) by Householder QR, and refer
//
//	LM = n R²
//
// to χ²(p). Unlike the original form it does not assume normal errors.
// z must have full column rank together with the intercept, and n > p + 1.
// The inputs are not modified.
func BreuschPagan(resid []float64, z mat.Matrix) (BreuschPaganResult, error) {
	n := len(resid)
	if n == 0 {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: %w: no residuals", ErrTooFew)
	}
	r, p := z.Dims()
	if r != n {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: %d residuals but %d rows of regressors", n, r)
	}
	if p < 1 {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: no regressors")
	}
	if n <= p+1 {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: %w: %d residuals for %d regressors", ErrTooFew, n, p)
	}
	if err := checkFinite(resid); err != nil {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: residual %w", err)
	}
	x := mat.NewDense(n, p+1, nil)
	for i := 0; i < n; i++ {
		x.Set(i, 0, 1)
		for j := 0; j < p; j++ {
			v := z.At(i, j)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: regressor %d row %d is %v", j+1, i+1, v)
			}
			x.Set(i, j+1, v)
		}
	}
	u := make([]float64, n)
	for i, e := range resid {
		u[i] = e * e
	}
	_, tss := centredSS(u)
	if !(tss > 0) {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: %w: squared residuals do not vary", ErrConstant)
	}
	// Scale columns to unit norm so the rank check is scale free.
	for j := 0; j <= p; j++ {
		col := mat.Col(nil, j, x)
		nrm := norm2(col)
		if nrm == 0 {
			return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: regressor %d is all zero", j)
		}
		for i := 0; i < n; i++ {
			x.Set(i, j, col[i]/nrm)
		}
	}
	var qr mat.QR
	qr.Factorize(x)
	var rm mat.Dense
	qr.RTo(&rm)
	for j := 0; j <= p; j++ {
		if math.Abs(rm.At(j, j)) < 1e-10 {
			return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: regressors are collinear with the intercept or each other")
		}
	}
	uv := mat.NewVecDense(n, u)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, uv); err != nil {
		return BreuschPaganResult{}, fmt.Errorf("breusch-pagan: solving the auxiliary regression: %w", err)
	}
	var fit mat.VecDense
	fit.MulVec(x, &beta)
	var rss float64
	for i := 0; i < n; i++ {
		d := u[i] - fit.AtVec(i)
		rss += d * d
	}
	r2 := 1 - rss/tss
	if r2 < 0 {
		r2 = 0
	}
	stat := float64(n) * r2
	df := float64(p)
	return BreuschPaganResult{Stat: stat, DF: df, P: dist.ChiSqUpper(stat, df), N: n}, nil
}
