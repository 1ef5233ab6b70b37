package glm

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize/convex/lp"

	"furrow/stats/lm"
)

// SeparationError reports that the maximum likelihood estimate does not
// exist: the likelihood keeps increasing as some coefficients go to ±∞,
// while the fitted means of some observations go to the boundary (a
// count mean to 0, a probability to 0 or 1). A treatment whose counts are
// all zero, or whose seeds all germinated, is the usual cause.
type SeparationError struct {
	// Coefs names the coefficients that diverge, in column order, and
	// Signs gives the direction of each: -1 towards -∞, +1 towards +∞, 0
	// when the direction was not localised (see Localised).
	Coefs []string
	Signs []int
	// Rows are the observations (0-based) whose fitted means go to the
	// boundary.
	Rows []int
	// Localised is false in the rare case where the diverging direction
	// could not be recovered from the linear programme; Coefs then lists
	// every coefficient not identified by the observations away from the
	// boundary, and Rows those known to be separated.
	Localised bool
}

// Error says which coefficients diverge and which observations are fitted
// at the boundary.
func (e *SeparationError) Error() string {
	var b strings.Builder
	b.WriteString("the maximum likelihood estimate does not exist (separation): ")
	for i, c := range e.Coefs {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(c)
		switch e.Signs[i] {
		case -1:
			b.WriteString(" -> -Inf")
		case 1:
			b.WriteString(" -> +Inf")
		}
	}
	if len(e.Coefs) == 1 {
		b.WriteString(" diverges; ")
	} else {
		b.WriteString(" diverge; ")
	}
	fmt.Fprintf(&b, "%d observation", len(e.Rows))
	if len(e.Rows) != 1 {
		b.WriteString("s")
	}
	b.WriteString(" fitted at the boundary (rows ")
	for i, r := range e.Rows {
		if i == 8 {
			fmt.Fprintf(&b, ", ... %d more", len(e.Rows)-8)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%d", r)
	}
	b.WriteString(")")
	return b.String()
}

// Tolerances of the separation check, for unit-norm columns.
const (
	sepRankTol = 1e-9 // singular values below this times the largest are zero
	sepZeroTol = 1e-9 // entries of M below this (relative to the row) are zero
	sepLPTol   = 1e-9 // linear programme: optimal values below this are zero
)

// checkSeparation decides whether the maximum likelihood estimate exists.
//
// Along a direction d of the coefficients the log-likelihood goes to -∞
// unless x_i'd = 0 for every observation away from the boundary (a
// positive count; a binomial count strictly between 0 and the trials)
// and s_i x_i'd <= 0 for every observation at the boundary, with s_i = +1
// for a zero count and -1 for all successes; when such a d exists with
// some s_i x_i'd < 0, the likelihood increases for ever along it and the
// estimate does not exist (Albert & Anderson 1984, Biometrika 71:1, for
// the binomial; Santos Silva & Tenreyro 2010, Econ Lett 107:310, for
// Poisson counts; the negative binomial is the same case as the Poisson).
//
// The check first compares the rank of X on the interior observations
// with its full rank (stats/lm's pivoted QR): equal ranks prove that the
// estimate exists. Otherwise it takes a basis B of the directions the
// interior does not determine (SVD of the interior rows), and solves the
// linear programme
//
//	max Σ c_i t_i  over d,  t = -M d,  0 <= t_i <= 1,   M_i = s_i x_i'B
//
// over the distinct nonzero rows of M (c_i their multiplicities) through
// its dual, min Σ u subject to M'(w - u) = -Σ c_i M_i, w, u >= 0, which
// has only k = dim B equality constraints (gonum's simplex). A positive
// optimum means separation; the rows with u_i > 0 have t_i = 1 by
// complementary slackness, and d is recovered from the constraints the
// dual solution makes tight. Rounds are repeated with the objective on
// the rows not yet separated until the optimum is 0, so that the union
// of the separated rows is found.
//
// x has the full columns; keep lists the non-aliased ones. It returns nil
// when the estimate exists.
func checkSeparation(x *mat.Dense, keep []int, names []string, p *problem) (*SeparationError, error) {
	n, _ := x.Dims()
	sign := make([]float64, n)
	var interior, boundary []int
	for i := 0; i < n; i++ {
		if p.pw[i] == 0 {
			continue
		}
		y := p.y[i]
		switch {
		case y == 0:
			sign[i] = 1
			boundary = append(boundary, i)
		case p.fam == Binomial && y == p.trials(i):
			sign[i] = -1
			boundary = append(boundary, i)
		default:
			interior = append(interior, i)
		}
	}
	if len(boundary) == 0 {
		return nil, nil
	}
	r := len(keep)
	// Quick proof of existence: the interior rows alone have full rank.
	if len(interior) > r {
		w := make([]float64, n)
		for _, i := range interior {
			w[i] = 1
		}
		fit, err := lm.Fit(x, make([]float64, n), &lm.Options{Weights: w, Tol: p.rankTol})
		if err == nil && fit.Rank == r {
			return nil, nil
		}
	}

	// Column scales over the observations with a positive weight.
	scale := make([]float64, r)
	for i := 0; i < n; i++ {
		if p.pw[i] == 0 {
			continue
		}
		for c, j := range keep {
			v := x.At(i, j)
			scale[c] += v * v
		}
	}
	for c := range scale {
		scale[c] = math.Sqrt(scale[c])
		if scale[c] == 0 {
			scale[c] = 1
		}
	}
	row := func(i int, dst []float64) {
		for c, j := range keep {
			dst[c] = x.At(i, j) / scale[c]
		}
	}

	// Basis of the directions the interior rows leave free.
	var basis *mat.Dense // r x k
	if len(interior) == 0 {
		basis = mat.NewDense(r, r, nil)
		for c := 0; c < r; c++ {
			basis.Set(c, c, 1)
		}
	} else {
		xi := mat.NewDense(len(interior), r, nil)
		for a, i := range interior {
			row(i, xi.RawRowView(a))
		}
		var small mat.Matrix = xi
		if len(interior) >= r {
			var qr mat.QR
			qr.Factorize(xi)
			var rr mat.Dense
			qr.RTo(&rr)
			small = rr.Slice(0, r, 0, r)
		}
		var svd mat.SVD
		if !svd.Factorize(small, mat.SVDFull) {
			return nil, fmt.Errorf("checking for separation: SVD of the interior rows failed")
		}
		sv := svd.Values(nil)
		rank := 0
		for _, s := range sv {
			if s > sepRankTol*sv[0] {
				rank++
			}
		}
		if rank == r {
			return nil, nil
		}
		var v mat.Dense
		svd.VTo(&v)
		basis = mat.DenseCopyOf(v.Slice(0, r, rank, r))
	}
	_, k := basis.Dims()

	// Distinct nonzero signed rows of M = S X B, with multiplicities.
	var rowsM []*mrow
	index := map[string]*mrow{}
	xr := make([]float64, r)
	mv := mat.NewVecDense(k, nil)
	for _, i := range boundary {
		row(i, xr)
		mv.MulVec(basis.T(), mat.NewVecDense(r, xr))
		var big, xmax float64
		m := make([]float64, k)
		for c := range m {
			m[c] = sign[i] * mv.AtVec(c)
			big = math.Max(big, math.Abs(m[c]))
		}
		for _, v := range xr {
			xmax = math.Max(xmax, math.Abs(v))
		}
		if big <= sepZeroTol*xmax {
			continue
		}
		var key strings.Builder
		for _, v := range m {
			fmt.Fprintf(&key, "%x,", math.Float64bits(v))
		}
		if e, ok := index[key.String()]; ok {
			e.mult++
			e.rows = append(e.rows, i)
			continue
		}
		e := &mrow{m: m, mult: 1, rows: []int{i}}
		index[key.String()] = e
		rowsM = append(rowsM, e)
	}
	if len(rowsM) == 0 {
		return nil, nil
	}
	// Keep to the row space of M: a direction that moves no fitted value
	// at all is an aliasing the rank tolerance let through, not a
	// separation. d = W e with W the right singular vectors of M.
	w, err := rowSpace(rowsM, k)
	if err != nil {
		return nil, err
	}
	_, q := w.Dims()
	if q == 0 {
		return nil, nil
	}
	var bw mat.Dense
	bw.Mul(basis, w) // r x q
	basis = &bw
	for _, e := range rowsM {
		e.m = mulRow(e.m, w)
	}
	found, dir, localised, err := separatedRows(rowsM, q)
	if err != nil {
		return nil, err
	}
	var sepRows []int
	for i, e := range rowsM {
		if found[i] {
			sepRows = append(sepRows, e.rows...)
		}
	}
	if len(sepRows) == 0 {
		return nil, nil
	}
	sort.Ints(sepRows)
	se := &SeparationError{Rows: sepRows, Localised: localised}
	// Direction in the original coefficients: delta_c = (B dir)_c / scale_c.
	delta := make([]float64, r)
	support := make([]float64, r)
	var dmax, smax float64
	for c := 0; c < r; c++ {
		for j := 0; j < q; j++ {
			delta[c] += basis.At(c, j) * dir[j]
			support[c] = math.Max(support[c], math.Abs(basis.At(c, j)))
		}
		delta[c] /= scale[c]
		support[c] /= scale[c]
		dmax = math.Max(dmax, math.Abs(delta[c]))
		smax = math.Max(smax, support[c])
	}
	for c, j := range keep {
		switch {
		case localised && math.Abs(delta[c]) > 1e-6*dmax:
			se.Coefs = append(se.Coefs, names[j])
			if delta[c] < 0 {
				se.Signs = append(se.Signs, -1)
			} else {
				se.Signs = append(se.Signs, 1)
			}
		case !localised && support[c] > 1e-6*smax:
			se.Coefs = append(se.Coefs, names[j])
			se.Signs = append(se.Signs, 0)
		}
	}
	return se, nil
}

// mrow is a distinct row of M with its multiplicity and observations.
type mrow struct {
	m    []float64
	mult float64
	rows []int
}

// rowSpace returns W (k x q), an orthonormal basis of the row space of M.
func rowSpace(rows []*mrow, k int) (*mat.Dense, error) {
	m := mat.NewDense(len(rows), k, nil)
	for i, e := range rows {
		m.SetRow(i, e.m)
	}
	var svd mat.SVD
	if !svd.Factorize(m, mat.SVDFullV) {
		return nil, fmt.Errorf("checking for separation: SVD of the boundary rows failed")
	}
	sv := svd.Values(nil)
	q := 0
	for _, s := range sv {
		if s > sepRankTol*sv[0] {
			q++
		}
	}
	var v mat.Dense
	svd.VTo(&v)
	return mat.DenseCopyOf(v.Slice(0, k, 0, q)), nil
}

func mulRow(m []float64, w *mat.Dense) []float64 {
	k, q := w.Dims()
	out := make([]float64, q)
	for j := 0; j < q; j++ {
		for c := 0; c < k; c++ {
			out[j] += m[c] * w.At(c, j)
		}
	}
	return out
}

func dotk(a, b []float64) float64 {
	var s float64
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// separatedRows solves the linear programmes of checkSeparation on the
// distinct rows (M of full column rank q) and returns which rows are
// separated, the sum of the separating directions found, and whether
// they were all recovered.
func separatedRows(rows []*mrow, q int) (found []bool, dir []float64, localised bool, err error) {
	nm := len(rows)
	found = make([]bool, nm)
	dir = make([]float64, q)
	localised = true
	// Dual LP in standard form, variables [w (nm), u (nm)] >= 0:
	// minimise Σ u subject to M'w - M'u = -Σ c_i M_i.
	a := mat.NewDense(q, 2*nm, nil)
	for i, e := range rows {
		for c := 0; c < q; c++ {
			a.Set(c, i, e.m[c])
			a.Set(c, nm+i, -e.m[c])
		}
	}
	cost := make([]float64, 2*nm)
	for i := range rows {
		cost[nm+i] = 1
	}
	for round := 0; round < nm; round++ {
		b := make([]float64, q)
		var weight float64
		for i, e := range rows {
			if found[i] {
				continue
			}
			weight += e.mult
			for c := 0; c < q; c++ {
				b[c] -= e.mult * e.m[c]
			}
		}
		if weight == 0 {
			break
		}
		opt, sol, lerr := lp.Simplex(cost, a, b, 1e-12, nil)
		if lerr != nil {
			return nil, nil, false, fmt.Errorf("checking for separation: %w", lerr)
		}
		if opt <= sepLPTol*weight {
			break
		}
		d, ok := recoverDirection(rows, sol, found, opt)
		added := false
		if ok {
			for i, e := range rows {
				if !found[i] && -dotk(e.m, d) > 1e-7 {
					found[i], added = true, true
				}
			}
			for c := range dir {
				dir[c] += d[c]
			}
		} else {
			localised = false
			for i := range rows {
				if !found[i] && sol[nm+i] > 1e-9 {
					found[i], added = true, true
				}
			}
		}
		if !added || !localised {
			break
		}
	}
	return found, dir, localised, nil
}

// recoverDirection finds the primal solution d of a round from the dual
// solution by complementary slackness: w_i > 0 makes M_i d = 0 and
// u_i > 0 makes M_i d = -1. The least-squares solution of those equations
// is accepted when it is feasible (-1 <= M d <= 0) and attains the
// optimum.
func recoverDirection(rows []*mrow, sol []float64, found []bool, opt float64) ([]float64, bool) {
	nm := len(rows)
	q := len(rows[0].m)
	var eqs [][]float64
	var rhs []float64
	for i, e := range rows {
		if sol[i] > 1e-9 {
			eqs = append(eqs, e.m)
			rhs = append(rhs, 0)
		}
		if sol[nm+i] > 1e-9 {
			eqs = append(eqs, e.m)
			rhs = append(rhs, -1)
		}
	}
	if len(eqs) == 0 {
		return nil, false
	}
	e := mat.NewDense(len(eqs), q, nil)
	for i, r := range eqs {
		e.SetRow(i, r)
	}
	var svd mat.SVD
	if !svd.Factorize(e, mat.SVDThin) {
		return nil, false
	}
	sv := svd.Values(nil)
	rank := 0
	for _, s := range sv {
		if s > sepRankTol*sv[0] {
			rank++
		}
	}
	var d mat.Dense
	svd.SolveTo(&d, mat.NewDense(len(rhs), 1, rhs), rank)
	dir := make([]float64, q)
	for c := range dir {
		dir[c] = d.At(c, 0)
	}
	var obj float64
	for i, r := range rows {
		t := -dotk(r.m, dir)
		if t < -1e-7 || t > 1+1e-7 {
			return nil, false
		}
		if !found[i] {
			obj += r.mult * t
		}
	}
	if obj < opt*(1-1e-6) {
		return nil, false
	}
	return dir, true
}
