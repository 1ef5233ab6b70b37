package multcomp

import (
	"testing"

	"furrow/internal/testkit"
)

// R 4.2.2 stats::p.adjust (testdata/ref.R, 17 digits): the same step
// formulas, so the values agree to rounding: 1.9e-15 relative at worst
// (84 of 96 exactly), measured on linux/amd64; relative tolerance 5e-14.
func TestAdjustAgainstR(t *testing.T) {
	for name, c := range loadRef(t).PAdjust {
		in := append([]float64(nil), c.P...)
		for _, m := range []struct {
			method Method
			want   []float64
		}{{Bonferroni, c.Bonferroni}, {Holm, c.Holm}, {Hochberg, c.Hochberg}, {BH, c.BH}} {
			got, err := Adjust(c.P, m.method)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(m.want) {
				t.Fatalf("set %s, %s: %d adjusted values, R has %d", name, m.method, len(got), len(m.want))
			}
			for i := range got {
				if !testkit.RelClose(got[i], m.want[i], 5e-14) {
					t.Errorf("set %s, %s: p[%d] = %.15g, R p.adjust %.15g", name, m.method, i, got[i], m.want[i])
				}
			}
		}
		for i := range in {
			if in[i] != c.P[i] {
				t.Fatalf("set %s: input modified", name)
			}
		}
	}
}

func TestAdjustErrors(t *testing.T) {
	if _, err := Adjust([]float64{0.1, 1.2}, Holm); err == nil {
		t.Error("p > 1 accepted")
	}
	if _, err := Adjust([]float64{0.1}, Method("sidak-ish")); err == nil {
		t.Error("unknown method accepted")
	}
	if _, err := Adjust(nil, Method("sidak-ish")); err == nil {
		t.Error("unknown method accepted on an empty family")
	}
	got, err := Adjust(nil, BH)
	if err != nil || len(got) != 0 {
		t.Errorf("empty input: %v %v", got, err)
	}
}
