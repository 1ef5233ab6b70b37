package lmm

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Bounds of the starting values: a moment estimate at or below zero starts
// the search at startMin (theta = 0 is a stationary point of the even
// criterion, so the search could not leave it), and a huge ratio is cut at
// startMax.
const (
	startMin = 0.1
	startMax = 1e4
)

// startTheta returns starting values of theta (sorted-factor order) from
// method-of-moments estimates of the variance components, by Henderson's
// (1953, Biometrics 9:226) Method 1 applied to the least-squares residuals
// e: with T_a the weighted residual total of level a of factor k, d_a its
// weighted count, D the total weight and n_ab the weighted count of rows
// in level a of factor k and level b of factor j, the sums of squares
//
//	SSB_k = sum_a T_a^2/d_a,   RSS = sum_i w_i e_i^2
//
// are equated to their expectations under a model with only a mean,
//
//	E SSB_k = sum_j (h_kj - H_j/D) sigma_j^2 + (q_k - 1) sigma^2,
//	E RSS   = sum_j (D - H_j/D) sigma_j^2 + (N - p) sigma^2,
//	h_kj = sum_a sum_b n_ab^2/d_a,  H_j = sum_b d_b^2,
//
// (q_k non-empty levels; N - p in place of N - 1 for the fixed effects),
// and the K+1 equations solved. The fixed effects make this approximate:
// it is only a start, scaled like the data, which theta = 1 is not when
// one variance dwarfs another. Where the equations are singular or give no
// positive residual variance, each factor's one-way estimate
// (MSB_k - MSW_k)/n0_k is used instead (the K = 1 case of the same
// equations). Everything comes from the per-level sums and cross counts
// the system keeps.
func (s *system) startTheta() []float64 {
	K := s.nf
	p, p1 := s.p, s.p+1
	th := make([]float64, K)
	for k := range th {
		th[k] = 1
	}
	// Least-squares coefficients of the (weighted, scaled) fixed part:
	// R b = R_y from the triangular factor of [X y].
	b := make([]float64, p)
	for i := p - 1; i >= 0; i-- {
		v := s.rxy[i*p1+p]
		for j := i + 1; j < p; j++ {
			v -= s.rxy[i*p1+j] * b[j]
		}
		b[i] = v / s.rxy[i*p1+i]
	}
	rss := s.rxy[p*p1+p] * s.rxy[p*p1+p]
	n := float64(s.n)
	ssb := make([]float64, K)
	q := make([]float64, K)
	H := make([]float64, K)
	var D float64
	for _, d := range s.d[0] {
		D += d
	}
	for k := 0; k < K; k++ {
		for a, d := range s.d[k] {
			if d == 0 {
				continue
			}
			z := s.zxy[k][a*p1 : (a+1)*p1]
			e := z[p]
			for c := 0; c < p; c++ {
				e -= z[c] * b[c]
			}
			ssb[k] += e * e / d
			H[k] += d * d
			q[k]++
		}
	}
	h := s.crossCounts(D)
	A := mat.NewDense(K+1, K+1, nil)
	rhs := mat.NewVecDense(K+1, nil)
	for k := 0; k < K; k++ {
		for j := 0; j < K; j++ {
			A.Set(k, j, h.At(k, j)-H[j]/D)
		}
		A.Set(k, K, q[k]-1)
		rhs.SetVec(k, ssb[k])
		A.Set(K, k, D-H[k]/D)
	}
	A.Set(K, K, n-float64(p))
	rhs.SetVec(K, rss)
	var sol mat.VecDense
	comp := make([]float64, K)
	sig2 := math.NaN()
	if err := sol.SolveVec(A, rhs); err == nil {
		sig2 = sol.AtVec(K)
		for k := range comp {
			comp[k] = sol.AtVec(k)
		}
	}
	if !(sig2 > 0) || math.IsInf(sig2, 0) {
		// One-way estimates per factor; the residual variance from the
		// smallest within-level mean square.
		sig2 = math.Inf(1)
		for k := 0; k < K; k++ {
			if q[k] < 2 {
				comp[k] = math.NaN()
				continue
			}
			dfb := q[k] - 1
			dfw := math.Max(n-float64(p)-dfb, 1)
			msb, msw := ssb[k]/dfb, math.Max(rss-ssb[k], 0)/dfw
			comp[k] = (msb - msw) / ((D - H[k]/D) / dfb)
			if msw > 0 {
				sig2 = math.Min(sig2, msw)
			}
		}
		if math.IsInf(sig2, 1) {
			sig2 = rss / math.Max(n-float64(p), 1)
		}
	}
	if !(sig2 > 0) {
		return th
	}
	for k, v := range comp {
		t := startMin
		if v > 0 {
			t = math.Sqrt(v / sig2)
		}
		if !(t >= startMin) { // also NaN
			t = startMin
		}
		th[k] = math.Min(t, startMax)
	}
	return th
}

// crossCounts returns h_kj = sum_a sum_b n_ab^2/d_a (a over the levels of
// sorted factor k, b over those of j; h_kk = D), from the structures of
// the elimination: chain factors are nested, so n_ab = d_a for the
// ancestor b of a; chain and rest factors meet in the coupling counts val;
// rest factors in restC.
func (s *system) crossCounts(D float64) *mat.Dense {
	K := s.nf
	h := mat.NewDense(K, K, nil)
	for k := 0; k < K; k++ {
		h.Set(k, k, D)
	}
	// Chain pairs j < j2 (j finer, nested in j2).
	for j := 0; j < s.s; j++ {
		anc := make([]int, s.q[j])
		for a := range anc {
			anc[a] = a
		}
		for j2 := j + 1; j2 < s.s; j2++ {
			for a := range anc {
				anc[a] = s.par[j2-1][anc[a]]
			}
			h.Set(j, j2, D)
			s2 := make([]float64, s.q[j2])
			for a, d := range s.d[j] {
				s2[anc[a]] += d * d
			}
			var v float64
			for bb, sq := range s2 {
				if d := s.d[j2][bb]; d > 0 {
					v += sq / d
				}
			}
			h.Set(j2, j, v)
		}
	}
	if s.m == 0 {
		return h
	}
	off := make([]int, K)
	o := 0
	for k := s.s; k < K; k++ {
		off[k] = o
		o += s.q[k]
	}
	// Chain factor j and rest factors.
	for j := 0; j < s.s; j++ {
		for a, d := range s.d[j] {
			if d == 0 {
				continue
			}
			for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
				c := s.col[j][e]
				r := s.facOf[c]
				v := s.val[j][e]
				h.Set(j, r, h.At(j, r)+v*v/d)
				if dr := s.d[r][c-off[r]]; dr > 0 {
					h.Set(r, j, h.At(r, j)+v*v/dr)
				}
			}
		}
	}
	// Rest factor pairs.
	m := s.m
	for i := 0; i < m; i++ {
		ri := s.facOf[i]
		di := s.d[ri][i-off[ri]]
		if di == 0 {
			continue
		}
		for c := 0; c < m; c++ {
			rc := s.facOf[c]
			if rc == ri {
				continue
			}
			if v := s.restC[i*m+c]; v != 0 {
				h.Set(ri, rc, h.At(ri, rc)+v*v/di)
			}
		}
	}
	return h
}
