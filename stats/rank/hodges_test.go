package rank

import (
	"encoding/json"
	"errors"
	"math"
	"testing"

	"furrow/internal/testkit"
)

// jnum is a JSON number that also reads jsonlite's "Inf" and "-Inf".
type jnum float64

func (j *jnum) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case `"Inf"`:
		*j = jnum(math.Inf(1))
		return nil
	case `"-Inf"`:
		*j = jnum(math.Inf(-1))
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return err
	}
	*j = jnum(f)
	return nil
}

// hlRef mirrors testdata/ref_hl.json from testdata/ref_hl.R (R 4.2.2
// wilcox.test; the stratified inversion written from the formulas).
type hlRef struct {
	RVersion  string `json:"r_version"`
	TwoSample []struct {
		X, Y                       []float64
		Alt                        string
		Level                      float64
		Exact, Correct             bool
		Estimate, Lower, Upper, HL jnum
	} `json:"two_sample"`
	OneSample []struct {
		D                          []float64
		Alt                        string
		Level                      float64
		Exact, Correct             bool
		Estimate, Lower, Upper, HL jnum
	} `json:"one_sample"`
	Stratified []struct {
		Strata                 [][][]float64
		Level                  float64
		Alt                    string
		Estimate, Lower, Upper jnum
	} `json:"stratified"`
	OneStratum struct {
		X, Y         []float64
		Level        float64
		Lower, Upper jnum
	} `json:"one_stratum_wilcox"`
}

func loadHL(t *testing.T) hlRef {
	t.Helper()
	var r hlRef
	testkit.DecodeFile(t, "testdata/ref_hl.json", &r)
	return r
}

// bound compares an interval bound: both infinite with the same sign, or
// near within tol.
func bound(got float64, want jnum, tol float64) bool {
	w := float64(want)
	if math.IsInf(w, 0) {
		return got == w
	}
	return testkit.Close(got, w, tol)
}

func methodOf(exact bool) Method {
	if exact {
		return MethodExact
	}
	return MethodNormal
}

// R's normal-approximation bounds and estimate come from uniroot with
// tol = 1e-4 on a step function, so they sit within about 1e-4 of the
// breakpoint we return exactly: tolerance 5e-4 absolute for those, 1e-12
// for the exact order statistics and for median(outer(...)).
func TestHLShiftAgainstR(t *testing.T) {
	ref := loadHL(t)
	for i, c := range ref.TwoSample {
		r, err := HLShift(c.X, c.Y, c.Level, Options{Alternative: altOf(c.Alt), Method: methodOf(c.Exact), NoContinuity: !c.Correct})
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		tol := 5e-4
		if c.Exact {
			tol = 1e-12
			if !testkit.Close(r.Estimate, float64(c.Estimate), tol) {
				t.Errorf("case %d: estimate %v, R 4.2.2 wilcox.test %v", i, r.Estimate, c.Estimate)
			}
		}
		if !testkit.Close(r.Estimate, float64(c.HL), 1e-12) {
			t.Errorf("case %d: estimate %v, R 4.2.2 median(outer(x, y, \"-\")) %v", i, r.Estimate, c.HL)
		}
		if !bound(r.Lower, c.Lower, tol) || !bound(r.Upper, c.Upper, tol) {
			t.Errorf("case %d (%s %v exact=%v correct=%v): interval [%v, %v], R 4.2.2 wilcox.test [%v, %v]",
				i, c.Alt, c.Level, c.Exact, c.Correct, r.Lower, r.Upper, c.Lower, c.Upper)
		}
		if r.Exact != c.Exact || r.Continuity != (c.Correct && !c.Exact) {
			t.Errorf("case %d: exact %v continuity %v", i, r.Exact, r.Continuity)
		}
	}
}

func TestHLLocationAgainstR(t *testing.T) {
	ref := loadHL(t)
	for i, c := range ref.OneSample {
		r, err := HLLocation(c.D, c.Level, Options{Alternative: altOf(c.Alt), Method: methodOf(c.Exact), NoContinuity: !c.Correct})
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		tol := 5e-4
		if c.Exact {
			tol = 1e-12
			if !testkit.Close(r.Estimate, float64(c.Estimate), tol) {
				t.Errorf("case %d: estimate %v, R 4.2.2 wilcox.test %v", i, r.Estimate, c.Estimate)
			}
		}
		if !testkit.Close(r.Estimate, float64(c.HL), 1e-12) {
			t.Errorf("case %d: estimate %v, R 4.2.2 median of Walsh averages %v", i, r.Estimate, c.HL)
		}
		if !bound(r.Lower, c.Lower, tol) || !bound(r.Upper, c.Upper, tol) {
			t.Errorf("case %d (%s %v exact=%v correct=%v): interval [%v, %v], R 4.2.2 wilcox.test [%v, %v]",
				i, c.Alt, c.Level, c.Exact, c.Correct, r.Lower, r.Upper, c.Lower, c.Upper)
		}
	}
}

