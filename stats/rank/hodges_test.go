package rank

import (
	"encoding/json"
	"errors"
	"fmt"
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

func methodOf(exact bool) Method {
	if exact {
		return MethodExact
	}
	return MethodNormal
}

// R's normal-approximation bounds and estimate come from uniroot with
// tol = 1e-4 on a step function, so they sit within about 1e-4 of the
// breakpoint we return exactly: those are checked to uniroot's 1e-4
// absolute, the precision the reference carries. The exact order
// statistics and median(outer(...)) are checked at about 30 times the
// agreement measured on linux/amd64 (beside each). testkit treats equal
// infinite bounds as equal.
func TestHLShiftAgainstR(t *testing.T) {
	ref := loadHL(t)
	for i, c := range ref.TwoSample {
		r, err := HLShift(c.X, c.Y, c.Level, Options{Alternative: altOf(c.Alt), Method: methodOf(c.Exact), NoContinuity: !c.Correct})
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		what := fmt.Sprintf("case %d (%s %v exact=%v correct=%v)", i, c.Alt, c.Level, c.Exact, c.Correct)
		testkit.CheckClose(t, what+` estimate (R 4.2.2 median(outer(x, y, "-")))`, r.Estimate, float64(c.HL), 1e-14) // agreement 4.4e-16
		if c.Exact {
			testkit.CheckClose(t, what+" estimate (R 4.2.2 wilcox.test)", r.Estimate, float64(c.Estimate), 1e-14) // 4.4e-16
			testkit.CheckClose(t, what+" lower (R 4.2.2 wilcox.test)", r.Lower, float64(c.Lower), 1e-14)          // 4.1e-16
			testkit.CheckClose(t, what+" upper (R 4.2.2 wilcox.test)", r.Upper, float64(c.Upper), 1e-14)
		} else {
			// uniroot's tol; worst gap 3.3e-5.
			testkit.CheckWithin(t, what+" lower (R 4.2.2 wilcox.test)", r.Lower, float64(c.Lower), 0, 1e-4)
			testkit.CheckWithin(t, what+" upper (R 4.2.2 wilcox.test)", r.Upper, float64(c.Upper), 0, 1e-4)
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
		what := fmt.Sprintf("case %d (%s %v exact=%v correct=%v)", i, c.Alt, c.Level, c.Exact, c.Correct)
		testkit.CheckClose(t, what+" estimate (R 4.2.2 median of Walsh averages)", r.Estimate, float64(c.HL), 1e-15) // exact
		if c.Exact {
			testkit.CheckClose(t, what+" estimate (R 4.2.2 wilcox.test)", r.Estimate, float64(c.Estimate), 1e-15) // exact
			testkit.CheckClose(t, what+" lower (R 4.2.2 wilcox.test)", r.Lower, float64(c.Lower), 5e-15)          // agreement 1.6e-16
			testkit.CheckClose(t, what+" upper (R 4.2.2 wilcox.test)", r.Upper, float64(c.Upper), 5e-15)
		} else {
			// uniroot's tol; worst gap 5.9e-5.
			testkit.CheckWithin(t, what+" lower (R 4.2.2 wilcox.test)", r.Lower, float64(c.Lower), 0, 1e-4)
			testkit.CheckWithin(t, what+" upper (R 4.2.2 wilcox.test)", r.Upper, float64(c.Upper), 0, 1e-4)
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
// midpoints (testdata/ref_hl.R); bounds are breakpoints, so they agree to
// rounding (beside each tolerance). The one-stratum case is against
// wilcox.test's uniroot bounds, checked to uniroot's tol = 1e-4.
func TestHLStratifiedAgainstR(t *testing.T) {
	ref := loadHL(t)
	for i, c := range ref.Stratified {
		r, err := HLStratified(strataOf(c.Strata), c.Level, Options{Alternative: altOf(c.Alt)})
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		what := fmt.Sprintf("case %d (R 4.2.2 inversion by formula)", i)
		testkit.CheckClose(t, what+" estimate", r.Estimate, float64(c.Estimate), 1e-14) // agreement 3.4e-16
		testkit.CheckClose(t, what+" lower", r.Lower, float64(c.Lower), 1e-14)          // 4.4e-16
		testkit.CheckClose(t, what+" upper", r.Upper, float64(c.Upper), 5e-15)          // 2.2e-16
	}
	o := ref.OneStratum
	r, err := HLStratified([]Stratum{{Groups: [][]float64{o.X, o.Y}}}, o.Level, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// uniroot's tol; gaps 3.2e-5 and 5.5e-6.
	testkit.CheckWithin(t, "one stratum lower (R 4.2.2 wilcox.test(correct = FALSE))", r.Lower, float64(o.Lower), 0, 1e-4)
	testkit.CheckWithin(t, "one stratum upper (R 4.2.2 wilcox.test(correct = FALSE))", r.Upper, float64(o.Upper), 0, 1e-4)
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
			if st.Estimate != un.Estimate || st.Lower != un.Lower || st.Upper != un.Upper {
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
	check := func(what string, a, b ShiftInterval, errA, errB error) {
		t.Helper()
		if errA != nil || errB != nil {
			t.Fatalf("%s: %v, %v", what, errA, errB)
		}
		// Measured exact on linux/amd64; a few ulps are allowed.
		testkit.CheckClose(t, what+" estimate", b.Estimate, a.Estimate+d, 5e-15)
		testkit.CheckClose(t, what+" lower", b.Lower, a.Lower+d, 5e-15)
		testkit.CheckClose(t, what+" upper", b.Upper, a.Upper+d, 5e-15)
	}
	c := ref.TwoSample[0]
	a, errA := HLShift(c.X, c.Y, 0.95, Options{})
	b, errB := HLShift(add(c.X), c.Y, 0.95, Options{})
	check("two-sample", a, b, errA, errB)
	s := ref.Stratified[0]
	st := strataOf(s.Strata)
	sh := make([]Stratum, len(st))
	for i := range st {
		sh[i] = Stratum{Groups: [][]float64{add(st[i].Groups[0]), st[i].Groups[1]}}
	}
	a, errA = HLStratified(st, 0.9, Options{})
	b, errB = HLStratified(sh, 0.9, Options{})
	check("stratified", a, b, errA, errB)
	o := ref.OneSample[0]
	a, errA = HLLocation(o.D, 0.95, Options{})
	b, errB = HLLocation(add(o.D), 0.95, Options{})
	check("one-sample", a, b, errA, errB)
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
