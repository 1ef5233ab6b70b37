package assume

import (
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

// readShared reads a file under the shared reference folder or skips the
// test when the folder is absent.
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

// readCSV returns the header and rows of a CSV file in the shared folder.
func readCSV(t *testing.T, rel string) ([]string, [][]string) {
	t.Helper()
	r := csv.NewReader(bytesReader(readShared(t, rel)))
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatalf("parsing %s: %v", rel, err)
	}
	return recs[0], recs[1:]
}

func parseF(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("parsing %q: %v", s, err)
	}
	return v
}

func decodeJSON(t *testing.T, b []byte, v any) {
	t.Helper()
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("decoding json: %v", err)
	}
}

// near reports whether got is within tol of want relatively, or absolutely
// when |want| < 1.
func near(got, want, tol float64) bool {
	if math.IsNaN(got) || math.IsNaN(want) {
		return false
	}
	d := math.Abs(got - want)
	return d <= tol || d <= tol*math.Abs(want)
}

// relNear is a purely relative comparison, for p-values.
func relNear(got, want, tol float64) bool {
	if want == 0 {
		return got == 0
	}
	return math.Abs(got-want) <= tol*math.Abs(want)
}
