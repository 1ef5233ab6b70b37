package lmm

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
)

// krInfo holds the Kenward & Roger (1997, Biometrics 53:983) quantities in
// the variance-component parametrisation (sigma^2_k per random term, then
// the residual variance): P_i = X'S^{-1} S_i S^{-1} X, the inverse expected
// information W, and the adjusted covariance Phi_A.
type krInfo struct {
	phi, phiA *mat.SymDense
	P         []*mat.Dense
	W         *mat.SymDense
}

// maxDenseKR bounds the dense matrices of the Kenward-Roger pieces with
// more than one grouping factor: the levels outside the largest factor
// (krBlock), or all levels (krDense, the test oracle in kr_dense_test.go).
const maxDenseKR = 2500

func (r *Result) krInfo() (*krInfo, error) {
	r.krOnce.Do(func() {
		r.kr, r.krErr = r.sys.kenwardRoger(r.theta, r.Sigma*r.Sigma, r.covS)
		if r.krErr != nil {
			r.krErr = fmt.Errorf("kenward-roger: %w", r.krErr)
		}
	})
	return r.kr, r.krErr
}

// kenwardRoger computes the KR matrices without an N x N matrix. All
// needed traces reduce to the random-effects space: with
// Zt = Z'S^{-1}Z, U = Z'S^{-1}X and Phi = (X'S^{-1}X)^{-1},
//
//	tr(P S_k P S_l) = ||Zt_kl||^2 - 2 tr(Phi Q_lk) + tr(Phi P_k Phi P_l),
//	Q_kl = U_k' Zt_kl U_l,  P_k = U_k' U_k,
//
// where P is the REML projection. The residual derivative S_e = W^{-1}
// equals S/s_e - sum_k tau_k Z_k Z_k' (tau_k = theta_k^2), and P S P = P,
// so its terms follow from the random-term ones.
func (s *system) kenwardRoger(theta []float64, s2 float64, phi *mat.SymDense) (*krInfo, error) {
	return s.kenwardRogerWith(theta, s2, phi, (*system).krBlock)
}

// krPiecesFunc fills P_k, Q_kl, ||Zt_kl||^2 and tr(Zt_kk) for several
// grouping factors.
type krPiecesFunc func(s *system, theta []float64, s2 float64, Pk []*mat.Dense, Q [][]*mat.Dense, frob *mat.Dense, trZ []float64) error

