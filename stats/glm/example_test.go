package glm_test

import (
	"errors"
	"fmt"
	"math"

	"furrow/stats/design"
	"furrow/stats/glm"
)

// Aphid counts on 12 plots of different sizes: 4 treatments in 3 blocks,
// the log of the plot area as an offset (invented numbers; R's
// glm(y ~ block + trt + offset(log(area)), poisson) prints the same table).
func Example() {
	trt := design.Factor{Name: "trt", Levels: []string{"control", "A", "B", "C"}, Codes: []int{0, 1, 2, 3, 0, 1, 2, 3, 0, 1, 2, 3}}
	block := design.Factor{Name: "block", Levels: []string{"1", "2", "3"}, Codes: []int{0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2}}
	area := []float64{10, 12, 9, 11, 10, 10, 12, 9, 11, 10, 10, 12}
	aphids := []float64{48, 30, 11, 40, 61, 22, 15, 30, 52, 27, 9, 49}
	fr, _ := design.NewFrame([]design.Factor{trt, block}, nil)
	m, _ := design.Build(fr, design.Spec{Intercept: true, Terms: []design.Term{{Vars: []string{"block"}}, {Vars: []string{"trt"}}}})
	off := make([]float64, len(area))
	for i, a := range area {
		off[i] = math.Log(a)
	}
	fit, err := glm.FitModel(m, aphids, glm.Poisson, &glm.Options{Offset: off})
	if err != nil {
		fmt.Println(err)
		return
	}
	for j, name := range fit.Names {
		fmt.Printf("%-12s %7.4f %6.4f %7.2f\n", name, fit.Estimate[j], fit.StdErr[j], fit.Stat[j])
	}
	d := fit.DispersionTest()
	fmt.Printf("deviance %.3f on %d df, X²/df %.3f (p %.3f)\n", fit.Deviance, fit.DFResid, d.Ratio, d.P)

	// Treatment B cleared every plot: its effect has no finite estimate.
	_, err = glm.FitModel(m, []float64{48, 30, 0, 40, 61, 22, 0, 30, 52, 27, 0, 49}, glm.Poisson, &glm.Options{Offset: off})
	var se *glm.SeparationError
	if errors.As(err, &se) {
		fmt.Println(se.Coefs, se.Signs, se.Rows)
	}
	// Output:
	// (intercept)   1.6189 0.1080   14.99
	// block[2]      0.0626 0.1250    0.50
	// block[3]      0.0225 0.1228    0.18
	// trt[A]       -0.7421 0.1375   -5.40
	// trt[B]       -1.5294 0.1866   -8.19
	// trt[C]       -0.3319 0.1210   -2.74
	// deviance 4.066 on 6 df, X²/df 0.673 (p 0.672)
	// [trt[B]] [-1] [2 6 10]
}
