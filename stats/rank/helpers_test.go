package rank

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"strconv"
	"testing"

	"furrow/internal/testkit"
)

func readCSV(t *testing.T, rel string) [][]string {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(testkit.ReadShared(t, rel))).ReadAll()
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

func altOf(s string) Alternative {
	switch s {
	case "greater":
		return Greater
	case "less":
		return Less
	}
	return TwoSided
}
