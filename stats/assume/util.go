package assume

import (
	"fmt"
	"math"

	"furrow/stats/internal/fsum"
)

// checkFinite returns an error naming the first value that is NaN or
// infinite.
func checkFinite(x []float64) error {
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("value %d is %v", i+1, v)
		}
	}
	return nil
}

// norm2 returns the Euclidean norm of x without overflow.
func norm2(x []float64) float64 {
	var scale, ssq float64 = 0, 1
	for _, v := range x {
		if v == 0 {
			continue
		}
		av := math.Abs(v)
		if scale < av {
			ssq = 1 + ssq*(scale/av)*(scale/av)
			scale = av
		} else {
			ssq += (av / scale) * (av / scale)
		}
	}
	return scale * math.Sqrt(ssq)
}

// centredSS returns the mean and the sum of squared deviations of x by two
// passes with a correction term.
func centredSS(x []float64) (mean, ss float64) {
	mean = fsum.Mean(x)
	var s, c float64
	for _, v := range x {
		d := v - mean
		s += d * d
		c += d
	}
	return mean, s - c*c/float64(len(x))
}
