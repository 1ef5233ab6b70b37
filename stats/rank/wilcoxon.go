package rank

import (
	"errors"
	"fmt"
	"math"
)

// ErrExactTies is returned when the exact distribution is requested but the
// data have ties or zero differences, for which it does not apply.
var ErrExactTies = errors.New("exact distribution needs data without ties or zeros")

// Limits of MethodExact (beyond them the recursions get slow).
const (
	signedRankExactLimit = 1000
	rankSumExactLimit    = 250000 // m·n
)

// SignedRankResult is the outcome of a Wilcoxon signed-rank test.
type SignedRankResult struct {
	// V is the sum of the ranks of |d| over the positive differences
	// d = x - Mu (zeros dropped).
	V float64
	// Z is the standardised statistic of the normal approximation (with the
	// continuity correction if used); NaN when the exact distribution was
	// used.
	Z float64
	// P is the p-value for the requested alternative.
	P float64
	// Exact is true when P comes from the exact distribution.
	Exact bool
	// N is the number of non-zero differences; Zeros the number dropped.
	N, Zeros int
	// Alternative is the alternative hypothesis tested.
	Alternative Alternative
}

// SignedRankPaired is SignedRank on the paired differences x[i] - y[i].
func SignedRankPaired(x, y []float64, o Options) (SignedRankResult, error) {
	if len(x) != len(y) {
		return SignedRankResult{}, fmt.Errorf("signed-rank: %d and %d paired values", len(x), len(y))
	}
	d := make([]float64, len(x))
	for i := range x {
		d[i] = x[i] - y[i]
	}
	if err := checkFinite(x); err != nil {
		return SignedRankResult{}, fmt.Errorf("signed-rank: x: %w", err)
	}
	if err := checkFinite(y); err != nil {
		return SignedRankResult{}, fmt.Errorf("signed-rank: y: %w", err)
	}
	return SignedRank(d, o)
}

// SignedRank is Wilcoxon's (1945, Biometrics Bull 1:80) signed-rank test
// that the differences d are symmetric about o.Mu. Zero differences are
// dropped; |d| are mid-ranked. Under the null V has mean n(n+1)/4 and
// variance n(n+1)(2n+1)/24 - Σ(t³-t)/48. See the package documentation for
// when the exact distribution is used. The input is not modified.
func SignedRank(d []float64, o Options) (SignedRankResult, error) {
	if err := checkFinite(d); err != nil {
		return SignedRankResult{}, fmt.Errorf("signed-rank: %w", err)
	}
	if math.IsNaN(o.Mu) || math.IsInf(o.Mu, 0) {
		return SignedRankResult{}, fmt.Errorf("signed-rank: null location %v is not finite", o.Mu)
	}
	var abs []float64
	var pos []bool
	zeros := 0
	for _, v := range d {
		e := v - o.Mu
		if e == 0 {
			zeros++
			continue
		}
		abs = append(abs, math.Abs(e))
		pos = append(pos, e > 0)
	}
	n := len(abs)
	res := SignedRankResult{N: n, Zeros: zeros, Alternative: o.Alternative, Z: math.NaN()}
	if n == 0 {
		return res, fmt.Errorf("signed-rank: %w: all differences are zero", ErrTooFew)
	}
	r, ties := midranks(abs)
	for i, ri := range r {
		if pos[i] {
			res.V += ri
		}
	}
	nf := float64(n)
	exact := o.Method == MethodExact || (o.Method == MethodAuto && n <= ExactMaxN && ties == 0 && zeros == 0)
	if o.Method == MethodExact {
		if ties > 0 || zeros > 0 {
			return res, fmt.Errorf("signed-rank: %w", ErrExactTies)
		}
		if n > signedRankExactLimit {
			return res, fmt.Errorf("signed-rank: exact distribution limited to n <= %d, have %d", signedRankExactLimit, n)
		}
	}
	if exact {
		res.Exact = true
		res.P = signedRankExactP(n, int(math.Round(res.V)), o.Alternative)
		return res, nil
	}
	mean := nf * (nf + 1) / 4
	v := nf*(nf+1)*(2*nf+1)/24 - ties/48
	if v <= 0 {
		return res, fmt.Errorf("signed-rank: %w", ErrAllTied)
	}
	dv := res.V - mean
	res.Z = (dv - continuity(dv, o.Alternative, o.NoContinuity)) / math.Sqrt(v)
	res.P = normalP(res.Z, o.Alternative)
	return res, nil
}

// signedRankDist returns P(V = v), v = 0..n(n+1)/2, for the signed-rank
// statistic of n untied observations, by the recursion
// P_k(v) = [P_{k-1}(v) + P_{k-1}(v-k)]/2 (each rank k enters V with
// probability 1/2).
func signedRankDist(n int) []float64 {
	m := n * (n + 1) / 2
	p := make([]float64, m+1)
	p[0] = 1
	top := 0
	for k := 1; k <= n; k++ {
		top += k
		for v := top; v >= 0; v-- {
			q := p[v]
			if v >= k {
				q += p[v-k]
			}
			p[v] = q / 2
		}
	}
	return p
}

// signedRankExactP returns the exact p-value of V = v.
func signedRankExactP(n, v int, alt Alternative) float64 {
	p := signedRankDist(n)
	return exactTails(p, v, alt)
}

