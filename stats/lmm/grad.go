package lmm

import (
	"errors"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Analytic gradient of the profiled criterion.
//
// In the scaled model Cov(y) = sigma^2 V, V = W^{-1} + Z Lambda Lambda' Z',
// with P = V^{-1} - V^{-1} X (X'V^{-1}X)^{-1} X'V^{-1}, the derivatives with
// respect to tau_k = theta_k^2 are (Harville 1977, JASA 72:320, sec. 4)
//
//	d/dtau_k [log|V| + log|X'V^{-1}X|] = tr(Z_k' P Z_k),
//	d/dtau_k log|V|                     = tr(Z_k' V^{-1} Z_k),
//	d/dtau_k  y'Py                      = -||Z_k' P y||^2,
//
// and y'Py is the penalised residual sum of squares r^2 of the
// penalised least-squares form (Bates et al. 2015, J Stat Softw 67(1),
// eq. 14-18). Both pieces follow from the factor of the scaled mixed-model
// matrix C = [Lambda'Z'WZ Lambda + I, Lambda'Z'WX; X'WZ Lambda, X'WX]:
// Lambda'Z'PZ Lambda = I - (C^{-1})_uu (Henderson 1975, Biometrics 31:423),
// and Z_k'Py = u_k / theta_k for the spherical random effects u. Only the
// diagonal blocks of C^{-1} on the pattern of the factor are needed; they
// come from the recurrences of Takahashi, Fagan & Chin (1973, Proc. 8th PICA
// Conf.; in the form of Erisman & Tinney 1975, Commun ACM 18:177), which
// run backwards through the elimination without any fill-in beyond it.

// parts are the per-factor pieces of the gradient at one theta (sorted
// factor order).
type parts struct {
	e    evalOut
	beta []float64
	tz   []float64       // theta_k^2 tr(Z_k' P Z_k)
	tzv  []float64       // theta_k^2 tr(Z_k' V^{-1} Z_k)
	uu   []float64       // ||u_k||^2
	sux  []*mat.SymDense // sum over levels a of Sigma_{aX} Sigma_{aX}' (when asked)
}

// selWork holds the selected inverse of the scaled mixed-model matrix on
// the pattern of its factor.
type selWork struct {
	st   []float64   // (m+p) x (m+p) inverse of the tail block (rest levels, X)
	diag [][]float64 // per chain factor: Sigma_aa
	anc  [][]float64 // Sigma between a level and its ancestors
	sv   [][]float64 // Sigma between a level and its rest columns (CSR as val)
	sx   [][]float64 // Sigma between a level and the X columns, q_j x p
	la   []float64   // scratch: column of L over S(a)
	ls   []float64
	lx   []float64
	va   []float64
	vs   []float64
	vx   []float64
	bs   []int
	pos  []int     // na x nnz positions of a level's entries in its ancestors' rows
	lb   []float64 // dense-row factors: the columns of L as rows, q_j x (m+p)
	vb   []float64 // and their products with the tail inverse
	// needML asks for the ML trace pieces tzv (the REML search skips them).
	needML bool
}

func (s *system) newSel() *selWork {
	p := s.p
	tt := s.m + p
	sw := &selWork{st: make([]float64, tt*tt), needML: true}
	if s.buckets != nil {
		return sw
	}
	sw.diag = make([][]float64, s.s)
	sw.anc = make([][]float64, s.s)
	sw.sv = make([][]float64, s.s)
	sw.sx = make([][]float64, s.s)
	maxnnz := 0
	for j := 0; j < s.s; j++ {
		sw.diag[j] = make([]float64, s.q[j])
		sw.anc[j] = make([]float64, s.q[j]*(s.s-1-j))
		if s.m > 0 {
			sw.sv[j] = make([]float64, len(s.val[j]))
			for a := 0; a < s.q[j]; a++ {
				maxnnz = max(maxnnz, s.ptr[j][a+1]-s.ptr[j][a])
			}
		}
		sw.sx[j] = make([]float64, s.q[j]*p)
	}
	sw.la = make([]float64, s.s)
	sw.va = make([]float64, s.s)
	sw.bs = make([]int, s.s)
	sw.ls = make([]float64, maxnnz)
	sw.vs = make([]float64, maxnnz)
	sw.pos = make([]int, s.s*max(maxnnz, 1))
	sw.lx = make([]float64, p)
	sw.vx = make([]float64, p)
	return sw
}

// gradParts factors at theta (into w) and returns the gradient pieces.
// wantJ asks for the sums Sigma_{aX} Sigma_{aX}' per factor, which give the
// derivatives of Cov(beta).
func (s *system) gradParts(theta []float64, w *work, sw *selWork, wantJ bool) (*parts, error) {
	if s.m > 0 && len(w.pre) != (s.m+s.p)*s.m {
		w.pre = make([]float64, (s.m+s.p)*s.m)
	}
	e, err := s.eval(theta, w)
	if err != nil {
		return nil, err
	}
	p, m := s.p, s.m
	p1 := p + 1
	t := m + p1
	tt := m + p
	pr := &parts{e: e, beta: betaFrom(e, p), tz: make([]float64, s.nf), tzv: make([]float64, s.nf), uu: make([]float64, s.nf)}
	if wantJ {
		pr.sux = make([]*mat.SymDense, s.nf)
		for k := range pr.sux {
			pr.sux[k] = mat.NewSymDense(p, nil)
		}
	}
	// Inverse of the tail block from its Cholesky factor.
	st := sw.st
	for i := 0; i < tt; i++ {
		copy(st[i*tt:i*tt+i+1], w.T[i*t:i*t+i+1])
		for j := i + 1; j < tt; j++ {
			st[i*tt+j] = 0
		}
	}
	if _, ok := lapack64.Potri(blas64.Triangular{Uplo: blas.Lower, Diag: blas.NonUnit, N: tt, Stride: tt, Data: st}); !ok {
		return nil, errors.New("tail block of the mixed-model matrix is singular")
	}
	for i := 0; i < tt; i++ {
		for j := 0; j < i; j++ {
			st[j*tt+i] = st[i*tt+j]
		}
	}
	// lxxT(v) = ||Lxx' v||^2, the ML correction per level.
	lxx := e.lxx
	lxxNorm := func(v []float64) float64 {
		var ss float64
		for c := 0; c < p; c++ {
			var sum float64
			for r := c; r < p; r++ {
				sum += lxx[r*p+c] * v[r]
			}
			ss += sum * sum
		}
		return ss
	}
	if s.buckets != nil {
		s.bucketParts(theta[0], pr, st, wantJ)
		return pr, nil
	}
	u, err := s.backsolve(theta, pr.beta, w)
	if err != nil {
		return nil, err
	}
	for k := range u {
		var ss float64
		for _, v := range u[k] {
			ss += v * v
		}
		pr.uu[k] = ss
	}
	// Rest levels: read off the tail inverse. With the tail block S and
	// its inverse Sigma, Sigma S = I gives 1 - Sigma_ii =
	// sum_j Sigma_ij (S - I)_ji + sum_c Sigma_{i,c} S_{c,i} (c over X),
	// whose terms are all of order theta^2: no cancellation for small
	// theta (eval keeps S - I of the rest block in w.pre).
	vx := sw.vx
	pre := w.pre
	for i := 0; i < m; i++ {
		k := s.facOf[i]
		var g float64
		row := st[i*tt : (i+1)*tt]
		for j := 0; j < m; j++ {
			var e float64
			if j >= i {
				e = pre[j*m+i]
			} else {
				e = pre[i*m+j]
			}
			g += row[j] * e
		}
		for c := 0; c < p; c++ {
			g += row[m+c] * pre[(m+c)*m+i]
		}
		pr.tz[k] += g
		for c := 0; c < p; c++ {
			vx[c] = st[i*tt+m+c]
		}
		if sw.needML {
			pr.tzv[k] += g + lxxNorm(vx)
		}
		if wantJ {
			addOuter(pr.sux[k], vx)
		}
	}
	// Chain levels, coarsest factor first, by the Takahashi recurrences:
	// Sigma_{S,a} = -Sigma_SS L_{S,a}, Sigma_aa = 1/D_a - L_{S,a}' Sigma_{S,a}.
	for j := s.s - 1; j >= 0; j-- {
		na := s.s - 1 - j
		D, anc, dv := w.D[j], w.anc[j], w.dv[j]
		if na == 0 && m > 0 && s.denseRows[j] {
			s.denseSel(j, w, sw, pr, wantJ, lxxNorm)
			continue
		}
		for a := 0; a < s.q[j]; a++ {
			if s.d[j][a] == 0 {
				sw.diag[j][a] = 1
				for i := 0; i < na; i++ {
					sw.anc[j][a*na+i] = 0
				}
				for c := 0; c < p; c++ {
					sw.sx[j][a*p+c] = 0
				}
				if m > 0 {
					for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
						sw.sv[j][e] = 0
					}
				}
				continue
			}
			piv := 1 + D[a]
			la, va, bs := sw.la[:na], sw.va[:na], sw.bs[:na]
			b := a
			for i := 0; i < na; i++ {
				b = s.par[j+i][b]
				bs[i] = b
				la[i] = anc[a*na+i] / piv
			}
			var lo, hi int
			if m > 0 {
				lo, hi = s.ptr[j][a], s.ptr[j][a+1]
			}
			nnz := hi - lo
			ls, vs := sw.ls[:nnz], sw.vs[:nnz]
			for e := lo; e < hi; e++ {
				ls[e-lo] = w.sv[j][e] / piv
				pe := e
				for i := 0; i < na; i++ {
					pe = s.up[j+i][pe]
					sw.pos[i*nnz+e-lo] = pe
				}
			}
			lx := sw.lx
			for c := 0; c < p; c++ {
				lx[c] = dv[a*p1+c] / piv
			}
			// va: ancestors.
			for i := 0; i < na; i++ {
				ji := j + 1 + i
				nbi := s.s - 1 - ji
				bi := bs[i]
				v := sw.diag[ji][bi] * la[i]
				for i2 := 0; i2 < i; i2++ {
					ji2 := j + 1 + i2
					nb2 := s.s - 1 - ji2
					v += sw.anc[ji2][bs[i2]*nb2+(i-i2-1)] * la[i2]
				}
				for i2 := i + 1; i2 < na; i2++ {
					v += sw.anc[ji][bi*nbi+(i2-i-1)] * la[i2]
				}
				if nnz > 0 {
					svi := sw.sv[ji]
					pos := sw.pos[i*nnz : (i+1)*nnz]
					for x := range ls {
						v += svi[pos[x]] * ls[x]
					}
				}
				sxi := sw.sx[ji][bi*p : (bi+1)*p]
				for c := 0; c < p; c++ {
					v += sxi[c] * lx[c]
				}
				va[i] = v
			}
			// vs: rest columns.
			var cols []int
			if nnz > 0 {
				cols = s.col[j][lo:hi]
			}
			for x := 0; x < nnz; x++ {
				ce := cols[x]
				var v float64
				for i := 0; i < na; i++ {
					v += sw.sv[j+1+i][sw.pos[i*nnz+x]] * la[i]
				}
				row := st[ce*tt : (ce+1)*tt]
				for x2, c2 := range cols {
					v += row[c2] * ls[x2]
				}
				for c := 0; c < p; c++ {
					v += row[m+c] * lx[c]
				}
				vs[x] = v
			}
			// vx: X columns.
			for c := 0; c < p; c++ {
				var v float64
				for i := 0; i < na; i++ {
					v += sw.sx[j+1+i][bs[i]*p+c] * la[i]
				}
				row := st[(m+c)*tt : (m+c+1)*tt]
				for x2, c2 := range cols {
					v += row[c2] * ls[x2]
				}
				for c2 := 0; c2 < p; c2++ {
					v += row[m+c2] * lx[c2]
				}
				vx[c] = v
			}
			var lv float64
			for i := range la {
				lv += la[i] * va[i]
			}
			for x := range ls {
				lv += ls[x] * vs[x]
			}
			for c := 0; c < p; c++ {
				lv += lx[c] * vx[c]
			}
			sw.diag[j][a] = 1/piv + lv
			g := D[a]/piv - lv // 1 - Sigma_aa without cancellation
			pr.tz[j] += g
			for i := range va {
				sw.anc[j][a*na+i] = -va[i]
			}
			for x := range vs {
				sw.sv[j][lo+x] = -vs[x]
			}
			for c := 0; c < p; c++ {
				sw.sx[j][a*p+c] = -vx[c]
			}
			if sw.needML {
				pr.tzv[j] += g + lxxNorm(vx)
			}
			if wantJ {
				addOuter(pr.sux[j], vx)
			}
		}
	}
	return pr, nil
}

