package assume

import (
	"encoding/csv"
	"encoding/json"
	"strconv"
	"testing"

	"furrow/internal/testkit"
)

// readCSV returns the header and rows of a CSV file in the shared folder.
func readCSV(t *testing.T, rel string) ([]string, [][]string) {
	t.Helper()
	r := csv.NewReader(bytesReader(testkit.ReadShared(t, rel)))
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
