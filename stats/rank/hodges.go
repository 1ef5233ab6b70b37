package rank

import (
	"fmt"
	"math"
	"slices"

	"furrow/stats/dist"
)

// ShiftInterval is a Hodges-Lehmann estimate with the distribution-free
// confidence interval obtained by inverting the matching rank test.
type ShiftInterval struct {
	// Estimate is the Hodges-Lehmann estimate: the median of the pairwise
	// differences (two samples), of the Walsh averages (one sample), or the
	// shift at which the stratified statistic crosses zero.
	Estimate float64
	// Lower and Upper bound the interval; a one-sided interval has an
	// infinite bound on the open side. A bound is also infinite when the
	// sample is too small to reach the requested level.
	Lower, Upper float64
	// Level is the requested confidence level; Achieved the exact coverage
	// of the exact interval (NaN for the normal approximation).
	Level, Achieved float64
	// Exact is true when the bounds are order statistics chosen from the
	// exact null distribution; Continuity is true when the normal
	// approximation used a continuity correction of 1/2.
	Exact, Continuity bool
	// N is the number of observations used.
	N int
	// Alternative is the side of the interval: TwoSided, Greater
	// ([Lower, +Inf)) or Less ((-Inf, Upper]).
	Alternative Alternative
}

// maxPairs bounds the number of pairwise differences HLStratified sorts.
const maxPairs = 10_000_000

// HLShift is the Hodges & Lehmann (1963, Ann Math Stat 34:598) estimate of
// the shift of x relative to y, the median of the m·n differences
// x_i - y_j, with the confidence interval of Moses (1953; see Bauer 1972,
// JASA 67:687) from inverting the rank-sum test: the shifts d for which
// RankSum(x - d, y) does not reject at 1 - level.
//
// With the exact null distribution (the same rule as RankSum: o.Method,
// no ties in the combined sample x - o.Mu, y, both sizes <= ExactMaxN) the
// bounds are the order statistics D_(k) and D_(mn+1-k) of the differences,
// k the largest integer with P(U <= k-1) <= a (a = (1-level)/2 two-sided,
// 1-level one-sided). Otherwise U between breakpoints is referred to the
// normal approximation with the tie-corrected variance (ties within x and
// within y) and, unless o.NoContinuity, a continuity correction of 1/2:
// with σ² = mn/12 [(N+1) - Σ(t³-t)/(N(N-1))] and z the normal quantile,
// the bounds are D_(mn-c) and D_(mn-c'+1), c = floor(mn/2 + zσ + 1/2) and
// c' = ceil(mn/2 - zσ - 1/2) (without the 1/2 when o.NoContinuity).
//
// The order statistics are selected without forming all m·n differences
// (bisection over the float64 ordering with a two-pointer count), so
// large samples take O((m+n)·64) after sorting. The inputs are not modified.
func HLShift(x, y []float64, level float64, o Options) (ShiftInterval, error) {
	m, n := len(x), len(y)
	res := ShiftInterval{Level: level, Achieved: math.NaN(), N: m + n, Alternative: o.Alternative}
	if m == 0 || n == 0 {
		return res, fmt.Errorf("hodges-lehmann: %w: samples of size %d and %d", ErrTooFew, m, n)
	}
	if err := checkFinite(x); err != nil {
		return res, fmt.Errorf("hodges-lehmann: x: %w", err)
	}
	if err := checkFinite(y); err != nil {
		return res, fmt.Errorf("hodges-lehmann: y: %w", err)
	}
	if err := checkLevel(level); err != nil {
		return res, err
	}
	xs, ys := slices.Clone(x), slices.Clone(y)
	slices.Sort(xs)
	slices.Sort(ys)
	total := m * n
	kth := func(k int) float64 { return kthDiff(xs, ys, k) }
	res.Estimate = medianOfOrder(total, kth)

	all := make([]float64, 0, m+n)
	for _, v := range x {
		all = append(all, v-o.Mu)
	}
	all = append(all, y...)
	_, ties := midranks(all)
	exact := o.Method == MethodExact || (o.Method == MethodAuto && m <= ExactMaxN && n <= ExactMaxN && ties == 0)
	if o.Method == MethodExact {
		if ties > 0 {
			return res, fmt.Errorf("hodges-lehmann: %w", ErrExactTies)
		}
		if total > rankSumExactLimit {
			return res, fmt.Errorf("hodges-lehmann: exact distribution limited to m·n <= %d, have %d", rankSumExactLimit, total)
		}
	}
	tail := tailProb(level, o.Alternative)
	var kLo, kHi int // 1-based order statistics of the bounds (0 or total+1: infinite)
	if exact {
		res.Exact = true
		k := exactK(rankSumDist(m, n), tail)
		kLo, kHi = k, total+1-k
		res.Achieved = achieved(rankSumDist(m, n), k, o.Alternative)
	} else {
		_, tx := midranks(x)
		_, ty := midranks(y)
		mf, nf := float64(m), float64(n)
		nt := mf + nf
		v := mf * nf / 12 * ((nt + 1) - (tx+ty)/(nt*(nt-1)))
		if !(v > 0) {
			return res, fmt.Errorf("hodges-lehmann: %w", ErrAllTied)
		}
		res.Continuity = !o.NoContinuity
		kLo, kHi = normalK(total, math.Sqrt(v), tail, res.Continuity)
	}
	res.Lower, res.Upper = bounds(total, kLo, kHi, kth, o.Alternative)
	return res, nil
}

