package design

import (
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
)

func frame(t *testing.T) *Frame {
	t.Helper()
	f, err := NewFrame([]Factor{
		{Name: "trt", Levels: []string{"control", "candidate", "standard"}, Codes: []int{0, 1, 2, 0, 1, 2}},
		{Name: "time", Levels: []string{"early", "harvest"}, Codes: []int{0, 0, 0, 1, 1, 1}},
	}, []Numeric{{Name: "dose", Values: []float64{1, 2, 3, 4, 5, 6}}})
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func tm(labels ...string) []Term {
	var out []Term
	for _, l := range labels {
		out = append(out, Term{Vars: strings.Split(l, ":")})
	}
	return out
}

// The expected matrices below are written out by hand from the coding
// rules (treatment: 0/1 for non-reference levels; sum: -1 row for the
// omitted level; products for interactions).
func TestBuildTreatment(t *testing.T) {
	m, err := Build(frame(t), Spec{Intercept: true, Terms: tm("trt", "time", "trt:time", "dose"), Reference: map[string]string{"trt": "standard"}})
	if err != nil {
		t.Fatal(err)
	}
	wantNames := []string{"(intercept)", "trt[control]", "trt[candidate]", "time[harvest]",
		"trt[control]:time[harvest]", "trt[candidate]:time[harvest]", "dose"}
	if !reflect.DeepEqual(m.Names, wantNames) {
		t.Fatalf("names %v, want %v", m.Names, wantNames)
	}
	want := [][]float64{
		{1, 1, 0, 0, 0, 0, 1},
		{1, 0, 1, 0, 0, 0, 2},
		{1, 0, 0, 0, 0, 0, 3},
		{1, 1, 0, 1, 1, 0, 4},
		{1, 0, 1, 1, 0, 1, 5},
		{1, 0, 0, 1, 0, 0, 6},
	}
	for i, row := range want {
		if got := m.X.RawRowView(i); !reflect.DeepEqual(got, row) {
			t.Errorf("row %d = %v, want %v", i, got, row)
		}
	}
	if !reflect.DeepEqual(m.Terms[2].Cols, []int{4, 5}) {
		t.Errorf("trt:time columns %v", m.Terms[2].Cols)
	}
}

func TestBuildSumAndMissingMargins(t *testing.T) {
	// Sum coding; trt:time after trt only: dropping trt leaves time, which
	// is absent, so trt gets indicators; dropping time leaves trt, present,
	// so time gets contrasts: 3 x 1 columns (time effect within each trt).
	m, err := Build(frame(t), Spec{Intercept: true, Terms: tm("trt", "trt:time"), Coding: SumToZero})
	if err != nil {
		t.Fatal(err)
	}
	wantNames := []string{"(intercept)", "trt[control]", "trt[candidate]",
		"trt[control]:time[early]", "trt[candidate]:time[early]", "trt[standard]:time[early]"}
	if !reflect.DeepEqual(m.Names, wantNames) {
		t.Fatalf("names %v", m.Names)
	}
	if got := m.X.RawRowView(2); !reflect.DeepEqual(got, []float64{1, -1, -1, 0, 0, 1}) {
		t.Errorf("row 2 = %v", got)
	}
	if !m.Terms[1].Indicator[0] || m.Terms[1].Indicator[1] {
		t.Errorf("indicator flags %v, want [true false]", m.Terms[1].Indicator)
	}
	// No intercept: the first factor gets all its levels.
	m0, err := Build(frame(t), Spec{Terms: tm("trt", "time")})
	if err != nil {
		t.Fatal(err)
	}
	if len(m0.Names) != 4 || m0.Names[0] != "trt[control]" || m0.Names[3] != "time[harvest]" {
		t.Errorf("no-intercept names %v", m0.Names)
	}
}

func TestNestedColumns(t *testing.T) {
	// block + block:plot, 3 blocks x 4 plots: block:plot has 3*(4-1) columns.
	n := 12
	b := Factor{Name: "block", Levels: []string{"1", "2", "3"}, Codes: make([]int, n)}
	p := Factor{Name: "plot", Levels: []string{"a", "b", "c", "d"}, Codes: make([]int, n)}
	for i := 0; i < n; i++ {
		b.Codes[i], p.Codes[i] = i/4, i%4
	}
	f, err := NewFrame([]Factor{b, p}, nil)
	if err != nil {
		t.Fatal(err)
	}
	m, err := Build(f, Spec{Intercept: true, Terms: tm("block", "block:plot")})
	if err != nil {
		t.Fatal(err)
	}
	if got := len(m.Terms[1].Cols); got != 9 {
		t.Errorf("block:plot has %d columns, want 9", got)
	}
}

func TestMeansGridAverages(t *testing.T) {
	m, err := Build(frame(t), Spec{Intercept: true, Terms: tm("trt", "time", "trt:time", "dose")})
	if err != nil {
		t.Fatal(err)
	}
	L, labels, err := m.MeansGrid([]string{"trt"})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(labels, []string{"trt[control]", "trt[candidate]", "trt[standard]"}) {
		t.Errorf("labels %v", labels)
	}
	// candidate row: intercept 1, trt[candidate] 1, time[harvest] 1/2,
	// candidate:harvest 1/2, dose at its mean 3.5.
	want := []float64{1, 1, 0, 0.5, 0.5, 0, 3.5}
	if got := L.RawRowView(1); !reflect.DeepEqual(got, want) {
		t.Errorf("candidate row %v, want %v", got, want)
	}
	if _, _, err := m.MeansGrid([]string{"dose"}); err == nil {
		t.Error("grid over a numeric variable: want an error")
	}
	// The grid holds dose at its mean (1+...+6)/6 = 3.5, by hand, and
	// averages over the model's other factor.
	if names, means := m.CovariateMeans(); !reflect.DeepEqual(names, []string{"dose"}) || !reflect.DeepEqual(means, []float64{3.5}) {
		t.Errorf("covariate means %v %v", names, means)
	}
	if got := m.FactorNames(); !reflect.DeepEqual(got, []string{"trt", "time"}) {
		t.Errorf("factors %v", got)
	}
}

// With several bad reference levels the error names the same one on every
// call (map order must not reach the message).
func TestBuildReferenceErrorDeterministic(t *testing.T) {
	ref := map[string]string{"trt": "none", "time": "late", "dose": "x", "zone": "a"}
	var first string
	for i := 0; i < 20; i++ {
		_, err := Build(frame(t), Spec{Intercept: true, Terms: tm("trt", "time"), Reference: ref})
		if err == nil {
			t.Fatal("bad reference levels accepted")
		}
		if i == 0 {
			first = err.Error()
		} else if err.Error() != first {
			t.Fatalf("error changed between calls: %q then %q", first, err.Error())
		}
	}
	if !strings.Contains(first, `"dose"`) {
		t.Errorf("error %q: want the first name in sorted order (dose)", first)
	}
}

func TestBuildErrors(t *testing.T) {
	if _, err := NewFrame([]Factor{{Name: "a", Levels: []string{"x"}, Codes: []int{0, 3}}}, nil); err == nil {
		t.Error("code out of range: want an error")
	}
	if _, err := NewFrame([]Factor{{Name: "a", Levels: []string{"x", "y"}, Codes: []int{0, 1}}},
		[]Numeric{{Name: "b", Values: []float64{1}}}); err == nil {
		t.Error("lengths differ: want an error")
	}
	f := frame(t)
	for _, s := range []Spec{
		{Intercept: true, Terms: tm("nope")},
		{Intercept: true, Terms: tm("trt", "trt")},
		{Intercept: true, Terms: tm("trt"), Reference: map[string]string{"trt": "absent"}},
		{Intercept: true, Terms: []Term{{}}},
	} {
		if _, err := Build(f, s); err == nil {
			t.Errorf("spec %+v: want an error", s)
		}
	}
}

// benchFrame has 1e6 rows: factors with 6, 5 and 4 levels and 2 covariates;
// the model a + b + c + a:b + x + z has 1+5+4+3+20+1+1 = 35 columns.
func benchFrame(n int) (*Frame, Spec) {
	r := rand.New(rand.NewPCG(1, 2))
	mk := func(name string, k int) Factor {
		f := Factor{Name: name, Codes: make([]int, n)}
		for l := 0; l < k; l++ {
			f.Levels = append(f.Levels, string(rune('a'+l)))
		}
		for i := range f.Codes {
			f.Codes[i] = r.IntN(k)
		}
		return f
	}
	x := make([]float64, n)
	z := make([]float64, n)
	for i := range x {
		x[i], z[i] = r.NormFloat64(), r.Float64()
	}
	f, err := NewFrame([]Factor{mk("a", 6), mk("b", 5), mk("c", 4)}, []Numeric{{Name: "x", Values: x}, {Name: "z", Values: z}})
	if err != nil {
		panic(err)
	}
	return f, Spec{Intercept: true, Terms: tm("a", "b", "c", "a:b", "x", "z")}
}

func BenchmarkBuild1e6(b *testing.B) {
	f, s := benchFrame(1_000_000)
	b.ResetTimer()
	for range b.N {
		if _, err := Build(f, s); err != nil {
			b.Fatal(err)
		}
	}
}
