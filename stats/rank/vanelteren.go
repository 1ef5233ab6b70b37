package rank

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/dist"
)

// Stratum holds the observations of one stratum (site, block) for the
// stratified rank tests: Groups[j] are the values of treatment j.
type Stratum struct {
	Groups [][]float64
}

// VanElterenResult is the outcome of van Elteren's two-sample stratified
// test.
type VanElterenResult struct {
	// T is Σ_s W_s/(N_s+1), W_s the rank sum of the first treatment in
	// stratum s; E and Var are its null mean and variance.
	T, E, Var float64
	// Z = (T - E)/√Var, without continuity correction.
	Z float64
	// P is the normal p-value for the requested alternative.
	P float64
	// N is the number of observations in the strata used; Strata the
	// number of strata that contributed (strata where a treatment is
	// missing or all values tie carry no information and are skipped).
	N, Strata int
	// Alternative is the alternative hypothesis tested.
	Alternative Alternative
}

// VanElteren tests a shift between two treatments observed within strata
// (van Elteren 1960, Bull Int Stat Inst 37:351). In each stratum s the
// values are mid-ranked and the rank sum W_s of treatment 0 (Groups[0]) is
// weighted by 1/(N_s+1), the locally most powerful weights:
//
//	T   = Σ W_s/(N_s+1)
//	E   = Σ m_s/2
//	Var = Σ m_s n_s [(N_s+1) - Σ(t³-t)/(N_s(N_s-1))] / (12 (N_s+1)²)
//
// and Z = (T - E)/√Var is referred to the standard normal. Greater means
// treatment 0 tends to be larger. Every stratum must have exactly two
// groups. Only o.Alternative is used from o.
func VanElteren(strata []Stratum, o Options) (VanElterenResult, error) {
	res := VanElterenResult{Alternative: o.Alternative}
	if len(strata) == 0 {
		return res, fmt.Errorf("van elteren: %w: no strata", ErrTooFew)
	}
	for s, st := range strata {
		if len(st.Groups) != 2 {
			return res, fmt.Errorf("van elteren: stratum %d has %d treatments, need 2", s+1, len(st.Groups))
		}
		x, y := st.Groups[0], st.Groups[1]
		if err := checkFinite(x); err != nil {
			return res, fmt.Errorf("van elteren: stratum %d: %w", s+1, err)
		}
		if err := checkFinite(y); err != nil {
			return res, fmt.Errorf("van elteren: stratum %d: %w", s+1, err)
		}
		m, n := len(x), len(y)
		if m == 0 || n == 0 {
			continue
		}
		all := append(append(make([]float64, 0, m+n), x...), y...)
		r, ties := midranks(all)
		nt := float64(m + n)
		v := float64(m) * float64(n) / 12 * ((nt + 1) - ties/(nt*(nt-1)))
		if v <= 0 {
			continue
		}
		var w float64
		for i := 0; i < m; i++ {
			w += r[i]
		}
		res.T += w / (nt + 1)
		res.E += float64(m) / 2
		res.Var += v / ((nt + 1) * (nt + 1))
		res.N += m + n
		res.Strata++
	}
	if res.Strata == 0 || !(res.Var > 0) {
		return res, fmt.Errorf("van elteren: %w: no stratum has both treatments with untied values", ErrTooFew)
	}
	res.Z = (res.T - res.E) / math.Sqrt(res.Var)
	res.P = normalP(res.Z, o.Alternative)
	return res, nil
}

// VanElterenKResult is the outcome of the k-treatment stratified test.
type VanElterenKResult struct {
	// Q is the quadratic-form statistic, DF = k - 1, P its χ² p-value.
	Q, DF, P float64
	// N is the number of observations in the strata used; Strata the
	// number that contributed.
	N, Strata int
}

