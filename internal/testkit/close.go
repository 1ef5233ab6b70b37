package testkit

import (
	"math"
	"testing"
)

// special settles comparisons involving NaN or infinities: ok is the
// verdict when decided is true.
func special(got, want float64) (ok, decided bool) {
	switch {
	case math.IsNaN(got) || math.IsNaN(want):
		return math.IsNaN(got) && math.IsNaN(want), true
	case math.IsInf(got, 0) || math.IsInf(want, 0):
		return got == want, true
	}
	return false, false
}

// Close reports whether |got - want| <= tol·max(1, |want|): relative for
// |want| > 1, absolute otherwise.
func Close(got, want, tol float64) bool {
	if ok, decided := special(got, want); decided {
		return ok
	}
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

// RelClose reports whether |got - want| <= tol·|want| (so want = 0 needs
// got = 0).
func RelClose(got, want, tol float64) bool {
	if ok, decided := special(got, want); decided {
		return ok
	}
	return math.Abs(got-want) <= tol*math.Abs(want)
}

// Within reports whether got is within rel·|want| or within abs of want.
func Within(got, want, rel, abs float64) bool {
	if ok, decided := special(got, want); decided {
		return ok
	}
	d := math.Abs(got - want)
	return d <= abs || d <= rel*math.Abs(want)
}

// RelErr returns |got - want|/|want| (|got - want| when want = 0), the
// measured agreement to log when a tolerance is set.
func RelErr(got, want float64) float64 {
	d := math.Abs(got - want)
	if want != 0 {
		d /= math.Abs(want)
	}
	return d
}

// CheckClose reports an error unless Close(got, want, tol).
func CheckClose(t testing.TB, what string, got, want, tol float64) {
	t.Helper()
	if !Close(got, want, tol) {
		t.Errorf("%s = %.15g, want %.15g (tol %.2g; diff %.3g)", what, got, want, tol, got-want)
	}
}

// CheckRelClose reports an error unless RelClose(got, want, tol).
func CheckRelClose(t testing.TB, what string, got, want, tol float64) {
	t.Helper()
	if !RelClose(got, want, tol) {
		t.Errorf("%s = %.15g, want %.15g (rel tol %.2g; rel err %.3g)", what, got, want, tol, RelErr(got, want))
	}
}

// CheckWithin reports an error unless Within(got, want, rel, abs).
func CheckWithin(t testing.TB, what string, got, want, rel, abs float64) {
	t.Helper()
	if !Within(got, want, rel, abs) {
		t.Errorf("%s = %.15g, want %.15g (rel %.2g, abs %.2g; diff %.3g)", what, got, want, rel, abs, got-want)
	}
}

// CheckSlice is CheckClose element by element; it reports the first
// mismatch only, and a length mismatch as fatal.
func CheckSlice(t testing.TB, what string, got, want []float64, tol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, want %d", what, len(got), len(want))
	}
	for i := range got {
		if !Close(got[i], want[i], tol) {
			t.Errorf("%s[%d] = %.15g, want %.15g (tol %.2g; diff %.3g)", what, i, got[i], want[i], tol, got[i]-want[i])
			return
		}
	}
}