// exactTails returns the p-value of the observed value v from the point
// probabilities p[0..]: P(X >= v), P(X <= v) or twice the smaller.
func exactTails(p []float64, v int, alt Alternative) float64 {
	var lower, upper float64
	// Sum the smaller side directly to keep small tails accurate.
	for i := 0; i <= v && i < len(p); i++ {
		lower += p[i]
	}
	for i := len(p) - 1; i >= v && i >= 0; i-- {
		upper += p[i]
	}
	switch alt {
	case Greater:
		return math.Min(1, upper)
	case Less:
		return math.Min(1, lower)
	default:
		return math.Min(1, 2*math.Min(lower, upper))
	}
}

// RankSumResult is the outcome of a Wilcoxon rank-sum (Mann-Whitney) test.
type RankSumResult struct {
	// U is the Mann-Whitney statistic of x: the rank sum of x minus
	// m(m+1)/2, i.e. the number of pairs (x_i, y_j) with x_i > y_j, ties
	// counted 1/2.
	U float64
	// W is the rank sum of x in the combined sample.
	W float64
	// Z is the standardised statistic of the normal approximation; NaN when
	// the exact distribution was used.
	Z float64
	// P is the p-value for the requested alternative.
	P float64
	// Exact is true when P comes from the exact distribution.
	Exact bool
	// M and N are the sizes of x and y.
	M, N int
	// Alternative is the alternative hypothesis tested.
	Alternative Alternative
}

// RankSum is the Wilcoxon (1945) rank-sum / Mann & Whitney (1947, Ann Math
// Stat 18:50) test that x - o.Mu and y come from the same distribution.
// Greater means x tends to be larger. Under the null U has mean mn/2 and
// variance mn/12 [(N+1) - Σ(t³-t)/(N(N-1))]. See the package documentation
// for when the exact distribution is used. The inputs are not modified.
func RankSum(x, y []float64, o Options) (RankSumResult, error) {
	m, n := len(x), len(y)
	if m == 0 || n == 0 {
		return RankSumResult{}, fmt.Errorf("rank-sum: %w: samples of size %d and %d", ErrTooFew, m, n)
	}
	if err := checkFinite(x); err != nil {
		return RankSumResult{}, fmt.Errorf("rank-sum: x: %w", err)
	}
	if err := checkFinite(y); err != nil {
		return RankSumResult{}, fmt.Errorf("rank-sum: y: %w", err)
	}
	if math.IsNaN(o.Mu) || math.IsInf(o.Mu, 0) {
		return RankSumResult{}, fmt.Errorf("rank-sum: null shift %v is not finite", o.Mu)
	}
	all := make([]float64, 0, m+n)
	for _, v := range x {
		all = append(all, v-o.Mu)
	}
	all = append(all, y...)
	r, ties := midranks(all)
	res := RankSumResult{M: m, N: n, Alternative: o.Alternative, Z: math.NaN()}
	for i := 0; i < m; i++ {
		res.W += r[i]
	}
	mf, nf := float64(m), float64(n)
	res.U = res.W - mf*(mf+1)/2
	exact := o.Method == MethodExact || (o.Method == MethodAuto && m <= ExactMaxN && n <= ExactMaxN && ties == 0)
	if o.Method == MethodExact {
		if ties > 0 {
			return res, fmt.Errorf("rank-sum: %w", ErrExactTies)
		}
		if m*n > rankSumExactLimit {
			return res, fmt.Errorf("rank-sum: exact distribution limited to m·n <= %d, have %d", rankSumExactLimit, m*n)
		}
	}
	if exact {
		res.Exact = true
		res.P = exactTails(rankSumDist(m, n), int(math.Round(res.U)), o.Alternative)
		return res, nil
	}
	tot := mf + nf
	v := mf * nf / 12 * ((tot + 1) - ties/(tot*(tot-1)))
	if !(v > 0) {
		return res, fmt.Errorf("rank-sum: %w", ErrAllTied)
	}
	du := res.U - mf*nf/2
	res.Z = (du - continuity(du, o.Alternative, o.NoContinuity)) / math.Sqrt(v)
	res.P = normalP(res.Z, o.Alternative)
	return res, nil
}

// rankSumDist returns P(U = u), u = 0..mn, for samples of sizes m and n
// without ties, from the counts c(u; i, j) = c(u-j; i-1, j) + c(u; i, j-1)
// (Mann & Whitney 1947): the largest of the i+j values is either an x (it
// exceeds all j y's) or a y.
func rankSumDist(m, n int) []float64 {
	// c[j] holds c(·; i, j) for the current i; it is updated in place from
	// c(·; i-1, j) (read at u-j, below u, so u runs downwards) and the
	// already updated c(·; i, j-1).
	c := make([][]float64, n+1)
	for j := range c {
		c[j] = make([]float64, m*j+1)
		c[j][0] = 1 // i = 0: only u = 0
	}
	for i := 1; i <= m; i++ {
		for j := 1; j <= n; j++ {
			cj, cl := c[j], c[j-1]
			for u := i * j; u >= 0; u-- {
				var v float64
				if u >= j {
					v = cj[u-j] // x largest: adds j
				}
				if u <= (i)*(j-1) {
					v += cl[u] // y largest
				}
				cj[u] = v
			}
		}
	}
	out := c[n]
	var tot float64
	for _, v := range out {
		tot += v
	}
	for u := range out {
		out[u] /= tot
	}
	return out
}