// denseSel is the selected inversion of a chain factor without ancestors
// whose rows are mostly full: the products of its L columns with the tail
// inverse are one matrix product.
func (s *system) denseSel(j int, w *work, sw *selWork, pr *parts, wantJ bool, lxxNorm func([]float64) float64) {
	p, m := s.p, s.m
	p1 := p + 1
	tt := m + p
	q := s.q[j]
	if len(sw.lb) < q*tt {
		sw.lb = make([]float64, q*tt)
		sw.vb = make([]float64, q*tt)
	}
	lb, vb := sw.lb[:q*tt], sw.vb[:q*tt]
	for i := range lb {
		lb[i] = 0
	}
	D, dv := w.D[j], w.dv[j]
	for a := 0; a < q; a++ {
		if s.d[j][a] == 0 {
			continue
		}
		piv := 1 + D[a]
		row := lb[a*tt : (a+1)*tt]
		for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
			row[s.col[j][e]] = w.sv[j][e] / piv
		}
		for c := 0; c < p; c++ {
			row[m+c] = dv[a*p1+c] / piv
		}
	}
	blas64.Gemm(blas.NoTrans, blas.NoTrans, 1,
		blas64.General{Rows: q, Cols: tt, Stride: tt, Data: lb},
		blas64.General{Rows: tt, Cols: tt, Stride: tt, Data: sw.st},
		0, blas64.General{Rows: q, Cols: tt, Stride: tt, Data: vb})
	for a := 0; a < q; a++ {
		if s.d[j][a] == 0 {
			sw.diag[j][a] = 1
			for c := 0; c < p; c++ {
				sw.sx[j][a*p+c] = 0
			}
			for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
				sw.sv[j][e] = 0
			}
			continue
		}
		piv := 1 + D[a]
		lr, vr := lb[a*tt:(a+1)*tt], vb[a*tt:(a+1)*tt]
		var lv float64
		for i, v := range lr {
			lv += v * vr[i]
		}
		sw.diag[j][a] = 1/piv + lv
		g := D[a]/piv - lv
		pr.tz[j] += g
		for e := s.ptr[j][a]; e < s.ptr[j][a+1]; e++ {
			sw.sv[j][e] = -vr[s.col[j][e]]
		}
		vx := vr[m : m+p]
		for c := 0; c < p; c++ {
			sw.sx[j][a*p+c] = -vx[c]
		}
		if sw.needML {
			pr.tzv[j] += g + lxxNorm(vx)
		}
		if wantJ {
			addOuter(pr.sux[j], vx)
		}
	}
}

