package lmm

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// krBlock fills the same Kenward-Roger pieces as krDense (P_k, Q_kl,
// ||Zt_kl||^2, tr(Zt_kk)) without a dense matrix over all random levels.
// The largest factor F (sorted factor 0) has a diagonal block Z_F'WZ_F, so
// V_F = W^{-1} + theta_F^2 Z_F Z_F' is inverted level by level, and the
// other factors R enter by the Woodbury identity (Henderson & Searle 1981,
// SIAM Review 23:53):
//
//	V^{-1} = V_F^{-1} - V_F^{-1} Z_R K Z_R' V_F^{-1},  K = Lambda_R (I + Lambda_R H Lambda_R)^{-1} Lambda_R,
//	H = Z_R' V_F^{-1} Z_R.
//
// With Delta = diag(d_a/(1+theta_F^2 d_a)), B = Z_F'V_F^{-1}Z_R (one sparse
// row per level of F) and N = I - K H, the blocks of Y = Z'V^{-1}Z are
// Y_FF = Delta - B K B', Y_FR = B N, Y_RR = H N; every trace and Frobenius
// norm needed reduces to r x r matrices (r = levels outside F), e.g.
// ||Y_FF||^2 = sum Delta^2 - 2 tr(K B'Delta B) + tr(K B'B K B'B).
func (s *system) krBlock(theta []float64, s2 float64, Pk []*mat.Dense, Q [][]*mat.Dense, frob *mat.Dense, trZ []float64) error {
	K := s.nf
	p, p1 := s.p, s.p+1
	roff := make([]int, K+1) // offsets of factors 1..K-1 in R
	for k := 1; k < K; k++ {
		roff[k+1] = roff[k] + s.q[k]
	}
	r := roff[K]
	if r > maxDenseKR {
		return fmt.Errorf("%d random-effect levels outside the largest grouping factor exceed the dense limit of %d; use Satterthwaite", r, maxDenseKR)
	}
	qF := s.q[0]
	thF2 := theta[0] * theta[0]
	// Sparse rows of C_FR = Z_F'WZ_R: ancestors in the chain, then the rest
	// columns.
	rowPtr := make([]int, qF+1)
	var rowIdx []int
	var rowVal []float64
	for a := 0; a < qF; a++ {
		d := s.d[0][a]
		if d > 0 {
			b := a
			for jj := 1; jj < s.s; jj++ {
				b = s.par[jj-1][b]
				rowIdx = append(rowIdx, roff[jj]+b)
				rowVal = append(rowVal, d)
			}
			if s.m > 0 {
				for e := s.ptr[0][a]; e < s.ptr[0][a+1]; e++ {
					rowIdx = append(rowIdx, roff[s.s]+s.col[0][e])
					rowVal = append(rowVal, s.val[0][e])
				}
			}
		}
		rowPtr[a+1] = len(rowIdx)
	}
	// C_RR among factors 1..K-1 (the same cross counts as krDense).
	H := mat.NewSymDense(r, nil)
	for k := 1; k < K; k++ {
		for a, d := range s.d[k] {
			H.SetSym(roff[k]+a, roff[k]+a, d)
		}
	}
	for j := 1; j+1 < s.s; j++ {
		for a, d := range s.d[j] {
			b := a
			for jj := j + 1; jj < s.s; jj++ {
				b = s.par[jj-1][b]
				H.SetSym(roff[j]+a, roff[jj]+b, d)
			}
		}
	}
	if s.m > 0 {
		ro := roff[s.s]
		for i := 0; i < s.m; i++ {
			for j := 0; j < i; j++ {
				if v := s.restC[i*s.m+j]; v != 0 && s.facOf[i] != s.facOf[j] {
					H.SetSym(ro+i, ro+j, v)
				}
			}
		}
		for j := 1; j < s.s; j++ {
			for a := 0; a < s.q[j]; a++ {
				for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
					H.SetSym(roff[j]+a, ro+s.col[j][e], s.val[j][e])
				}
			}
		}
	}
	// XR = Z_R'W X; UF0 rows = Z_F'V_F^{-1}X.
	XR := mat.NewDense(max(r, 1), p, nil)
	for k := 1; k < K; k++ {
		for a := 0; a < s.q[k]; a++ {
			for c := 0; c < p; c++ {
				XR.Set(roff[k]+a, c, s.zxy[k][a*p1+c])
			}
		}
	}
	Hr, XRr := H.RawSymmetric(), XR.RawMatrix()
	G1 := mat.NewSymDense(r, nil) // B' Delta B
	G2 := mat.NewSymDense(r, nil) // B' B
	g1r, g2r := G1.RawSymmetric(), G2.RawSymmetric()
	var sumDelta, sumDelta2 float64
	UF := mat.NewDense(qF, p, nil)
	for a := 0; a < qF; a++ {
		d := s.d[0][a]
		if d == 0 {
			continue
		}
		den := 1 + thF2*d
		f := thF2 / den
		g := 1 / den
		delta := d * g
		sumDelta += delta
		sumDelta2 += delta * delta
		z := s.zxy[0][a*p1 : a*p1+p]
		for c := 0; c < p; c++ {
			UF.Set(a, c, g*z[c])
		}
		idx, val := rowIdx[rowPtr[a]:rowPtr[a+1]], rowVal[rowPtr[a]:rowPtr[a+1]]
		for x, i := range idx {
			vi := val[x]
			for y, j := range idx {
				if j < i {
					continue
				}
				vv := vi * val[y]
				Hr.Data[i*Hr.Stride+j] -= f * vv
				g2 := g * g * vv
				g2r.Data[i*g2r.Stride+j] += g2
				g1r.Data[i*g1r.Stride+j] += delta * g2
			}
			xr := XRr.Data[i*XRr.Stride : i*XRr.Stride+p]
			for c := 0; c < p; c++ {
				xr[c] -= f * vi * z[c]
			}
		}
	}
	// Blocks stored as upper triangles when i <= j; SetSym above wrote both.
	lam := make([]float64, r)
	for k := 1; k < K; k++ {
		for a := 0; a < s.q[k]; a++ {
			lam[roff[k]+a] = theta[k]
		}
	}
	M := mat.NewSymDense(r, nil)
	for i := 0; i < r; i++ {
		for j := i; j < r; j++ {
			v := lam[i] * lam[j] * H.At(i, j)
			if i == j {
				v++
			}
			M.SetSym(i, j, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(M) {
		return errors.New("random-effects block is not positive definite")
	}
	var Mi mat.SymDense
	if err := ch.InverseTo(&Mi); err != nil {
		return err
	}
	Km := mat.NewDense(r, r, nil)
	for i := 0; i < r; i++ {
		for j := 0; j < r; j++ {
			Km.Set(i, j, lam[i]*Mi.At(i, j)*lam[j])
		}
	}
	// N = I - K H, Y_RR = H N, U_R = N' XR, U_F = UF0 - B K XR.
	// Dense copies: products with them use the blocked general multiply.
	Hd := mat.DenseCopyOf(H)
	G2d := mat.DenseCopyOf(G2)
	var N mat.Dense
	N.Mul(Km, Hd)
	N.Scale(-1, &N)
	for i := 0; i < r; i++ {
		N.Set(i, i, N.At(i, i)+1)
	}
	var YRR mat.Dense
	YRR.Mul(Hd, &N)
	var UR mat.Dense
	UR.Mul(N.T(), XR)
	var KX mat.Dense
	KX.Mul(Km, XR)
	for a := 0; a < qF; a++ {
		if s.d[0][a] == 0 {
			continue
		}
		g := 1 / (1 + thF2*s.d[0][a])
		for x := rowPtr[a]; x < rowPtr[a+1]; x++ {
			bv := g * rowVal[x]
			kx := KX.RawRowView(rowIdx[x])
			for c := 0; c < p; c++ {
				UF.Set(a, c, UF.At(a, c)-bv*kx[c])
			}
		}
	}
	// W = B' U_F (r x p) and U_F' Delta U_F.
	WF := mat.NewDense(max(r, 1), p, nil)
	UDU := mat.NewDense(p, p, nil)
	for a := 0; a < qF; a++ {
		d := s.d[0][a]
		if d == 0 {
			continue
		}
		g := 1 / (1 + thF2*d)
		delta := d * g
		ua := UF.RawRowView(a)
		for i := 0; i < p; i++ {
			for j := 0; j < p; j++ {
				UDU.Set(i, j, UDU.At(i, j)+delta*ua[i]*ua[j])
			}
		}
		for x := rowPtr[a]; x < rowPtr[a+1]; x++ {
			bv := g * rowVal[x]
			w := WF.RawRowView(rowIdx[x])
			for c := 0; c < p; c++ {
				w[c] += bv * ua[c]
			}
		}
	}
	s4 := s2 * s2
	s6 := s4 * s2
	// Factor F.
	{
		// Traces of products from elementwise sums: tr(AB) = sum A_ij B_ji.
		var KG2 mat.Dense
		KG2.Mul(Km, G2d)
		var trKG1, trKG2KG2 float64
		for i := 0; i < r; i++ {
			for j := 0; j < r; j++ {
				trKG1 += Km.At(i, j) * G1.At(j, i)
				trKG2KG2 += KG2.At(i, j) * KG2.At(j, i)
			}
		}
		trZ[0] = (sumDelta - mat.Trace(&KG2)) / s2
		frob.Set(0, 0, (sumDelta2-2*trKG1+trKG2KG2)/s4)
		var P mat.Dense
		P.Mul(UF.T(), UF)
		P.Scale(1/s4, &P)
		Pk[0] = &P
		var kw, q mat.Dense
		kw.Mul(Km, WF)
		q.Mul(WF.T(), &kw)
		q.Sub(UDU, &q)
		q.Scale(1/s6, &q)
		Q[0][0] = &q
	}
	// Diagonal of N' B'B N: column dots of N with B'B N.
	var G2N mat.Dense
	G2N.Mul(G2d, &N)
	ntg2n := make([]float64, r)
	for i := 0; i < r; i++ {
		ni, gi := N.RawRowView(i), G2N.RawRowView(i)
		for a := 0; a < r; a++ {
			ntg2n[a] += ni[a] * gi[a]
		}
	}
	for k := 1; k < K; k++ {
		lo, hi := roff[k], roff[k+1]
		Uk := UR.Slice(lo, hi, 0, p)
		var P mat.Dense
		P.Mul(Uk.T(), Uk)
		P.Scale(1/s4, &P)
		Pk[k] = &P
		var tr float64
		for a := lo; a < hi; a++ {
			tr += YRR.At(a, a)
		}
		trZ[k] = tr / s2
		// (k, F): ||B N_k||^2 = tr(N_k' B'B N_k); Q_kF = (N_k U_k)' W.
		var fr float64
		for a := lo; a < hi; a++ {
			fr += ntg2n[a]
		}
		frob.Set(k, 0, fr/s4)
		frob.Set(0, k, fr/s4)
		var nu, q mat.Dense
		nu.Mul(N.Slice(0, r, lo, hi), Uk)
		q.Mul(nu.T(), WF)
		q.Scale(1/s6, &q)
		Q[k][0] = &q
		for l := 1; l <= k; l++ {
			ll, lh := roff[l], roff[l+1]
			Ykl := YRR.Slice(lo, hi, ll, lh)
			var fr float64
			for a := 0; a < hi-lo; a++ {
				for b := 0; b < lh-ll; b++ {
					v := Ykl.At(a, b)
					fr += v * v
				}
			}
			frob.Set(k, l, fr/s4)
			frob.Set(l, k, fr/s4)
			Ul := UR.Slice(ll, lh, 0, p)
			var t, q mat.Dense
			t.Mul(Ykl, Ul)
			q.Mul(Uk.T(), &t)
			q.Scale(1/s6, &q)
			Q[k][l] = &q
		}
	}
	return nil
}
