package dist

import (
	"math"

	"gonum.org/v1/gonum/mathext"
)

// NormalUpper returns P(Z > z) for a standard normal Z, computed as
// erfc(z/√2)/2 so that the tail keeps full relative accuracy for large z.
func NormalUpper(z float64) float64 {
	if math.IsNaN(z) {
		return math.NaN()
	}
	return 0.5 * math.Erfc(z/math.Sqrt2)
}

// NormalLower returns P(Z <= z) for a standard normal Z.
func NormalLower(z float64) float64 {
	return NormalUpper(-z)
}

// NormalTwoSided returns P(|Z| > |z|) for a standard normal Z.
func NormalTwoSided(z float64) float64 {
	if math.IsNaN(z) {
		return math.NaN()
	}
	return math.Erfc(math.Abs(z) / math.Sqrt2)
}

// LogNormalUpper returns log P(Z > z). For z beyond the range where erfc
// underflows it uses the asymptotic expansion
//
//	P(Z > z) = φ(z)/z · (1 - 1/z² + 3/z⁴ - 15/z⁶ + ...)
//
// (Abramowitz & Stegun 1964, 26.2.12).
func LogNormalUpper(z float64) float64 {
	if math.IsNaN(z) {
		return math.NaN()
	}
	if z < 30 {
		if z < -5 {
			// Upper tail near 1: log1p of the small lower tail.
			return math.Log1p(-NormalUpper(-z))
		}
		return math.Log(NormalUpper(z))
	}
	if math.IsInf(z, 1) {
		return math.Inf(-1)
	}
	z2 := z * z
	// Series terms (-1)^k (2k-1)!! / z^{2k}; at z >= 30 eight terms reach
	// far below double precision.
	sum, term := 1.0, 1.0
	for k := 1; k <= 8; k++ {
		term *= -float64(2*k-1) / z2
		sum += term
	}
	return -0.5*z2 - math.Log(z) - 0.5*math.Log(2*math.Pi) + math.Log(sum)
}

// NormalQuantile returns z such that P(Z <= z) = p (Wichura 1988, Appl Stat
// 37:477, algorithm AS 241, as implemented in gonum mathext). It returns NaN
// for p outside [0, 1].
func NormalQuantile(p float64) float64 {
	if !(p >= 0 && p <= 1) {
		return math.NaN()
	}
	return mathext.NormalQuantile(p)
}

// NormalUpperQuantile returns z such that P(Z > z) = q, accurate for tiny q.
func NormalUpperQuantile(q float64) float64 {
	if !(q >= 0 && q <= 1) {
		return math.NaN()
	}
	return -mathext.NormalQuantile(q)
}

// tTailArg returns x = ν/(ν+t²), formed without cancellation.
func tTailArg(t, df float64) float64 {
	if math.Abs(t) > 1e150 {
		return df / t / t // t² overflows otherwise; ν is negligible
	}
	return df / (df + t*t)
}

// TUpper returns P(T > t) for Student's t with df degrees of freedom
// (df > 0, possibly non-integer; +Inf gives the normal). It returns NaN for
// df <= 0 or NaN input.
func TUpper(t, df float64) float64 {
	if math.IsNaN(t) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if math.IsInf(df, 1) {
		return NormalUpper(t)
	}
	if t == 0 {
		return 0.5
	}
	if math.IsInf(t, 0) {
		if t > 0 {
			return 0
		}
		return 1
	}
	var half float64
	if df >= 1e4 && math.Abs(t) >= 2 {
		// Cephes incbet loses up to 1e-10 (relative) for a = ν/2 this
		// large; the log-space continued fraction keeps about 1e-12 in
		// this part of the tail (checked against mpmath and scipy 1.10).
		at := math.Abs(t)
		half = 0.5 * math.Exp(logIncBetaCF(0.5*df, 0.5, logTArg(at, df), 2*math.Log(at)-logSumSq(df, at)))
	} else {
		half = 0.5 * mathext.RegIncBeta(0.5*df, 0.5, tTailArg(t, df))
	}
	if t > 0 {
		return half
	}
	return 1 - half
}

