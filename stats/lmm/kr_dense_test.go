package lmm

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// krDense fills P_k, Q_kl, ||Zt_kl||^2 and tr(Zt_kk) with dense matrices
// in the random-effects space (several grouping factors). It is the test
// oracle for krBlock: the same pieces by the plainest route.
func (s *system) krDense(theta []float64, s2 float64, Pk []*mat.Dense, Q [][]*mat.Dense, frob *mat.Dense, trZ []float64) error {
	K := s.nf
	p, p1 := s.p, s.p+1
	off := make([]int, K+1)
	for k := 0; k < K; k++ {
		off[k+1] = off[k] + s.q[k]
	}
	qt := off[K]
	if qt > maxDenseKR {
		return fmt.Errorf("%d random-effect levels over several grouping factors exceed the dense limit of %d; use Satterthwaite", qt, maxDenseKR)
	}
	C := mat.NewSymDense(qt, nil)
	ZX := mat.NewDense(qt, p, nil)
	for k := 0; k < K; k++ {
		for a, d := range s.d[k] {
			C.SetSym(off[k]+a, off[k]+a, d)
			for c := 0; c < p; c++ {
				ZX.Set(off[k]+a, c, s.zxy[k][a*p1+c])
			}
		}
	}
	for j := 0; j+1 < s.s; j++ {
		for a, d := range s.d[j] {
			b := a
			for jj := j + 1; jj < s.s; jj++ {
				b = s.par[jj-1][b]
				C.SetSym(off[j]+a, off[jj]+b, d)
			}
		}
	}
	if s.m > 0 {
		ro := off[s.s]
		for i := 0; i < s.m; i++ {
			for j := 0; j < i; j++ {
				if v := s.restC[i*s.m+j]; v != 0 && s.facOf[i] != s.facOf[j] {
					C.SetSym(ro+i, ro+j, v)
				}
			}
		}
		for j := 0; j < s.s; j++ {
			for a := 0; a < s.q[j]; a++ {
				for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
					C.SetSym(off[j]+a, ro+s.col[j][e], s.val[j][e])
				}
			}
		}
	}
	lam := make([]float64, qt)
	for k := 0; k < K; k++ {
		for a := 0; a < s.q[k]; a++ {
			lam[off[k]+a] = theta[k]
		}
	}
	A := mat.NewSymDense(qt, nil)
	for i := 0; i < qt; i++ {
		for j := 0; j <= i; j++ {
			v := lam[i] * lam[j] * C.At(i, j)
			if i == j {
				v++
			}
			A.SetSym(i, j, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(A) {
		return errors.New("random-effects block is not positive definite")
	}
	// B = Lambda [C | ZX]; solve A X = B; then Zt = (C - B' X)/s2, U = (ZX - Lambda C A^{-1} Lambda ZX)/s2.
	B := mat.NewDense(qt, qt+p, nil)
	for i := 0; i < qt; i++ {
		for j := 0; j < qt; j++ {
			B.Set(i, j, lam[i]*C.At(i, j))
		}
		for c := 0; c < p; c++ {
			B.Set(i, qt+c, lam[i]*ZX.At(i, c))
		}
	}
	var Xs mat.Dense
	if err := ch.SolveTo(&Xs, B); err != nil {
		return err
	}
	var G mat.Dense
	G.Mul(B.Slice(0, qt, 0, qt).T(), &Xs) // Lambda C A^{-1} Lambda [C | ZX]
	Zt := mat.NewDense(qt, qt, nil)
	U := mat.NewDense(qt, p, nil)
	for i := 0; i < qt; i++ {
		for j := 0; j < qt; j++ {
			Zt.Set(i, j, (C.At(i, j)-G.At(i, j))/s2)
		}
		for c := 0; c < p; c++ {
			U.Set(i, c, (ZX.At(i, c)-G.At(i, qt+c))/s2)
		}
	}
	for k := 0; k < K; k++ {
		Uk := U.Slice(off[k], off[k+1], 0, p)
		var P mat.Dense
		P.Mul(Uk.T(), Uk)
		Pk[k] = &P
		var tr float64
		for a := off[k]; a < off[k+1]; a++ {
			tr += Zt.At(a, a)
		}
		trZ[k] = tr
		for l := 0; l <= k; l++ {
			Zkl := Zt.Slice(off[k], off[k+1], off[l], off[l+1])
			var fr float64
			for a := 0; a < off[k+1]-off[k]; a++ {
				for b := 0; b < off[l+1]-off[l]; b++ {
					v := Zkl.At(a, b)
					fr += v * v
				}
			}
			frob.Set(k, l, fr)
			frob.Set(l, k, fr)
			Ul := U.Slice(off[l], off[l+1], 0, p)
			var t mat.Dense
			t.Mul(Zkl, Ul)
			var qkl mat.Dense
			qkl.Mul(Uk.T(), &t)
			Q[k][l] = &qkl
		}
	}
	return nil
}