// HLLocation is the one-sample Hodges & Lehmann (1963) estimate of the
// centre of symmetry of d, the median of the n(n+1)/2 Walsh averages
// (d_i + d_j)/2, i <= j, with the interval of Tukey (1949; Bauer 1972) from
// inverting the signed-rank test: the bounds are order statistics of the
// Walsh averages, chosen from the exact null distribution of V (same rule
// as SignedRank at o.Mu: no ties, no zeros, n <= ExactMaxN) or from the
// normal approximation with the tie-corrected variance and, unless
// o.NoContinuity, a continuity correction of 1/2. Between breakpoints no
// difference is zero, so every observation takes part in the inversion.
// The input is not modified.
func HLLocation(d []float64, level float64, o Options) (ShiftInterval, error) {
	n := len(d)
	res := ShiftInterval{Level: level, Achieved: math.NaN(), N: n, Alternative: o.Alternative}
	if n == 0 {
		return res, fmt.Errorf("hodges-lehmann: %w: no observations", ErrTooFew)
	}
	if err := checkFinite(d); err != nil {
		return res, fmt.Errorf("hodges-lehmann: %w", err)
	}
	if err := checkLevel(level); err != nil {
		return res, err
	}
	ds := slices.Clone(d)
	slices.Sort(ds)
	total := n * (n + 1) / 2
	kth := func(k int) float64 { return kthWalsh(ds, k) }
	res.Estimate = medianOfOrder(total, kth)

	var abs []float64
	zeros := 0
	for _, v := range d {
		if v-o.Mu == 0 {
			zeros++
			continue
		}
		abs = append(abs, math.Abs(v-o.Mu))
	}
	_, ties := midranks(abs)
	exact := o.Method == MethodExact || (o.Method == MethodAuto && n <= ExactMaxN && ties == 0 && zeros == 0)
	if o.Method == MethodExact {
		if ties > 0 || zeros > 0 {
			return res, fmt.Errorf("hodges-lehmann: %w", ErrExactTies)
		}
		if n > signedRankExactLimit {
			return res, fmt.Errorf("hodges-lehmann: exact distribution limited to n <= %d, have %d", signedRankExactLimit, n)
		}
	}
	tail := tailProb(level, o.Alternative)
	var kLo, kHi int
	if exact {
		res.Exact = true
		p := signedRankDist(n)
		k := exactK(p, tail)
		kLo, kHi = k, total+1-k
		res.Achieved = achieved(p, k, o.Alternative)
	} else {
		// Between breakpoints |d_i - c| tie only where the d_i are equal.
		_, td := midranks(d)
		nf := float64(n)
		v := nf*(nf+1)*(2*nf+1)/24 - td/48
		if !(v > 0) {
			return res, fmt.Errorf("hodges-lehmann: %w", ErrAllTied)
		}
		res.Continuity = !o.NoContinuity
		kLo, kHi = normalK(total, math.Sqrt(v), tail, res.Continuity)
	}
	res.Lower, res.Upper = bounds(total, kLo, kHi, kth, o.Alternative)
	return res, nil
}

