package multcomp_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/multcomp"
)

// Two primary hypotheses, each with a secondary one tested after it; a
// rejected pair passes its level to the other primary hypothesis.
func ExampleGraph_Test() {
	g := mat.NewDense(4, 4, []float64{
		0, 0, 1, 0,
		0, 0, 0, 1,
		0, 1, 0, 0,
		1, 0, 0, 0,
	})
	gr, err := multcomp.NewGraph([]float64{0.5, 0.5, 0, 0}, g)
	if err != nil {
		fmt.Println(err)
		return
	}
	r, err := gr.Test([]float64{0.01, 0.005, 0.015, 0.022}, 0.025)
	if err != nil {
		fmt.Println(err)
		return
	}
	for n, s := range r.Steps {
		fmt.Printf("step %d: reject H%d (p %.4f <= %.4f)", n+1, s.Rejected+1, s.P, s.Level)
		for l, a := range s.Passed {
			if a > 0 {
				fmt.Printf(", %.4f to H%d", a, l+1)
			}
		}
		fmt.Printf("; weights %.2f\n", s.Weights)
	}
	fmt.Printf("adjusted %.3f\n", r.Adjusted)
	// Output:
	// step 1: reject H2 (p 0.0050 <= 0.0125), 0.0125 to H4; weights [0.50 0.00 0.00 0.50]
	// step 2: reject H1 (p 0.0100 <= 0.0125), 0.0125 to H3; weights [0.00 0.00 0.50 0.50]
	// adjusted [0.020 0.010 0.030 0.030]
}