// TLower returns P(T <= t) for Student's t with df degrees of freedom.
func TLower(t, df float64) float64 {
	return TUpper(-t, df)
}

// TTwoSided returns P(|T| > |t|) for Student's t with df degrees of freedom.
func TTwoSided(t, df float64) float64 {
	if math.IsNaN(t) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if math.IsInf(df, 1) {
		return NormalTwoSided(t)
	}
	if math.IsInf(t, 0) {
		return 0
	}
	if t == 0 {
		return 1
	}
	return mathext.RegIncBeta(0.5*df, 0.5, tTailArg(t, df))
}

// LogTUpper returns log P(T > t) and stays finite where the tail underflows.
func LogTUpper(t, df float64) float64 {
	if math.IsNaN(t) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if math.IsInf(df, 1) {
		return LogNormalUpper(t)
	}
	if t <= 0 {
		return math.Log1p(-TUpper(-t, df))
	}
	if math.IsInf(t, 1) {
		return math.Inf(-1)
	}
	p := TUpper(t, df)
	if p > 1e-280 {
		return math.Log(p)
	}
	// log I_x(ν/2, 1/2) with x = ν/(ν+t²), 1-x = t²/(ν+t²), in log space.
	ls := logSumSq(df, t)
	return logIncBetaCF(0.5*df, 0.5, logTArg(t, df), 2*math.Log(t)-ls) - math.Ln2
}

// TQuantile returns t such that P(T <= t) = p for Student's t with df
// degrees of freedom. It returns NaN for p outside [0, 1] or df <= 0.
func TQuantile(p, df float64) float64 {
	if !(p >= 0 && p <= 1) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if math.IsInf(df, 1) {
		return NormalQuantile(p)
	}
	switch p {
	case 0:
		return math.Inf(-1)
	case 1:
		return math.Inf(1)
	case 0.5:
		return 0
	}
	if p > 0.5 {
		return TUpperQuantile(1-p, df)
	}
	return -TUpperQuantile(p, df)
}

// TUpperQuantile returns t such that P(T > t) = q, accurate for tiny q.
func TUpperQuantile(q, df float64) float64 {
	if !(q >= 0 && q <= 1) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if math.IsInf(df, 1) {
		return NormalUpperQuantile(q)
	}
	switch {
	case q == 0:
		return math.Inf(1)
	case q == 1:
		return math.Inf(-1)
	case q == 0.5:
		return 0
	case q > 0.5:
		return -TUpperQuantile(1-q, df)
	}
	t := tQuantileStart(q, df)
	return tNewton(t, q, df)
}

// tQuantileStart returns a starting value for TUpperQuantile: the
// Cornish-Fisher expansion about the normal quantile for large ν
// (Abramowitz & Stegun 1964, 26.7.5), otherwise the inverse incomplete beta
// function, and for tails so small that x = ν/(ν+t²) underflows the leading
// term of the series I_x(a,1/2) ≈ x^a/(a B(a,1/2)).
func tQuantileStart(q, df float64) float64 {
	if df >= 200 {
		z := NormalUpperQuantile(q)
		z2 := z * z
		g1 := (z2 + 1) * z / 4
		g2 := ((5*z2+16)*z2 + 3) * z / 96
		g3 := (((3*z2+19)*z2+17)*z2 - 15) * z / 384
		g4 := ((((79*z2+776)*z2+1482)*z2-1920)*z2 - 945) * z / 92160
		return z + (g1+(g2+(g3+g4/df)/df)/df)/df
	}
	a := 0.5 * df
	logx := (math.Log(2*q) + math.Log(a) + logBeta(a, 0.5)) / a
	if logx < -600 || math.IsInf(logx, -1) {
		return math.Exp(0.5 * (math.Log(df) - logx))
	}
	x := mathext.InvRegIncBeta(a, 0.5, 2*q)
	if x <= 0 {
		return math.Exp(0.5 * (math.Log(df) - logx))
	}
	if x >= 0.99 {
		// 1-x loses digits near 1; solve for 1-x from the complement
		// I_{1-x}(1/2, ν/2) = 1 - 2q.
		y := mathext.InvRegIncBeta(0.5, a, 1-2*q)
		return math.Sqrt(df * y / (1 - y))
	}
	return math.Sqrt(df * (1 - x) / x)
}