// kenwardRogerWith is kenwardRoger with the route to the pieces for
// several grouping factors given (krBlock in production; the tests pass
// the dense oracle to check it).
func (s *system) kenwardRogerWith(theta []float64, s2 float64, phi *mat.SymDense, pieces krPiecesFunc) (*krInfo, error) {
	K := s.nf
	p := s.p
	p1 := p + 1
	nc := K + 1
	Pk := make([]*mat.Dense, nc)
	Q := make([][]*mat.Dense, nc)
	for i := range Q {
		Q[i] = make([]*mat.Dense, nc)
	}
	frob := mat.NewDense(K, K, nil) // ||Zt_kl||_F^2
	trZ := make([]float64, K)
	tau := make([]float64, K)
	for k := range tau {
		tau[k] = theta[k] * theta[k]
	}
	if K == 1 {
		// Diagonal random block: per-level scalars.
		t := tau[0]
		P := mat.NewDense(p, p, nil)
		Qm := mat.NewDense(p, p, nil)
		var fr, tr float64
		add := func(d, cnt float64, S func(i, j int) float64) {
			den := 1 + t*d
			z := d / (s2 * den)
			fr += cnt * z * z
			tr += cnt * z
			fp := 1 / (s2 * s2 * den * den)
			fq := d / (s2 * s2 * s2 * den * den * den)
			for i := 0; i < p; i++ {
				for j := 0; j <= i; j++ {
					v := S(i, j)
					P.Set(i, j, P.At(i, j)+fp*v)
					Qm.Set(i, j, Qm.At(i, j)+fq*v)
				}
			}
		}
		if s.buckets != nil {
			for _, b := range s.buckets {
				// The bucket sums hold whole counts; z^2 and z terms are per level.
				bs := b.s
				add(b.d, b.count, func(i, j int) float64 { return bs[i*p1+j] })
			}
		} else {
			for a, d := range s.d[0] {
				if d == 0 {
					continue
				}
				z := s.zxy[0][a*p1 : (a+1)*p1]
				add(d, 1, func(i, j int) float64 { return z[i] * z[j] })
			}
		}
		for i := 0; i < p; i++ {
			for j := 0; j < i; j++ {
				P.Set(j, i, P.At(i, j))
				Qm.Set(j, i, Qm.At(i, j))
			}
		}
		Pk[0] = P
		Q[0][0] = Qm
		frob.Set(0, 0, fr)
		trZ[0] = tr
	} else {
		if err := pieces(s, theta, s2, Pk, Q, frob, trZ); err != nil {
			return nil, err
		}
	}
	// Phi P_k products and the trace matrix T.
	var phiD mat.Dense
	phiD.CloneFrom(phi)
	trP := make([]float64, nc)
	T := mat.NewSymDense(nc, nil)
	trPhi := func(A mat.Matrix) float64 {
		var m mat.Dense
		m.Mul(&phiD, A)
		return mat.Trace(&m)
	}
	trPhiAPhiB := func(A, B mat.Matrix) float64 {
		var a, b mat.Dense
		a.Mul(&phiD, A)
		b.Mul(&phiD, B)
		var c mat.Dense
		c.Mul(&a, &b)
		return mat.Trace(&c)
	}
	for k := 0; k < K; k++ {
		trP[k] = trZ[k] - trPhi(Pk[k])
		for l := 0; l <= k; l++ {
			v := frob.At(k, l) - 2*trPhi(Q[k][l]) + trPhiAPhiB(Pk[k], Pk[l])
			T.SetSym(k, l, v)
		}
	}
	for k := 0; k < K; k++ {
		for l := 0; l < K; l++ {
			if Q[k][l] == nil {
				var t mat.Dense
				t.CloneFrom(Q[l][k].T())
				Q[k][l] = &t
			}
		}
	}
	e := K
	// Residual component.
	var xt mat.Dense
	{
		var inv mat.SymDense
		var ch mat.Cholesky
		if !ch.Factorize(phi) {
			return nil, errors.New("fixed-effect covariance is not positive definite")
		}
		if err := ch.InverseTo(&inv); err != nil {
			return nil, err
		}
		xt.CloneFrom(&inv)
	}
	Pe := mat.NewDense(p, p, nil)
	Pe.Scale(1/s2, &xt)
	for k := 0; k < K; k++ {
		var t mat.Dense
		t.Scale(tau[k], Pk[k])
		Pe.Sub(Pe, &t)
	}
	Pk[e] = Pe
	for j := 0; j < K; j++ {
		qe := mat.NewDense(p, p, nil)
		qe.Scale(1/s2, Pk[j])
		for k := 0; k < K; k++ {
			var t mat.Dense
			t.Scale(tau[k], Q[k][j])
			qe.Sub(qe, &t)
		}
		Q[e][j] = qe
		var tq mat.Dense
		tq.CloneFrom(qe.T())
		Q[j][e] = &tq
	}
	qee := mat.NewDense(p, p, nil)
	qee.Scale(1/s2, Pe)
	for k := 0; k < K; k++ {
		var t mat.Dense
		t.Scale(tau[k], Q[k][e])
		qee.Sub(qee, &t)
	}
	Q[e][e] = qee
	for k := 0; k < K; k++ {
		v := trP[k] / s2
		for l := 0; l < K; l++ {
			v -= tau[l] * T.At(k, l)
		}
		T.SetSym(k, e, v)
	}
	trP[e] = float64(s.n-p) / s2
	for k := 0; k < K; k++ {
		trP[e] -= tau[k] * trP[k]
	}
	vee := trP[e] / s2
	for k := 0; k < K; k++ {
		vee -= tau[k] * T.At(k, e)
	}
	T.SetSym(e, e, vee)
	// W = (I_E)^{-1}, I_E = T/2.
	W, err := pinvSym(T)
	if err != nil {
		return nil, err
	}
	W.ScaleSym(2, W)
	// Phi_A = Phi + 2 Phi [sum_ij W_ij (Q_ij - P_i Phi P_j)] Phi.
	S := mat.NewDense(p, p, nil)
	for i := 0; i < nc; i++ {
		for j := 0; j < nc; j++ {
			w := W.At(i, j)
			if w == 0 {
				continue
			}
			var t, u mat.Dense
			t.Mul(Pk[i], &phiD)
			u.Mul(&t, Pk[j])
			u.Sub(Q[i][j], &u)
			u.Scale(w, &u)
			S.Add(S, &u)
		}
	}
	var adj mat.Dense
	adj.Mul(&phiD, S)
	adj.Mul(&adj, &phiD)
	phiA := mat.NewSymDense(p, nil)
	for i := 0; i < p; i++ {
		for j := 0; j <= i; j++ {
			phiA.SetSym(i, j, phi.At(i, j)+(adj.At(i, j)+adj.At(j, i)))
		}
	}
	return &krInfo{phi: phi, phiA: phiA, P: Pk, W: W}, nil
}

