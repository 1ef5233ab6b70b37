package rank_test

import (
	"fmt"

	"furrow/stats/rank"
)

// Three invented treatments of a small plot trial; R 4.2.2 kruskal.test
// gives H = 7.538462, p = 0.0230698.
func ExampleKruskalWallis() {
	r, err := rank.KruskalWallis([][]float64{
		{12.1, 13.4, 11.8, 12.9},
		{14.2, 15.1, 13.9, 14.8},
		{12.0, 12.6, 13.1, 11.5},
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("H = %.4f, df = %g, p = %.4f\n", r.H, r.DF, r.P)
	// Output: H = 7.5385, df = 2, p = 0.0231
}