// logTDensity returns the log density of Student's t at t.
func logTDensity(t, df float64) float64 {
	l1, _ := math.Lgamma(0.5 * (df + 1))
	l2, _ := math.Lgamma(0.5 * df)
	return l1 - l2 - 0.5*math.Log(df*math.Pi) - 0.5*(df+1)*(logSumSq(df, t)-math.Log(df))
}

// tNewton refines t > 0 with P(T > t) = q by Newton steps on log P(T > t)
// against log t, which behaves almost linearly in both the normal-like and
// the power-law tails.
func tNewton(t, q, df float64) float64 {
	if !(t > 0) || math.IsInf(t, 0) {
		return t
	}
	lq := math.Log(q)
	for i := 0; i < 50; i++ {
		g := LogTUpper(t, df) - lq
		// d log S / d log t = -t f(t) / S(t).
		slope := -math.Exp(math.Log(t) + logTDensity(t, df) - LogTUpper(t, df))
		step := g / slope
		if step > 2 {
			step = 2
		} else if step < -2 {
			step = -2
		}
		tn := t * math.Exp(-step)
		if math.IsInf(tn, 0) || math.IsNaN(tn) {
			return t
		}
		if math.Abs(tn-t) <= 1e-15*t {
			return tn
		}
		t = tn
	}
	return t
}

// FUpper returns P(F > f) for the F distribution with df1 and df2 degrees of
// freedom (both > 0, possibly non-integer). It returns NaN for invalid df.
func FUpper(f, df1, df2 float64) float64 {
	if math.IsNaN(f) || math.IsNaN(df1) || math.IsNaN(df2) || df1 <= 0 || df2 <= 0 {
		return math.NaN()
	}
	if f <= 0 {
		return 1
	}
	if math.IsInf(f, 1) {
		return 0
	}
	if math.IsInf(df2, 1) {
		if math.IsInf(df1, 1) {
			if f > 1 {
				return 0
			}
			return 1
		}
		return ChiSqUpper(f*df1, df1)
	}
	if math.IsInf(df1, 1) {
		// F(∞, ν2) is distributed as ν2/χ²_{ν2}, so P(F > f) is the lower
		// chi-squared tail at ν2/f, taken directly (it is small for large f).
		return mathext.GammaIncReg(0.5*df2, 0.5*df2/f)
	}
	x := df2 / (df2 + df1*f)
	if df1*f > 1e300 {
		x = df2 / (df1 * f)
	}
	return mathext.RegIncBeta(0.5*df2, 0.5*df1, x)
}

// LogFUpper returns log P(F > f) and stays finite where the tail underflows.
func LogFUpper(f, df1, df2 float64) float64 {
	p := FUpper(f, df1, df2)
	if math.IsNaN(p) || p > 1e-280 || math.IsInf(df1, 0) || math.IsInf(df2, 0) {
		return math.Log(p)
	}
	if math.IsInf(f, 1) {
		return math.Inf(-1)
	}
	// x = ν2/(ν2+ν1 f) and 1-x = ν1 f/(ν2+ν1 f) in log space.
	lf := math.Log(df1) + math.Log(f)
	var ls float64
	if lf > math.Log(df2) {
		ls = lf + math.Log1p(math.Exp(math.Log(df2)-lf))
	} else {
		ls = math.Log(df2) + math.Log1p(math.Exp(lf-math.Log(df2)))
	}
	r := df1 * f / df2
	logx := math.Log(df2) - ls
	if !math.IsInf(r, 0) {
		logx = -math.Log1p(r)
	}
	return logIncBetaCF(0.5*df2, 0.5*df1, logx, lf-ls)
}