func strataOf(s [][][]float64) []Stratum {
	out := make([]Stratum, len(s))
	for i, g := range s {
		out[i] = Stratum{Groups: g}
	}
	return out
}

// The R side evaluates van Elteren's statistic with rank() at gap
// midpoints (testdata/ref_hl.R); bounds are breakpoints, so 1e-12.
func TestHLStratifiedAgainstR(t *testing.T) {
	ref := loadHL(t)
	for i, c := range ref.Stratified {
		r, err := HLStratified(strataOf(c.Strata), c.Level, Options{Alternative: altOf(c.Alt)})
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		if !testkit.Close(r.Estimate, float64(c.Estimate), 1e-12) || !bound(r.Lower, c.Lower, 1e-12) || !bound(r.Upper, c.Upper, 1e-12) {
			t.Errorf("case %d: %v [%v, %v], R 4.2.2 inversion by formula %v [%v, %v]", i, r.Estimate, r.Lower, r.Upper, c.Estimate, c.Lower, c.Upper)
		}
	}
	o := ref.OneStratum
	r, err := HLStratified([]Stratum{{Groups: [][]float64{o.X, o.Y}}}, o.Level, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !bound(r.Lower, o.Lower, 5e-4) || !bound(r.Upper, o.Upper, 5e-4) {
		t.Errorf("one stratum: [%v, %v], R 4.2.2 wilcox.test(correct = FALSE) [%v, %v]", r.Lower, r.Upper, o.Lower, o.Upper)
	}
}

// With one stratum the stratified inversion is the unstratified normal
// interval without continuity correction (property; exact agreement).
func TestHLStratifiedOneStratum(t *testing.T) {
	ref := loadHL(t)
	for i, c := range ref.TwoSample {
		for _, alt := range []Alternative{TwoSided, Greater, Less} {
			st, err := HLStratified([]Stratum{{Groups: [][]float64{c.X, c.Y}}}, c.Level, Options{Alternative: alt})
			if err != nil {
				t.Fatal(err)
			}
			un, err := HLShift(c.X, c.Y, c.Level, Options{Alternative: alt, Method: MethodNormal, NoContinuity: true})
			if err != nil {
				t.Fatal(err)
			}
			if !testkit.Close(st.Estimate, un.Estimate, 1e-12) || st.Lower != un.Lower || st.Upper != un.Upper {
				t.Errorf("case %d %v: stratified %v [%v, %v], unstratified %v [%v, %v]", i, alt, st.Estimate, st.Lower, st.Upper, un.Estimate, un.Lower, un.Upper)
			}
		}
	}
}

// Shifting the first sample by d shifts estimate and bounds by d
// (equivariance; exact up to the rounding of x + d).
func TestHLShiftEquivariance(t *testing.T) {
	ref := loadHL(t)
	const d = 3.25
	add := func(v []float64) []float64 {
		out := make([]float64, len(v))
		for i := range v {
			out[i] = v[i] + d
		}
		return out
	}
	c := ref.TwoSample[0]
	a, _ := HLShift(c.X, c.Y, 0.95, Options{})
	b, _ := HLShift(add(c.X), c.Y, 0.95, Options{})
	if !testkit.Close(b.Estimate, a.Estimate+d, 1e-12) || !testkit.Close(b.Lower, a.Lower+d, 1e-12) || !testkit.Close(b.Upper, a.Upper+d, 1e-12) {
		t.Errorf("two-sample: %v [%v, %v] after shift, %v [%v, %v] before", b.Estimate, b.Lower, b.Upper, a.Estimate, a.Lower, a.Upper)
	}
	s := ref.Stratified[0]
	st := strataOf(s.Strata)
	sh := make([]Stratum, len(st))
	for i := range st {
		sh[i] = Stratum{Groups: [][]float64{add(st[i].Groups[0]), st[i].Groups[1]}}
	}
	a, _ = HLStratified(st, 0.9, Options{})
	b, _ = HLStratified(sh, 0.9, Options{})
	if !testkit.Close(b.Estimate, a.Estimate+d, 1e-12) || !testkit.Close(b.Lower, a.Lower+d, 1e-12) || !testkit.Close(b.Upper, a.Upper+d, 1e-12) {
		t.Errorf("stratified: %v [%v, %v] after shift, %v [%v, %v] before", b.Estimate, b.Lower, b.Upper, a.Estimate, a.Lower, a.Upper)
	}
	o := ref.OneSample[0]
	a, _ = HLLocation(o.D, 0.95, Options{})
	b, _ = HLLocation(add(o.D), 0.95, Options{})
	if !testkit.Close(b.Estimate, a.Estimate+d, 1e-12) || !testkit.Close(b.Lower, a.Lower+d, 1e-12) || !testkit.Close(b.Upper, a.Upper+d, 1e-12) {
		t.Errorf("one-sample: %v [%v, %v] after shift, %v [%v, %v] before", b.Estimate, b.Lower, b.Upper, a.Estimate, a.Lower, a.Upper)
	}
}

// The selection by bisection agrees with sorting all differences.
func TestKthDiffMatchesSort(t *testing.T) {
	x := []float64{3.1, -2, 0.5, 7.25, 0.5, 1e-3}
	y := []float64{-1, 4.4, 2, 2, -0.25}
	var all []float64
	for _, a := range x {
		for _, b := range y {
			all = append(all, a-b)
		}
	}
	sortFloats(all)
	xs, ys := sorted(x), sorted(y)
	for k := 1; k <= len(all); k++ {
		if got := kthDiff(xs, ys, k); got != all[k-1] {
			t.Fatalf("k = %d: %v, sorted %v", k, got, all[k-1])
		}
	}
	var w []float64
	for i := range x {
		for j := i; j < len(x); j++ {
			w = append(w, walsh(x[i], x[j]))
		}
	}
	sortFloats(w)
	for k := 1; k <= len(w); k++ {
		if got := kthWalsh(xs, k); got != w[k-1] {
			t.Fatalf("walsh k = %d: %v, sorted %v", k, got, w[k-1])
		}
	}
}

func TestHLErrors(t *testing.T) {
	if _, err := HLShift(nil, []float64{1}, 0.95, Options{}); !errors.Is(err, ErrTooFew) {
		t.Errorf("empty x: %v", err)
	}
	if _, err := HLShift([]float64{1, math.NaN()}, []float64{1}, 0.95, Options{}); err == nil {
		t.Error("NaN accepted")
	}
	if _, err := HLShift([]float64{1, 2}, []float64{3}, 1.5, Options{}); err == nil {
		t.Error("level 1.5 accepted")
	}
	// All values tied: between breakpoints x - c and y never tie, so the
	// variance stays positive; every difference is 0.
	if r, err := HLShift([]float64{1, 1}, []float64{1, 1}, 0.95, Options{}); err != nil || r.Estimate != 0 {
		t.Errorf("all tied: %+v %v", r, err)
	}
	if _, err := HLShift([]float64{1, 1, 2}, []float64{3, 4}, 0.95, Options{Method: MethodExact}); !errors.Is(err, ErrExactTies) {
		t.Errorf("exact with ties: %v", err)
	}
	if _, err := HLLocation(nil, 0.95, Options{}); !errors.Is(err, ErrTooFew) {
		t.Errorf("empty d: %v", err)
	}
	if _, err := HLStratified([]Stratum{{Groups: [][]float64{{1}, nil}}}, 0.95, Options{}); !errors.Is(err, ErrTooFew) {
		t.Errorf("no usable stratum: %v", err)
	}
	if _, err := HLStratified([]Stratum{{Groups: [][]float64{{1}}}}, 0.95, Options{}); err == nil {
		t.Error("one treatment accepted")
	}
	// Too small to reach the level: infinite bounds, not an error.
	r, err := HLShift([]float64{1, 2}, []float64{3}, 0.95, Options{})
	if err != nil || !math.IsInf(r.Lower, -1) || !math.IsInf(r.Upper, 1) {
		t.Errorf("tiny samples: %+v %v", r, err)
	}
}

func sorted(v []float64) []float64 {
	out := append([]float64(nil), v...)
	sortFloats(out)
	return out
}

func sortFloats(v []float64) {
	for i := 1; i < len(v); i++ {
		for j := i; j > 0 && v[j] < v[j-1]; j-- {
			v[j], v[j-1] = v[j-1], v[j]
		}
	}
}
