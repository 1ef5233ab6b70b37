package lmm

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// repeatedMeasures builds the issue-4 benchmark trial: n rows, n/2 plots
// each measured twice, 20 sites, 3 treatments; fixed site + treatment x
// time (sum-to-zero coding, 25 columns), random plot. Seeded, invented data.
func repeatedMeasures(n int) ([]float64, *mat.Dense, []Grouping, [][]int) {
	rng := rand.New(rand.NewPCG(uint64(n), 42))
	plots := n / 2
	const sites, trts = 20, 3
	p := 1 + (sites - 1) + (trts - 1) + 1 + (trts - 1)
	X := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	plot := make([]int, n)
	u := make([]float64, plots)
	for i := range u {
		u[i] = 1.5 * rng.NormFloat64()
	}
	sc := func(c, k, j int) float64 {
		if c == k-1 {
			return -1
		}
		if c == j {
			return 1
		}
		return 0
	}
	for i := 0; i < n; i++ {
		pl := i / 2
		plot[i] = pl
		site := pl % sites
		trt := (pl / sites) % trts
		tm := i % 2
		row := X.RawRowView(i)
		row[0] = 1
		c := 1
		for j := 0; j < sites-1; j++ {
			row[c] = sc(site, sites, j)
			c++
		}
		for j := 0; j < trts-1; j++ {
			row[c] = sc(trt, trts, j)
			c++
		}
		row[c] = sc(tm, 2, 0)
		c++
		for j := 0; j < trts-1; j++ {
			row[c] = sc(trt, trts, j) * sc(tm, 2, 0)
			c++
		}
		y[i] = 5 + 0.1*float64(site) + 0.5*float64(trt) + 0.3*float64(tm) + u[pl] + rng.NormFloat64()
	}
	terms := [][]int{{}, {}, {}, {}}
	for j := 1; j < sites; j++ {
		terms[0] = append(terms[0], j)
	}
	terms[1] = []int{sites, sites + 1}
	terms[2] = []int{sites + 2}
	terms[3] = []int{sites + 3, sites + 4}
	return y, X, []Grouping{{Name: "plot", Index: plot, Levels: plots}}, terms
}

// crossedTrial builds sites x genotypes x reps with fixed rep and random
// site, genotype and site:genotype. Seeded, invented data.
func crossedTrial(sites, genos, reps int) ([]float64, *mat.Dense, []Grouping, [][]int) {
	rng := rand.New(rand.NewPCG(uint64(sites*genos), 7))
	n := sites * genos * reps
	X := mat.NewDense(n, reps, nil)
	y := make([]float64, n)
	si, gi, sg := make([]int, n), make([]int, n), make([]int, n)
	us := make([]float64, sites)
	ug := make([]float64, genos)
	usg := make([]float64, sites*genos)
	for i := range us {
		us[i] = 2 * rng.NormFloat64()
	}
	for i := range ug {
		ug[i] = rng.NormFloat64()
	}
	for i := range usg {
		usg[i] = 0.5 * rng.NormFloat64()
	}
	i := 0
	for s := 0; s < sites; s++ {
		for g := 0; g < genos; g++ {
			for r := 0; r < reps; r++ {
				row := X.RawRowView(i)
				row[0] = 1
				for j := 0; j < reps-1; j++ {
					switch {
					case r == reps-1:
						row[1+j] = -1
					case r == j:
						row[1+j] = 1
					}
				}
				si[i], gi[i], sg[i] = s, g, s*genos+g
				y[i] = 10 + 0.2*float64(r) + us[s] + ug[g] + usg[s*genos+g] + rng.NormFloat64()
				i++
			}
		}
	}
	var rep []int
	for j := 1; j < reps; j++ {
		rep = append(rep, j)
	}
	g := []Grouping{{Name: "site", Index: si, Levels: sites}, {Name: "genotype", Index: gi, Levels: genos},
		{Name: "site:genotype", Index: sg, Levels: sites * genos}}
	return y, X, g, [][]int{rep}
}

// BenchmarkRepeatedMeasures: fit + Satterthwaite + Type III table.
func BenchmarkRepeatedMeasures(b *testing.B) {
	for _, n := range []int{1000, 10000, 100000, 1000000} {
		b.Run(fmt.Sprintf("N=%d", n), func(b *testing.B) {
			y, X, g, terms := repeatedMeasures(n)
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				fit, err := Fit(y, X, g, nil)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := fit.TermTests(terms, 3, Satterthwaite); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkRepeatedMeasuresKR: fit + Kenward-Roger Type III table.
func BenchmarkRepeatedMeasuresKR(b *testing.B) {
	for _, n := range []int{100000, 1000000} {
		b.Run(fmt.Sprintf("N=%d", n), func(b *testing.B) {
			y, X, g, terms := repeatedMeasures(n)
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				fit, err := Fit(y, X, g, nil)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := fit.TermTests(terms, 3, KenwardRoger); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkCrossed: site x genotype x 3 reps, fit + Satterthwaite + Type III.
func BenchmarkCrossed(b *testing.B) {
	for _, sz := range [][2]int{{50, 200}, {50, 1000}} {
		b.Run(fmt.Sprintf("%dx%dx3", sz[0], sz[1]), func(b *testing.B) {
			y, X, g, terms := crossedTrial(sz[0], sz[1], 3)
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				fit, err := Fit(y, X, g, nil)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := fit.TermTests(terms, 3, Satterthwaite); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkCrossedKR: site x genotype x 3 reps, fit + Kenward-Roger Type III.
func BenchmarkCrossedKR(b *testing.B) {
	for _, sz := range [][2]int{{50, 200}, {50, 1000}} {
		b.Run(fmt.Sprintf("%dx%dx3", sz[0], sz[1]), func(b *testing.B) {
			y, X, g, terms := crossedTrial(sz[0], sz[1], 3)
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				fit, err := Fit(y, X, g, nil)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := fit.TermTests(terms, 3, KenwardRoger); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