// FQuantile returns f such that P(F <= f) = p.
func FQuantile(p, df1, df2 float64) float64 {
	if !(p >= 0 && p <= 1) || math.IsNaN(df1) || math.IsNaN(df2) || df1 <= 0 || df2 <= 0 {
		return math.NaN()
	}
	return FUpperQuantile(1-p, df1, df2)
}

// FUpperQuantile returns f such that P(F > f) = q, accurate for tiny q.
func FUpperQuantile(q, df1, df2 float64) float64 {
	if !(q >= 0 && q <= 1) || math.IsNaN(df1) || math.IsNaN(df2) || df1 <= 0 || df2 <= 0 {
		return math.NaN()
	}
	switch q {
	case 0:
		return math.Inf(1)
	case 1:
		return 0
	}
	// I_x(ν2/2, ν1/2) = q with x = ν2/(ν2+ν1 f)  =>  f = ν2(1-x)/(ν1 x).
	x := mathext.InvRegIncBeta(0.5*df2, 0.5*df1, q)
	if x >= 0.99 {
		y := mathext.InvRegIncBeta(0.5*df1, 0.5*df2, 1-q)
		return df2 * y / (df1 * (1 - y))
	}
	return df2 * (1 - x) / (df1 * x)
}

// ChiSqUpper returns P(X > x) for the chi-squared distribution with df > 0
// degrees of freedom (possibly non-integer).
func ChiSqUpper(x, df float64) float64 {
	if math.IsNaN(x) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if x <= 0 {
		return 1
	}
	if math.IsInf(x, 1) {
		return 0
	}
	return mathext.GammaIncRegComp(0.5*df, 0.5*x)
}

// LogChiSqUpper returns log P(X > x) and stays finite where the tail
// underflows.
func LogChiSqUpper(x, df float64) float64 {
	p := ChiSqUpper(x, df)
	if math.IsNaN(p) || p > 1e-280 {
		return math.Log(p)
	}
	if math.IsInf(x, 1) {
		return math.Inf(-1)
	}
	return logGammaUpperCF(0.5*df, 0.5*x)
}

// ChiSqUpperQuantile returns x such that P(X > x) = q for the chi-squared
// distribution with df degrees of freedom.
func ChiSqUpperQuantile(q, df float64) float64 {
	if !(q >= 0 && q <= 1) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	switch q {
	case 0:
		return math.Inf(1)
	case 1:
		return 0
	}
	return 2 * mathext.GammaIncRegCompInv(0.5*df, q)
}

// ChiSqQuantile returns x such that P(X <= x) = p.
func ChiSqQuantile(p, df float64) float64 {
	if !(p >= 0 && p <= 1) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	switch p {
	case 0:
		return 0
	case 1:
		return math.Inf(1)
	}
	return 2 * mathext.GammaIncRegInv(0.5*df, p)
}

// logIncBetaCF returns log I_x(a, b), given log x and log(1-x), from the
// continued fraction
//
//	I_x(a,b) = x^a (1-x)^b / (a B(a,b)) · 1/(1+ d1/(1+ d2/(1+ ...)))
//	d_{2m+1} = -(a+m)(a+b+m) x / ((a+2m)(a+2m+1))
//	d_{2m}   = m(b-m) x / ((a+2m-1)(a+2m))
//
// (Abramowitz & Stegun 1964, 26.5.8), evaluated by the modified Lentz
// method (Lentz 1976, Appl Opt 15:668); only the prefactor is taken in log
// space. It is used where I underflows, which puts x well below the mean
// a/(a+b), where the fraction converges.
func logIncBetaCF(a, b, logx, log1mx float64) float64 {
	x := math.Exp(logx)
	const tiny = 1e-300
	c, d := 1.0, 1.0
	h := 1.0
	// Evaluate 1/(1+ d1/(1+ d2/(...))) as a fraction with b_0 = 0, a_1 = 1.
	// Lentz on f = 1 + d1/(1 + d2/(1 + ...)); the result is 1/f.
	f := 1.0
	c = f
	d = 0
	for m := 1; m < 100000; m++ {
		var dm float64
		k := float64(m / 2)
		if m%2 == 1 {
			dm = -(a + k) * (a + b + k) * x / ((a + 2*k) * (a + 2*k + 1))
		} else {
			dm = k * (b - k) * x / ((a + 2*k - 1) * (a + 2*k))
		}
		d = 1 + dm*d
		if math.Abs(d) < tiny {
			d = tiny
		}
		c = 1 + dm/c
		if math.Abs(c) < tiny {
			c = tiny
		}
		d = 1 / d
		del := c * d
		f *= del
		if math.Abs(del-1) < 1e-16 {
			break
		}
	}
	h = 1 / f
	return a*logx + b*log1mx - math.Log(a) - logBeta(a, b) + math.Log(h)
}