// test is the Kenward-Roger F test of L b = 0 (Kenward & Roger 1997, sec. 4).
func (kr *krInfo) test(L mat.Matrix, beta []float64) (TermTest, error) {
	l, p := L.Dims()
	var M mat.Dense
	M.Product(L, kr.phi, L.T())
	Ms := symPart(&M)
	Minv, err := pinvSym(Ms)
	if err != nil {
		return TermTest{}, err
	}
	var es mat.EigenSym
	es.Factorize(Ms, false)
	rank := 0
	vals := es.Values(nil)
	mx := 0.0
	for _, v := range vals {
		mx = math.Max(mx, v)
	}
	for _, v := range vals {
		if v > 1e-9*mx {
			rank++
		}
	}
	if rank == 0 {
		return TermTest{}, errors.New("hypothesis has rank zero")
	}
	ell := float64(rank)
	var Theta mat.Dense
	Theta.Product(L.T(), Minv, L)
	nc := len(kr.P)
	var phiD mat.Dense
	phiD.CloneFrom(kr.phi)
	TPP := make([]*mat.Dense, nc) // Theta Phi P_i Phi
	tr := make([]float64, nc)
	for i := 0; i < nc; i++ {
		var t mat.Dense
		t.Product(&Theta, &phiD, kr.P[i], &phiD)
		TPP[i] = &t
		tr[i] = mat.Trace(&t)
	}
	var A1, A2 float64
	for i := 0; i < nc; i++ {
		for j := 0; j < nc; j++ {
			w := kr.W.At(i, j)
			A1 += w * tr[i] * tr[j]
			var t mat.Dense
			t.Mul(TPP[i], TPP[j])
			A2 += w * mat.Trace(&t)
		}
	}
	B := (A1 + 6*A2) / (2 * ell)
	g := ((ell+1)*A1 - (ell+4)*A2) / ((ell + 2) * A2)
	den := 3*ell + 2*(1-g)
	c1, c2, c3 := g/den, (ell-g)/den, (ell+2-g)/den
	Estar := 1 / (1 - A2/ell)
	Vstar := (2 / ell) * (1 + c1*B) / ((1 - c2*B) * (1 - c2*B) * (1 - c3*B))
	rho := Vstar / (2 * Estar * Estar)
	m := 4 + (ell+2)/(ell*rho-1)
	lam := m / (Estar * (m - 2))
	// Wald statistic with the adjusted covariance.
	var MA mat.Dense
	MA.Product(L, kr.phiA, L.T())
	MAs := mat.NewSymDense(l, nil)
	for i := 0; i < l; i++ {
		for j := 0; j <= i; j++ {
			MAs.SetSym(i, j, (MA.At(i, j)+MA.At(j, i))/2)
		}
	}
	MAinv, err := pinvSym(MAs)
	if err != nil {
		return TermTest{}, err
	}
	var lb mat.VecDense
	lb.MulVec(L, mat.NewVecDense(p, beta))
	F := mat.Inner(&lb, MAinv, &lb) / ell
	Fs := lam * F
	return TermTest{NumDF: rank, DenDF: m, F: Fs, P: dist.FUpper(Fs, ell, m)}, nil
}
