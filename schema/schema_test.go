package schema

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"strings"
	"testing"

	"gopkg.in/yaml.v3"
)

var update = flag.Bool("update", false, "rewrite the plan reference between the markers in ../README.md")

func TestPlanSchemaCompiles(t *testing.T) {
	s := Plan()
	if s.ID() != PlanID {
		t.Fatalf("$id = %q, want PlanID %q", s.ID(), PlanID)
	}
	if !bytes.Equal(PlanJSON(), s.JSON()) || len(PlanJSON()) == 0 {
		t.Fatal("PlanJSON differs from the embedded schema")
	}
	disk, err := os.ReadFile(PlanFile)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(disk, PlanJSON()) {
		t.Fatal("embedded schema differs from plan.schema.json")
	}
	if _, err := ByName("no-such.schema.json"); err == nil {
		t.Fatal("ByName of a missing schema: no error")
	}
	var doc map[string]any
	_ = json.Unmarshal(disk, &doc)
	if doc["$schema"] != "https://json-schema.org/draft/2020-12/schema" {
		t.Errorf("$schema = %v, want draft 2020-12", doc["$schema"])
	}
}

// TestEveryPropertyHasDescription walks every "properties" object of the
// schema, including $defs: each property must say what it is for.
func TestEveryPropertyHasDescription(t *testing.T) {
	var doc map[string]any
	if err := json.Unmarshal(PlanJSON(), &doc); err != nil {
		t.Fatal(err)
	}
	defs, _ := doc["$defs"].(map[string]any)
	n := 0
	var walk func(path string, v any)
	walk = func(path string, v any) {
		switch x := v.(type) {
		case map[string]any:
			if props, ok := x["properties"].(map[string]any); ok {
				for k, p := range props {
					pm, _ := p.(map[string]any)
					d, _ := pm["description"].(string)
					if ref, ok := pm["$ref"].(string); ok && d == "" {
						def, _ := defs[strings.TrimPrefix(ref, "#/$defs/")].(map[string]any)
						d, _ = def["description"].(string)
					}
					if strings.TrimSpace(d) == "" {
						t.Errorf("property %s.%s has no description", path, k)
					}
					n++
				}
			}
			for k, c := range x {
				walk(path+"/"+k, c)
			}
		case []any:
			for _, c := range x {
				walk(path, c)
			}
		}
	}
	walk("", doc)
	if n < 80 {
		t.Fatalf("only %d properties found", n)
	}
}

func validateText(t *testing.T, src string) []Problem {
	t.Helper()
	var n yaml.Node
	if err := yaml.Unmarshal([]byte(src), &n); err != nil {
		t.Fatal(err)
	}
	return Plan().ValidateYAML(&n)
}

const minimal = `furrow: 1
trial: {id: T, version: "1"}
data: {file: d.csv}
columns:
  - {name: y, role: response}
endpoints:
  - id: e
    response: y
    primary: true
    not-computable: fail
    steps:
      - {id: s, model: welch, compare: y}
`

