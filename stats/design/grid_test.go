package design

import (
	"math"
	"reflect"
	"testing"
)

// unbalancedFrame is a small invented layout with three factors and a
// covariate: a (3 levels), b (2), c (2), x numeric, cells unequally
// filled.
func unbalancedFrame(t *testing.T) *Frame {
	t.Helper()
	a := Factor{Name: "a", Levels: []string{"a1", "a2", "a3"}}
	b := Factor{Name: "b", Levels: []string{"b1", "b2"}}
	c := Factor{Name: "c", Levels: []string{"c1", "c2"}}
	var x []float64
	for i := 0; i < 17; i++ {
		a.Codes = append(a.Codes, i%3)
		b.Codes = append(b.Codes, (i/3)%2)
		c.Codes = append(c.Codes, (i/2)%2)
		x = append(x, float64(i*i%7)+0.5)
	}
	f, err := NewFrame([]Factor{a, b, c}, []Numeric{{Name: "x", Values: x}})
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// MeansGridBy(a | b) is MeansGrid(b, a) cut into the b levels, and the
// equal-weight average of its groups over b is MeansGrid(a), under both
// codings and with an interaction involving the averaged factor c.
func TestMeansGridByMatchesMeansGrid(t *testing.T) {
	for _, coding := range []Coding{Treatment, SumToZero} {
		m, err := Build(unbalancedFrame(t), Spec{Intercept: true, Terms: tm("a", "b", "c", "a:b", "b:c", "x", "a:x"), Coding: coding})
		if err != nil {
			t.Fatal(err)
		}
		groups, err := m.MeansGridBy([]string{"a"}, []string{"b"})
		if err != nil {
			t.Fatal(err)
		}
		if len(groups) != 2 || groups[0].By != "b[b1]" || groups[1].By != "b[b2]" {
			t.Fatalf("groups %+v", groups)
		}
		if !reflect.DeepEqual(groups[1].Labels, []string{"a[a1]", "a[a2]", "a[a3]"}) {
			t.Errorf("labels %v", groups[1].Labels)
		}
		joint, _, err := m.MeansGrid([]string{"b", "a"})
		if err != nil {
			t.Fatal(err)
		}
		marg, _, err := m.MeansGrid([]string{"a"})
		if err != nil {
			t.Fatal(err)
		}
		p := len(m.Names)
		for i := 0; i < 3; i++ {
			for j := 0; j < p; j++ {
				// The same arithmetic builds both rows: exact equality.
				for g := range groups {
					if got, want := groups[g].L.At(i, j), joint.At(g*3+i, j); got != want {
						t.Errorf("%s: group %d row %d col %d = %v, MeansGrid(b, a) %v", coding, g, i, j, got, want)
					}
				}
				// Averaging over b is a sum of two rows halved; rounding
				// of the halves allows a few ulps.
				avg := 0.5 * (groups[0].L.At(i, j) + groups[1].L.At(i, j))
				if want := marg.At(i, j); math.Abs(avg-want) > 4e-16*math.Max(1, math.Abs(want)) {
					t.Errorf("%s: average over b of row %d col %d = %v, MeansGrid(a) %v", coding, i, j, avg, want)
				}
			}
		}
	}
}

func TestMeansGridBySeveral(t *testing.T) {
	m, err := Build(unbalancedFrame(t), Spec{Intercept: true, Terms: tm("a", "b", "c", "a:b:c")})
	if err != nil {
		t.Fatal(err)
	}
	groups, err := m.MeansGridBy([]string{"c"}, []string{"a", "b"})
	if err != nil {
		t.Fatal(err)
	}
	var by []string
	for _, g := range groups {
		by = append(by, g.By)
		if r, _ := g.L.Dims(); r != 2 {
			t.Errorf("%s: %d rows, want 2", g.By, r)
		}
	}
	want := []string{"a[a1]:b[b1]", "a[a1]:b[b2]", "a[a2]:b[b1]", "a[a2]:b[b2]", "a[a3]:b[b1]", "a[a3]:b[b2]"}
	if !reflect.DeepEqual(by, want) {
		t.Errorf("by labels %v, want %v", by, want)
	}
	one, err := m.MeansGridBy([]string{"a", "c"}, nil)
	if err != nil {
		t.Fatal(err)
	}
	L, labels, _ := m.MeansGrid([]string{"a", "c"})
	if len(one) != 1 || one[0].By != "" || !reflect.DeepEqual(one[0].Labels, labels) || !reflect.DeepEqual(one[0].L.RawMatrix().Data, L.RawMatrix().Data) {
		t.Errorf("no by factor: %+v, want MeansGrid(a, c)", one)
	}
}

func TestMeansGridByErrors(t *testing.T) {
	m, err := Build(unbalancedFrame(t), Spec{Intercept: true, Terms: tm("a", "b", "x")})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ factors, by []string }{
		{nil, []string{"b"}},
		{[]string{"a"}, []string{"a"}},
		{[]string{"a"}, []string{"b", "b"}},
		{[]string{"a", "a"}, []string{"b"}},
		{[]string{"a"}, []string{"x"}},
		{[]string{"a"}, []string{"c"}}, // a factor of the frame, not of the model
		{[]string{"zone"}, []string{"b"}},
	} {
		if _, err := m.MeansGridBy(c.factors, c.by); err == nil {
			t.Errorf("MeansGridBy(%v, %v): want an error", c.factors, c.by)
		}
	}
}
