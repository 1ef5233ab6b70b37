package verify

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
)

// TestCloseEnough pins the number comparison: relative at every scale,
// signs exact, a zero matched only by a zero.
func TestCloseEnough(t *testing.T) {
	for _, c := range []struct {
		a, b float64
		want bool
	}{
		{1, 1, true},
		{1, 1 + 1e-12, true},
		{1, 1 + 1e-8, false},
		{1e-11, 1e-11 * (1 + 1e-12), true},
		{1e-11, -1e-11, false},
		{2.5e-11, 2.6e-11, false},
		{1e-300, 2e-300, false},
		{1e12, 1e12 + 1, true},
		{1e12, 1e12 + 1e4, false},
		{0, 0, true},
		{0, math.Copysign(0, -1), true},
		{0, 1e-12, false},
		{1e-12, 0, false},
		{0, 1e-301, true},
	} {
		if got := closeEnough(c.a, c.b, DefaultRelTol); got != c.want {
			t.Errorf("closeEnough(%g, %g) = %v, want %v", c.a, c.b, got, c.want)
		}
	}
}

// TestTinyResponseNegatedIsCaught runs the cascade on a response measured
// around 1e-11, negates every estimate in the record, recomputes the
// content hash and requires verify to name every negated field: an
// absolute floor of 1e-9 would let all of them pass.
func TestTinyResponseNegatedIsCaught(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(7, 11))
	var b strings.Builder
	b.WriteString("unit,treatment,y\n")
	trts := []string{"control", "a", "b"}
	for i := 0; i < 18; i++ {
		tr := trts[i%3]
		mu := map[string]float64{"control": 20, "a": 26, "b": 31}[tr]
		fmt.Fprintf(&b, "u%d,%s,%.6g\n", i+1, tr, 1e-11*mu*math.Exp(0.15*rng.NormFloat64()))
	}
	fixture.Write(t, filepath.Join(dir, "data.csv"), b.String())
	pp := filepath.Join(dir, "plan.yaml")
	plan := fmt.Sprintf(fixture.CascadePlan, "1e-12", "1e-12", "1e-12")
	plan = strings.Replace(plan, "min: 1\n    max: 1000", "min: 1e-12\n    max: 1e-8", 1)
	fixture.Write(t, pp, plan)
	fixture.Register(t, pp, fixture.T0)
	out := filepath.Join(dir, "out")
	raw := writeRun(t, pp, out, fixture.T0.Add(time.Hour), nil)
	opt := VerifyOptions{Dir: out, Tool: record.ToolInfo{Version: "test"}}
	if rep, _ := verifyCodes(t, opt); len(rep.Deviations) != 0 {
		t.Fatalf("clean run: %+v", rep.Deviations)
	}

	doc := decodeRecord(t, raw)
	var negated []string
	fixture.WalkLeaves("", doc, func(path string, v any, set func(any)) {
		n, ok := v.(json.Number)
		if !ok || !strings.HasSuffix(path, ".estimate") {
			return
		}
		f, err := n.Float64()
		if err != nil || f == 0 {
			return
		}
		if math.Abs(f) > 1e-9 {
			t.Fatalf("%s = %s: the response is not at the scale of 1e-11", path, n)
		}
		set(json.Number(fmt.Sprint(-f)))
		negated = append(negated, path)
	})
	if len(negated) < 5 {
		t.Fatalf("only %d estimates found to negate: %v", len(negated), negated)
	}
	fixture.Write(t, filepath.Join(out, record.AuditFileName), string(reseal(t, doc)))
	rep, m := verifyCodes(t, opt)
	if rep.OK() {
		t.Fatalf("%d negated estimates passed verify", len(negated))
	}
	if m[DevRecordEdited] != nil {
		t.Fatalf("the content hash was recomputed, yet: %v", m[DevRecordEdited])
	}
	named := map[string]bool{}
	for _, f := range m[DevResultsDiffer] {
		named[f] = true
	}
	for _, p := range negated {
		if !named[p] {
			t.Errorf("negated %s not reported", p)
		}
	}
}

// decodeRecord decodes record bytes keeping numbers as their text.
func decodeRecord(t *testing.T, raw []byte) map[string]any {
	t.Helper()
	var doc any
	if err := decodeNumbers(raw, &doc); err != nil {
		t.Fatal(err)
	}
	return doc.(map[string]any)
}

// reseal encodes a decoded record as furrow does and stores a freshly
// computed content hash in it: what anyone can do to an unsigned record.
func reseal(t *testing.T, doc map[string]any) []byte {
	t.Helper()
	enc := func() []byte {
		var b bytes.Buffer
		e := json.NewEncoder(&b)
		e.SetEscapeHTML(false)
		e.SetIndent("", "  ")
		if err := e.Encode(doc); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	h, err := record.ContentHash(enc())
	if err != nil {
		t.Fatal(err)
	}
	doc["integrity"].(map[string]any)["content_hash"] = h
	return enc()
}
