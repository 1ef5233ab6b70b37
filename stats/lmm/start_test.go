package lmm

import (
	"fmt"
	"testing"

	"furrow/internal/testkit"
)

// TestStartBalanced: for balanced data the analysis-of-variance estimates
// of Henderson's Method 1 are the REML estimates when none is negative
// (Searle, Casella & McCulloch 1992, ch. 4 and 6; recalled), so the moment
// start of a balanced crossed trial with its interaction is the optimum.
func TestStartBalanced(t *testing.T) {
	y, X, g, _ := crossedTrial(6, 9, 2)
	fit, err := Fit(y, X, g, nil)
	if err != nil {
		t.Fatal(err)
	}
	if fit.Boundary {
		t.Skip("seeded data gave a boundary fit")
	}
	st := fit.sys.startTheta()
	for k := range st {
		testkit.CheckWithin(t, fmt.Sprintf("start theta_%d", k), st[k], fit.theta[k], 1e-8, 0)
	}
}
