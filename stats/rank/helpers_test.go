package rank

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// sharedRef is the shared reference folder beside the checkout.
const sharedRef = "../../../shared/reference"

func readShared(t *testing.T, rel string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(sharedRef, rel))
	if err != nil {
		if os.IsNotExist(err) {
			t.Skipf("shared reference data not available (%s): %v", rel, err)
		}
		t.Fatalf("reading %s: %v", rel, err)
	}
	return b
}

func readCSV(t *testing.T, rel string) [][]string {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(readShared(t, rel))).ReadAll()
	if err != nil {
		t.Fatalf("parsing %s: %v", rel, err)
	}
	return recs[1:]
}

func parseF(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("parsing %q: %v", s, err)
	}
	return v
}

// groupBy collects column val of rows by column key, in order of first
// appearance.
func groupBy(t *testing.T, rows [][]string, key, val int) [][]float64 {
	t.Helper()
	idx := map[string]int{}
	var out [][]float64
	for _, r := range rows {
		g, ok := idx[r[key]]
		if !ok {
			g = len(out)
			idx[r[key]] = g
			out = append(out, nil)
		}
		out[g] = append(out[g], parseF(t, r[val]))
	}
	return out
}

func decodeJSON(t *testing.T, b []byte, v any) {
	t.Helper()
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("decoding json: %v", err)
	}
}

// near: relative tolerance, absolute when |want| < 1.
func near(got, want, tol float64) bool {
	if math.IsNaN(got) || math.IsNaN(want) {
		return false
	}
	d := math.Abs(got - want)
	return d <= tol || d <= tol*math.Abs(want)
}

// relNear is purely relative, for p-values.
func relNear(got, want, tol float64) bool {
	if want == 0 {
		return got == 0
	}
	return math.Abs(got-want) <= tol*math.Abs(want)
}

func altOf(s string) Alternative {
	switch s {
	case "greater":
		return Greater
	case "less":
		return Less
	}
	return TwoSided
}