// VanElterenK extends VanElteren to k >= 2 treatments within strata: the
// mean-score statistic of Landis, Heyman & Koch (1978, Int Stat Rev
// 46:237) with van Elteren's (1960) weights 1/(N_s+1) on the within-stratum
// mid-ranks. With R_s the vector of treatment rank sums in stratum s,
//
//	D   = Σ_s (R_s - n_s (N_s+1)/2) / (N_s+1)
//	V   = Σ_s σ²_s N_s/(N_s-1) (diag(n_s) - n_s n_sᵀ/N_s) / (N_s+1)²
//	Q   = D'ᵀ V'⁻¹ D'
//
// where σ²_s is the variance (divisor N_s) of the mid-ranks in stratum s
// and the primes drop the last treatment (the full V is singular). Q is
// referred to χ²(k-1); for k = 2 it equals VanElteren's Z². All strata
// must list the same k treatments (a treatment may be empty in a stratum).
func VanElterenK(strata []Stratum) (VanElterenKResult, error) {
	var res VanElterenKResult
	if len(strata) == 0 {
		return res, fmt.Errorf("van elteren: %w: no strata", ErrTooFew)
	}
	k := len(strata[0].Groups)
	if k < 2 {
		return res, fmt.Errorf("van elteren: %w: %d treatments, need at least 2", ErrTooFew, k)
	}
	d := make([]float64, k)
	v := mat.NewSymDense(k, nil)
	for s, st := range strata {
		if len(st.Groups) != k {
			return res, fmt.Errorf("van elteren: stratum %d has %d treatments, stratum 1 has %d", s+1, len(st.Groups), k)
		}
		var all []float64
		for j, g := range st.Groups {
			if err := checkFinite(g); err != nil {
				return res, fmt.Errorf("van elteren: stratum %d treatment %d: %w", s+1, j+1, err)
			}
			all = append(all, g...)
		}
		nt := len(all)
		if nt < 2 {
			continue
		}
		r, ties := midranks(all)
		ntf := float64(nt)
		// Variance of the mid-ranks (divisor N): (N²-1)/12 - Σ(t³-t)/(12N).
		sig2 := (ntf*ntf-1)/12 - ties/(12*ntf)
		if sig2 <= 1e-12 {
			continue
		}
		w := 1 / (ntf + 1)
		f := sig2 * ntf / (ntf - 1) * w * w
		off := 0
		nj := make([]float64, k)
		for j, g := range st.Groups {
			var rs float64
			for i := range g {
				rs += r[off+i]
			}
			off += len(g)
			nj[j] = float64(len(g))
			d[j] += w * (rs - nj[j]*(ntf+1)/2)
		}
		for a := 0; a < k; a++ {
			for b := a; b < k; b++ {
				c := -nj[a] * nj[b] / ntf
				if a == b {
					c += nj[a]
				}
				v.SetSym(a, b, v.At(a, b)+f*c)
			}
		}
		res.N += nt
		res.Strata++
	}
	if res.Strata == 0 {
		return res, fmt.Errorf("van elteren: %w: no stratum has untied values", ErrTooFew)
	}
	// Reduced system on the first k-1 treatments.
	vr := mat.NewSymDense(k-1, nil)
	for a := 0; a < k-1; a++ {
		for b := a; b < k-1; b++ {
			vr.SetSym(a, b, v.At(a, b))
		}
	}
	var ch mat.Cholesky
	if ok := ch.Factorize(vr); !ok {
		return res, fmt.Errorf("van elteren: covariance of the rank sums is singular (a treatment has no comparable observations)")
	}
	dr := mat.NewVecDense(k-1, append([]float64(nil), d[:k-1]...))
	var sol mat.VecDense
	if err := ch.SolveVecTo(&sol, dr); err != nil {
		return res, fmt.Errorf("van elteren: solving for the statistic: %w", err)
	}
	res.Q = mat.Dot(dr, &sol)
	res.DF = float64(k - 1)
	res.P = dist.ChiSqUpper(res.Q, res.DF)
	return res, nil
}