// logBeta returns log B(a, b). When one argument is large, log Γ(a) -
// log Γ(a+b) is formed from Stirling's series (Abramowitz & Stegun 1964,
// 6.1.41) so that the two large log-gammas do not cancel.
func logBeta(a, b float64) float64 {
	if a < b {
		a, b = b, a
	}
	if a >= 10 {
		lb, _ := math.Lgamma(b)
		ab := a + b
		return lb + (a-0.5)*(-math.Log1p(b/a)) - b*math.Log(ab) + b + stirlingTail(a) - stirlingTail(ab)
	}
	la, _ := math.Lgamma(a)
	lb, _ := math.Lgamma(b)
	lab, _ := math.Lgamma(a + b)
	return la + lb - lab
}

// stirlingTail returns ω(x) = log Γ(x) - [(x-1/2) log x - x + log(2π)/2]
// for x >= 10 from the asymptotic series 1/(12x) - 1/(360x³) + 1/(1260x⁵)
// - 1/(1680x⁷).
func stirlingTail(x float64) float64 {
	z := 1 / (x * x)
	return (1.0/12 - z*(1.0/360-z*(1.0/1260-z/1680))) / x
}

// logTArg returns log(ν/(ν+t²)) = -log1p(t²/ν) without cancellation.
func logTArg(t, df float64) float64 {
	r := t / math.Sqrt(df)
	if math.Abs(r) < 1e150 {
		return -math.Log1p(r * r)
	}
	return -2 * math.Log(math.Abs(r))
}

// logSumSq returns log(ν + t²) without overflow.
func logSumSq(df, t float64) float64 {
	at := math.Abs(t)
	if at > 1 {
		return 2*math.Log(at) + math.Log1p(df/(at*at))
	}
	return math.Log(df + t*t)
}

// logGammaUpperCF returns log Q(a, x) for large x by Legendre's continued
// fraction
//
//	Γ(a,x) = e^{-x} x^a · 1/(x+1-a- 1(1-a)/(x+3-a- 2(2-a)/(x+5-a- ...)))
//
// (Abramowitz & Stegun 1964, 6.5.31), evaluated by the modified Lentz
// method (Lentz 1976, Appl Opt 15:668) in ordinary arithmetic; only the
// prefactor is taken in log space.
func logGammaUpperCF(a, x float64) float64 {
	const tiny = 1e-300
	b := x + 1 - a
	c := 1 / tiny
	d := 1 / b
	h := d
	for i := 1; i < 10000; i++ {
		an := -float64(i) * (float64(i) - a)
		b += 2
		d = an*d + b
		if math.Abs(d) < tiny {
			d = tiny
		}
		c = b + an/c
		if math.Abs(c) < tiny {
			c = tiny
		}
		d = 1 / d
		del := d * c
		h *= del
		if math.Abs(del-1) < 1e-16 {
			break
		}
	}
	lga, _ := math.Lgamma(a)
	return -x + a*math.Log(x) - lga + math.Log(h)
}