// TestProblemWording checks that schema failures are placed at the YAML
// value and worded in our own terms (expected texts written by hand).
func TestProblemWording(t *testing.T) {
	if ps := validateText(t, minimal); len(ps) != 0 {
		t.Fatalf("minimal plan: %+v", ps)
	}
	cases := []struct {
		name, from, to string
		line, col      int
		path, code     string
		summary        string
	}{
		{"enum", "role: response", "role: reponse", 5, 21, "columns[0].role", "not-allowed",
			`role must be one of response, treatment, factor, unit, repeat, block, site, covariate, label; got "reponse" (did you mean "response"?)`},
		{"unknown key", "{id: T,", "{idd: 1, id: T,", 2, 9, "trial.idd", "unknown-key",
			`unknown key "idd" in trial (did you mean "id"?)`},
		{"missing key", "data: {file: d.csv}", "data: {format: csv}", 3, 7, "data.file", "missing-key",
			`data is missing the required key "file"`},
		{"type", "columns:\n  - {name: y, role: response}", "columns: yes", 4, 10, "columns", "wrong-type",
			`columns must be a list; got "yes"`},
		{"empty value", "data: {file: d.csv}", "data: {file: d.csv, sheet: }", 3, 28, "data.sheet", "wrong-type",
			`sheet is empty; give it a value or remove the key`},
		{"range", "primary: true", "primary: true\n    alpha: 1.5", 10, 12, "endpoints[0].alpha", "out-of-range",
			`alpha must be between 0 and 1, both excluded; got 1.5`},
		{"list item type", "{id: s, model: welch, compare: y}", "{id: s, model: linear, fixed: [[y, {a: 1}]]}", 12, 44, "endpoints[0].steps[0].fixed[0][1]", "wrong-type",
			`fixed[0][1] must be text; got a set of keys`},
		{"delimiter", "data: {file: d.csv}", "data: {file: d.csv, delimiter: ';;'}", 3, 32, "data.delimiter", "too-many",
			`delimiter must be a single character; got ";;"`},
		{"duplicate level", "{name: y, role: response}", "{name: y, role: response, levels: [a, b, a]}", 5, 46, "columns[0].levels[2]", "duplicate",
			`levels lists "a" more than once`},
		{"date", `trial: {id: T, version: "1"}`, `trial: {id: T, version: "1", amendments: [{version: "1", date: 1/2/2026, reason: r}]}`, 2, 64, "trial.amendments[0].date", "bad-form",
			`date must be a date written YYYY-MM-DD; got "1/2/2026"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(minimal, c.from) {
				t.Fatalf("fixture lacks %q", c.from)
			}
			ps := validateText(t, strings.Replace(minimal, c.from, c.to, 1))
			if len(ps) != 1 {
				t.Fatalf("got %d problems: %+v", len(ps), ps)
			}
			p := ps[0]
			if p.Line != c.line || p.Column != c.col || p.Path != c.path || p.Code != c.code || !strings.HasPrefix(p.Summary, c.summary) {
				t.Errorf("got %d:%d %s [%s] %q\nwant %d:%d %s [%s] %q", p.Line, p.Column, p.Path, p.Code, p.Summary, c.line, c.col, c.path, c.code, c.summary)
			}
			if strings.Contains(p.Summary, "#/") || strings.Contains(p.Summary, "jsonschema") {
				t.Errorf("library wording leaked: %q", p.Summary)
			}
		})
	}
}

func TestFromYAML(t *testing.T) {
	var n yaml.Node
	src := "a: 1\nb: [x, 2.5, true, null, 2026-01-02]\n'c/d': {e: '3'}\n"
	if err := yaml.Unmarshal([]byte(src), &n); err != nil {
		t.Fatal(err)
	}
	v, ix, ps := FromYAML(&n)
	if len(ps) != 0 {
		t.Fatalf("problems: %+v", ps)
	}
	got, _ := json.Marshal(v)
	if want := `{"a":1,"b":["x",2.5,true,null,"2026-01-02"],"c/d":{"e":"3"}}`; string(got) != want {
		t.Fatalf("got %s, want %s", got, want)
	}
	if w := ix["/c~1d/e"]; w.Line != 3 || w.Column != 12 || w.KeyLine != 3 || w.KeyColumn != 9 {
		t.Errorf("position of /c~1d/e = %+v", w)
	}
	if w := ix["/b/4"]; w.Line != 2 || w.Column != 25 {
		t.Errorf("position of /b/4 = %+v", w)
	}
}

func TestREADMEReference(t *testing.T) {
	const begin, end = "<!-- plan-reference:begin -->", "<!-- plan-reference:end -->"
	src, err := os.ReadFile("../README.md")
	if err != nil {
		t.Skipf("no README.md beside the module root: %v", err)
	}
	text := string(src)
	i, j := strings.Index(text, begin), strings.Index(text, end)
	if i < 0 || j < i {
		t.Skip("README.md has no plan-reference markers yet")
	}
	want := "\n" + Reference() + "\n"
	got := text[i+len(begin) : j]
	if got == want {
		return
	}
	if *update {
		out := text[:i+len(begin)] + want + text[j:]
		if err := os.WriteFile("../README.md", []byte(out), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	t.Errorf("README.md plan reference is stale; regenerate with: go test ./schema -run TestREADMEReference -update")
}