// bucketParts fills the pieces for a single grouping factor whose levels
// are merged by weighted count: with D = 1 + theta^2 d and the per-level
// column L_Xa = theta z_a / D, every sum over the levels of a bucket is a
// trace against the bucket's sum of z_a z_a'.
func (s *system) bucketParts(th float64, pr *parts, sxx []float64, wantJ bool) {
	p := s.p
	p1 := p + 1
	th2 := th * th
	wv := make([]float64, p1)
	for c := 0; c < p; c++ {
		wv[c] = -pr.beta[c]
	}
	wv[p] = 1
	var M *mat.SymDense
	if wantJ {
		M = mat.NewSymDense(p, nil)
	}
	for _, b := range s.buckets {
		D := 1 + th2*b.d
		f := th2 / (D * D)
		// tr(Sigma_XX S_xx) and w'S w from the lower triangle of S.
		var tr, q float64
		for i := 0; i < p1; i++ {
			for j := 0; j <= i; j++ {
				v := b.s[i*p1+j]
				mult := 2.0
				if i == j {
					mult = 1
				}
				q += mult * wv[i] * wv[j] * v
				if i < p {
					tr += mult * sxx[i*p+j] * v
				}
			}
		}
		pr.tz[0] += b.count*th2*b.d/D - f*tr
		pr.tzv[0] += b.count * th2 * b.d / D
		pr.uu[0] += f * q
		if wantJ {
			for i := 0; i < p; i++ {
				for j := 0; j <= i; j++ {
					M.SetSym(i, j, M.At(i, j)+f*b.s[i*p1+j])
				}
			}
		}
	}
	if wantJ {
		// Sum of Sigma_XX M Sigma_XX.
		S := mat.NewSymDense(p, sxx)
		var t mat.Dense
		t.Product(S, M, S)
		for i := 0; i < p; i++ {
			for j := 0; j <= i; j++ {
				pr.sux[0].SetSym(i, j, (t.At(i, j)+t.At(j, i))/2)
			}
		}
	}
}

func addOuter(m *mat.SymDense, v []float64) {
	raw := m.RawSymmetric()
	n := raw.N
	for i := 0; i < n; i++ {
		vi := v[i]
		row := raw.Data[i*raw.Stride:]
		for j := i; j < n; j++ {
			row[j] += vi * v[j]
		}
	}
}

// profGrad returns the gradient of the profiled criterion in theta from
// the pieces. sigma2 > 0 gives instead the gradient of the unprofiled
// criterion at that fixed residual variance.
func (s *system) profGrad(theta []float64, pr *parts, crit Criterion, sigma2 float64, g []float64) {
	nn := float64(s.n)
	if crit == REML {
		nn -= float64(s.p)
	}
	scale := nn / pr.e.r2
	if sigma2 > 0 {
		scale = 1 / sigma2
	}
	for k := range g {
		if theta[k] == 0 {
			g[k] = 0
			continue
		}
		tr := pr.tz[k]
		if crit == ML {
			tr = pr.tzv[k]
		}
		g[k] = 2 / theta[k] * (tr - scale*pr.uu[k])
	}
}
