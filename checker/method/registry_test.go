package method

import (
	"encoding/json"
	"flag"
	"slices"
	"strings"
	"testing"

	"furrow/plan"
	"furrow/schema"
)

// update is accepted, and ignored, so that go test ./checker/... -args
// -update also runs this package's tests: it has no golden files.
var _ = flag.Bool("update", false, "ignored: this package has no golden files")

// schemaEnum returns the enum of a property of a definition in the plan
// schema, in schema order.
func schemaEnum(t *testing.T, def, prop string) []string {
	t.Helper()
	var s struct {
		Defs map[string]struct {
			Properties map[string]struct {
				Enum []any `json:"enum"`
			} `json:"properties"`
		} `json:"$defs"`
	}
	if err := json.Unmarshal(schema.PlanJSON(), &s); err != nil {
		t.Fatal(err)
	}
	var e []string
	for _, v := range s.Defs[def].Properties[prop].Enum {
		if name, ok := v.(string); ok {
			e = append(e, name)
		}
	}
	if len(e) == 0 {
		t.Fatalf("plan schema has no enum at $defs/%s/properties/%s", def, prop)
	}
	return e
}

// TestRegistryMatchesSchema: the schema's enums are the registry's names,
// in the same order, so that a method added to one and not the other is
// caught.
func TestRegistryMatchesSchema(t *testing.T) {
	if got, want := Default.Models(), schemaEnum(t, "step", "model"); !slices.Equal(got, want) {
		t.Errorf("registry models %v, plan schema step.model enum %v", got, want)
	}
	if got, want := Default.Checks(), schemaEnum(t, "check", "test"); !slices.Equal(got, want) {
		t.Errorf("registry checks %v, plan schema check.test enum %v", got, want)
	}
}

// TestValuesComplete: every value has its words, and its doc is one
// paragraph that names a source (a year in brackets or after a name).
func TestValuesComplete(t *testing.T) {
	for _, c := range Default.AllChecks() {
		if strings.Contains(c.Doc, "\n") || !hasYear(c.Doc) {
			t.Errorf("check %s: doc must be one paragraph citing its source: %q", c.Name, c.Doc)
		}
		if got, ok := Default.Check(c.Name); !ok || got.Grouped != (c.Target == ResidualsByGroup) {
			t.Errorf("check %s: rules %+v do not follow its target", c.Name, got)
		}
	}
	for _, m := range Default.AllModels() {
		if strings.Contains(m.Doc, "\n") || !hasYear(m.Doc) {
			t.Errorf("model %s: doc must be one paragraph citing its source: %q", m.Name, m.Doc)
		}
		r := m.Rules
		if r.Model != (r.Fixed == plan.Required) {
			t.Errorf("model %s: a model fit takes fixed terms, a model-free step none", m.Name)
		}
		if r.Model && m.Pairing(&plan.Step{}) != Contrasts {
			t.Errorf("model %s fits a model but does not compare by its contrasts", m.Name)
		}
		if !r.Model && (len(r.DF) > 0 || len(r.Estimation) > 0 || r.Anova) {
			t.Errorf("model %s: options apply only to model fits", m.Name)
		}
		if s := m.Describe(&plan.Step{Model: m.Name, Compare: "trt", Within: "block", Fixed: []plan.Term{{Columns: []string{"trt"}}}}, "yield"); !strings.Contains(s, "yield") || !strings.HasSuffix(s, ".") {
			t.Errorf("model %s: description %q does not name the analysed quantity as a sentence", m.Name, s)
		}
	}
}

func hasYear(s string) bool {
	for i := 0; i+4 <= len(s); i++ {
		if (s[i] == '1' && s[i+1] == '9') || (s[i] == '2' && s[i+1] == '0') {
			if '0' <= s[i+2] && s[i+2] <= '9' && '0' <= s[i+3] && s[i+3] <= '9' {
				return true
			}
		}
	}
	return false
}

// TestNewRegistryRefusesDuplicates: a name registered twice is a build error.
func TestNewRegistryRefusesDuplicates(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("a check registered twice was accepted")
		}
	}()
	NewRegistry([]*Check{ShapiroWilk, ShapiroWilk}, nil)
}