// HLStratified estimates a common shift of treatment 0 relative to
// treatment 1 within strata by inverting van Elteren's (1960, Bull Int
// Stat Inst 37:351) statistic, in the manner of Hodges & Lehmann (1963):
// with Groups[0] shifted by c in every stratum,
//
//	S(c) = Σ_s (U_s(c) - m_s n_s/2)/(N_s+1),  U_s(c) = #{x_si - y_sj > c},
//
// is a non-increasing step function with jumps of 1/(N_s+1) at the
// within-stratum differences, and its variance σ² (VanElteren's Var) is
// constant between them. The estimate is the c where S crosses zero (the
// middle of the interval where it is zero, if any); the interval is the
// set of c with |S(c)| <= z σ, z the normal quantile of the level (no
// continuity correction, as VanElteren). With one stratum it is HLShift's
// normal interval without continuity correction. Strata with an empty
// treatment carry no information and are skipped. Only o.Alternative is
// used from o. The inputs are not modified.
func HLStratified(strata []Stratum, level float64, o Options) (ShiftInterval, error) {
	res := ShiftInterval{Level: level, Achieved: math.NaN(), Alternative: o.Alternative}
	if err := checkLevel(level); err != nil {
		return res, err
	}
	type brk struct {
		d float64
		s int
	}
	var pts []brk
	var w, mn []float64
	var variance float64
	pairs := 0
	for s, st := range strata {
		if len(st.Groups) != 2 {
			return res, fmt.Errorf("hodges-lehmann: stratum %d has %d treatments, need 2", s+1, len(st.Groups))
		}
		x, y := st.Groups[0], st.Groups[1]
		if err := checkFinite(x); err != nil {
			return res, fmt.Errorf("hodges-lehmann: stratum %d: %w", s+1, err)
		}
		if err := checkFinite(y); err != nil {
			return res, fmt.Errorf("hodges-lehmann: stratum %d: %w", s+1, err)
		}
		m, n := len(x), len(y)
		if m == 0 || n == 0 {
			continue
		}
		pairs += m * n
		if pairs > maxPairs {
			return res, fmt.Errorf("hodges-lehmann: more than %d within-stratum pairs", maxPairs)
		}
		_, tx := midranks(x)
		_, ty := midranks(y)
		nt := float64(m + n)
		ws := 1 / (nt + 1)
		k := len(w)
		w, mn = append(w, ws), append(mn, float64(m*n))
		variance += float64(m) * float64(n) / 12 * ((nt + 1) - (tx+ty)/(nt*(nt-1))) * ws * ws
		for _, a := range x {
			for _, b := range y {
				pts = append(pts, brk{a - b, k})
			}
		}
		res.N += m + n
	}
	if len(w) == 0 || !(variance > 0) {
		return res, fmt.Errorf("hodges-lehmann: %w: no stratum has both treatments", ErrTooFew)
	}
	slices.SortFunc(pts, func(a, b brk) int {
		switch {
		case a.d < b.d:
			return -1
		case a.d > b.d:
			return 1
		}
		return a.s - b.s
	})
	// Walk the distinct breakpoints; above[s] counts the differences of
	// stratum s above the current gap. S is recomputed from the integer
	// counts at each gap so no rounding accumulates.
	above := make([]int, len(w))
	for _, p := range pts {
		above[p.s]++
	}
	var scale float64
	for i := range w {
		scale += w[i] * mn[i] / 2
	}
	sAt := func() float64 {
		var t float64
		for i := range w {
			t += w[i] * (float64(above[i]) - mn[i]/2)
		}
		if math.Abs(t) <= 1e-12*scale {
			return 0
		}
		return t
	}
	zs := dist.NormalUpperQuantile(tailProb(level, o.Alternative)) * math.Sqrt(variance)
	res.Estimate, res.Lower, res.Upper = math.NaN(), math.Inf(-1), math.Inf(1)
	prev := sAt() // S on the gap below every breakpoint (positive)
	lowerFound, upperFound := false, false
	zeroStart := math.NaN()
	for i := 0; i < len(pts); {
		j := i
		for j < len(pts) && pts[j].d == pts[i].d {
			above[pts[j].s]--
			j++
		}
		d := pts[i].d
		cur := sAt() // S on the gap just above d
		if !lowerFound && prev > zs && cur <= zs {
			res.Lower, lowerFound = d, true
		}
		if !upperFound && prev >= -zs && cur < -zs {
			res.Upper, upperFound = d, true
		}
		switch {
		case math.IsNaN(res.Estimate) && prev > 0 && cur < 0:
			res.Estimate = d
		case prev > 0 && cur == 0:
			zeroStart = d
		case prev == 0 && cur < 0 && math.IsNaN(res.Estimate):
			res.Estimate = (zeroStart + d) / 2
		}
		prev = cur
		i = j
	}
	switch o.Alternative {
	case Greater:
		res.Upper = math.Inf(1)
	case Less:
		res.Lower = math.Inf(-1)
	}
	return res, nil
}

// checkLevel rejects a confidence level outside (0, 1).
func checkLevel(level float64) error {
	if !(level > 0 && level < 1) {
		return fmt.Errorf("hodges-lehmann: confidence level %v is not between 0 and 1", level)
	}
	return nil
}

// tailProb is the probability left out in each bounded tail.
func tailProb(level float64, alt Alternative) float64 {
	if alt == TwoSided {
		return (1 - level) / 2
	}
	return 1 - level
}

