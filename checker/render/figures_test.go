package render

import (
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// Reference values for the QQ plot come from the definitions used: Blom's
// plotting positions (Blom 1958, "Statistical estimates and transformed
// beta-variables") and the Beta(i, n-i+1) law of uniform order statistics
// (e.g. David & Nagaraja 2003, Order Statistics, section 2.2).
func TestQQPointsAreSortedResidualsAgainstNormalQuantiles(t *testing.T) {
	resid := []float64{0.3, -1.2, 2.5, 0.1, -0.4, 0.9, -2.2, 0.0, 1.1, -0.6}
	theo, sorted, lo, hi := QQPoints(resid)
	want := slices.Clone(resid)
	slices.Sort(want)
	n := float64(len(resid))
	for i := range resid {
		if sorted[i] != want[i] {
			t.Fatalf("sorted[%d] = %v, want %v", i, sorted[i], want[i])
		}
		z := distuv.UnitNormal.Quantile((float64(i+1) - 0.375) / (n + 0.25))
		if math.Abs(theo[i]-z) > 1e-12 {
			t.Errorf("theo[%d] = %v, want %v", i, theo[i], z)
		}
		if !(lo[i] < hi[i]) {
			t.Errorf("envelope[%d] = [%v, %v] not ordered", i, lo[i], hi[i])
		}
		if i > 0 && theo[i] <= theo[i-1] {
			t.Errorf("theoretical quantiles not increasing at %d", i)
		}
	}
	// Blom's position for the median of an odd sample is exactly 0.5.
	th, _, _, _ := QQPoints([]float64{3, 1, 2})
	if math.Abs(th[1]) > 1e-15 {
		t.Errorf("median plotting position gives z = %v, want 0", th[1])
	}
	// The QQ figure draws exactly these points.
	f, err := NormalQQ("s/qq", resid)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(f.Data.Y, want) || !slices.Equal(f.Data.X, theo) {
		t.Errorf("figure data differ from QQPoints")
	}
	if !strings.HasPrefix(f.SVG, "<svg") || strings.Count(f.SVG, "<path") < len(resid) {
		t.Errorf("SVG does not draw the points: %d paths", strings.Count(f.SVG, "<path"))
	}
}

func TestThinningKeepsExtremesAndSaysSo(t *testing.T) {
	n := 10 * MaxFigurePoints
	fitted := make([]float64, n)
	resid := make([]float64, n)
	for i := range fitted {
		fitted[i] = float64(i)
		resid[i] = math.Sin(float64(i))
	}
	resid[1234] = 50
	f, err := ResidualsVersusFitted("s/rvf", fitted, resid)
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Data.X) > MaxFigurePoints || len(f.Data.X) < MaxFigurePoints*9/10 {
		t.Errorf("drew %d points, want about %d", len(f.Data.X), MaxFigurePoints)
	}
	if !slices.Contains(f.Data.Y, 50.0) {
		t.Errorf("the most extreme residual was thinned away")
	}
	if !strings.Contains(f.Note, "of 20000 points") {
		t.Errorf("note %q does not state the thinning", f.Note)
	}
	small, _ := ResidualsVersusFitted("s/rvf", fitted[:10], resid[:10])
	if small.Note != "" || len(small.Data.X) != 10 {
		t.Errorf("small figure thinned: %q, %d points", small.Note, len(small.Data.X))
	}
}

func TestFiguresRenderDeterministically(t *testing.T) {
	vals := []float64{4, 5, 6, 5.5, 7, 8, 6.5, 9, 3, 4.5, 5, 6}
	grp := []string{"a", "a", "a", "a", "b", "b", "b", "b", "c", "c", "c", "c"}
	tm := []string{"fixture.T0", "t1", "fixture.T0", "t1", "fixture.T0", "t1", "fixture.T0", "t1", "fixture.T0", "t1", "fixture.T0", "t1"}
	unit := []string{"u1", "u1", "u2", "u2", "u3", "u3", "u4", "u4", "u5", "u5", "u6", "u6"}
	build := func() []Figure {
		var out []Figure
		add := func(f Figure, err error) {
			if err != nil {
				t.Fatal(err)
			}
			out = append(out, f)
		}
		add(ResidualHistogram("h", vals))
		add(BoxPoints("b", "group", "y", []string{"a", "b", "c"}, grp, vals))
		add(CellMeans("c", "group", "time", "y", []string{"a", "b", "c"}, []string{"fixture.T0", "t1"}, grp, tm, vals))
		add(UnitLines("u", "time", "y", []string{"fixture.T0", "t1"}, unit, tm, vals))
		add(MeansWithCI("m", "means", "response scale", []string{"a", "b"}, []float64{1, 2}, []float64{0.5, 1.4}, []float64{1.5, 2.6}))
		return out
	}
	a, b := build(), build()
	for i := range a {
		if a[i].SVG != b[i].SVG {
			t.Errorf("figure %s differs between two renderings", a[i].ID)
		}
		if !strings.HasPrefix(a[i].SVG, "<svg") || len(a[i].SVG) < 500 {
			t.Errorf("figure %s: SVG looks empty (%d bytes)", a[i].ID, len(a[i].SVG))
		}
	}
	// Box data: medians of each group (a: 4,5,5.5,6 -> 5.25).
	if got := a[1].Data.Y[0]; math.Abs(got-5.25) > 1e-12 {
		t.Errorf("median of group a = %v, want 5.25", got)
	}
	// Cell means: a|fixture.T0 = (4+6)/2 = 5.
	if got := a[2].Data.Y[0]; math.Abs(got-5) > 1e-12 {
		t.Errorf("cell mean a|fixture.T0 = %v, want 5", got)
	}
}

// A thinned QQ figure computes its envelope only at the points it draws;
// those values must equal the full envelope at the same order statistics.
func TestThinnedQQEnvelopeMatchesFull(t *testing.T) {
	n := MaxFigurePoints + 1500
	x := make([]float64, n)
	for i := range x {
		x[i] = math.Sin(float64(i)*0.7) + 0.001*float64(i%17)
	}
	theo, _, lo, hi := QQPoints(x)
	at := map[float64]int{}
	for i, z := range theo {
		at[z] = i
	}
	f, err := NormalQQ("q", x)
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Data.X) >= n || f.Note == "" {
		t.Fatalf("figure not thinned: %d points", len(f.Data.X))
	}
	for j, z := range f.Data.X {
		i, ok := at[z]
		if !ok {
			t.Fatalf("drawn quantile %v is not a plotting position", z)
		}
		if f.Data.Lower[j] != lo[i] || f.Data.Upper[j] != hi[i] {
			t.Fatalf("envelope at rank %d: [%v, %v], full [%v, %v]", i, f.Data.Lower[j], f.Data.Upper[j], lo[i], hi[i])
		}
	}
}
