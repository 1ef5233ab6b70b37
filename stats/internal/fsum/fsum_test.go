package fsum

import (
	"math"
	"testing"
)

// TestCancellation: terms whose plain sum loses every digit. The exact
// sums are known by construction (integers and powers of two, exactly
// representable), so the comparisons are exact.
func TestCancellation(t *testing.T) {
	cases := []struct {
		name string
		x    []float64
		want float64
	}{
		{"1, 1e100, 1, -1e100", []float64{1, 1e100, 1, -1e100}, 2},
		{"large first", []float64{1 << 53, 1, 1, 1, 1}, 1<<53 + 4},
		{"alternating", []float64{1e16, 1, -1e16, 1, 1e16, 1, -1e16}, 3},
		{"empty", nil, 0},
	}
	for _, c := range cases {
		if got := Of(c.x); got != c.want {
			t.Errorf("%s: Of = %v, want %v", c.name, got, c.want)
		}
	}
}

// TestRunningEqualsSlice: Sum.Add one at a time gives the same bits as Of.
func TestRunningEqualsSlice(t *testing.T) {
	x := []float64{0.1, 0.2, 0.3, -0.6, 1e-17, 3.5, -1e10, 1e10}
	var k Sum
	for _, v := range x {
		k.Add(v)
	}
	if k.Value() != Of(x) {
		t.Errorf("running sum %v, slice sum %v", k.Value(), Of(x))
	}
	if m := Mean(nil); !math.IsNaN(m) {
		t.Errorf("Mean(nil) = %v, want NaN", m)
	}
}