// exactK returns the largest k with P(X <= k-1) <= tail for the point
// probabilities p of a distribution symmetric on 0..len(p)-1 (Moses 1953):
// the interval [D_(k), D_(T+1-k)] then covers with probability
// 1 - 2 P(X <= k-1) >= 1 - 2 tail. A relative slack of 1e-9 absorbs the
// rounding of the recursions. k = 0 means the level cannot be reached.
func exactK(p []float64, tail float64) int {
	var cum float64
	k := 0
	for j := 0; j < len(p); j++ {
		cum += p[j]
		if cum > tail*(1+1e-9) {
			break
		}
		k = j + 1
	}
	return k
}

// achieved returns the exact coverage of the interval with critical k.
func achieved(p []float64, k int, alt Alternative) float64 {
	var cum float64
	for j := 0; j < k && j < len(p); j++ {
		cum += p[j]
	}
	if alt == TwoSided {
		return 1 - 2*cum
	}
	return 1 - cum
}

// normalK returns the 1-based order statistics of the bounds when a count
// statistic C (number of differences above the shift, integer between
// breakpoints, mean total/2, sd sigma) is referred to the normal: the
// lower bound is D_(total-c) with c = floor(total/2 + zσ + cc), the upper
// D_(total-c'+1) with c' = ceil(total/2 - zσ - cc), cc = 1/2 with the
// continuity correction and 0 without.
func normalK(total int, sigma, tail float64, cc bool) (kLo, kHi int) {
	corr := 0.0
	if cc {
		corr = 0.5
	}
	z := dist.NormalUpperQuantile(tail)
	t := float64(total)
	cHi := math.Floor(t/2 + z*sigma + corr)
	cLo := math.Ceil(t/2 - z*sigma - corr)
	kLo = total - int(math.Min(cHi, t))
	kHi = total - int(math.Max(cLo, 0)) + 1
	return kLo, kHi
}

// bounds turns order-statistic indices into interval bounds (index 0 or
// total+1: infinite), open on the side the alternative leaves open.
func bounds(total, kLo, kHi int, kth func(int) float64, alt Alternative) (lo, hi float64) {
	lo, hi = math.Inf(-1), math.Inf(1)
	if kLo >= 1 && kLo <= total && alt != Less {
		lo = kth(kLo)
	}
	if kHi >= 1 && kHi <= total && alt != Greater {
		hi = kth(kHi)
	}
	return lo, hi
}

// medianOfOrder is the median of total values given their k-th order
// statistic.
func medianOfOrder(total int, kth func(int) float64) float64 {
	if total%2 == 1 {
		return kth(total/2 + 1)
	}
	a, b := kth(total/2), kth(total/2+1)
	return a + (b-a)/2
}

// orderKey maps a float64 to a uint64 with the same order.
func orderKey(f float64) uint64 {
	b := math.Float64bits(f)
	if b>>63 == 1 {
		return ^b
	}
	return b | 1<<63
}

// keyFloat inverts orderKey.
func keyFloat(k uint64) float64 {
	if k>>63 == 1 {
		return math.Float64frombits(k &^ (1 << 63))
	}
	return math.Float64frombits(^k)
}

// selectKth returns the smallest float t in [lo, hi] with count(t) >= k,
// count being non-decreasing and stepping only at the candidate values;
// t is then the k-th smallest candidate. Bisection over the float64
// ordering takes at most 64 counts.
func selectKth(lo, hi float64, k int, count func(float64) int) float64 {
	a, b := orderKey(lo), orderKey(hi)
	for a < b {
		mid := a + (b-a)/2
		if count(keyFloat(mid)) >= k {
			b = mid
		} else {
			a = mid + 1
		}
	}
	return keyFloat(a)
}

// kthDiff returns the k-th smallest (1-based) of x_i - y_j for sorted x and
// y. Floating-point subtraction is monotone in each argument, so the count
// of differences <= t is a two-pointer walk.
func kthDiff(xs, ys []float64, k int) float64 {
	m, n := len(xs), len(ys)
	count := func(t float64) int {
		c, j := 0, 0
		for i := 0; i < m; i++ {
			// differences of x_i are <= t for y_j >= ys[j]; j grows with i.
			for j < n && xs[i]-ys[j] > t {
				j++
			}
			c += n - j
		}
		return c
	}
	return selectKth(xs[0]-ys[n-1], xs[m-1]-ys[0], k, count)
}

// walsh is the Walsh average of a and b, monotone in each argument.
func walsh(a, b float64) float64 { return 0.5*a + 0.5*b }

// kthWalsh returns the k-th smallest (1-based) Walsh average of sorted d.
func kthWalsh(ds []float64, k int) float64 {
	n := len(ds)
	count := func(t float64) int {
		c, p := 0, n-1
		for i := 0; i < n; i++ {
			for p >= i && walsh(ds[i], ds[p]) > t {
				p--
			}
			if p < i {
				break
			}
			c += p - i + 1
		}
		return c
	}
	return selectKth(ds[0], ds[n-1], k, count)
}
