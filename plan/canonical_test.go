package plan_test

import (
	"furrow/checker/method"
	"furrow/plan"

	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"reflect"
	"strings"
	"testing"
)

func mustParse(t *testing.T, name string, src []byte) *plan.Plan {
	t.Helper()
	p, ds, err := plan.Parse(name, src, method.Default)
	if err != nil || p == nil {
		t.Fatalf("%s: err %v\n%s", name, err, formatDiags(ds))
	}
	return p
}

// restyled is testdata/base.yaml rewritten: flow style where it was
// block and block where it was flow, keys reordered, comments added and
// removed, scalars quoted differently, defaults written out. Its meaning
// is identical, so its hash must be.
const restyled = `furrow: 1   # format
columns:
- {role: block, name: block, levels: ["B1", 'B2', B3]}
- name: "plot"
  role: unit
- control: control
  levels:
  - control
  - product-a
  - "product-b"
  name: treatment
  role: treatment
- {name: time, role: repeat, levels: [before, after]}
- {name: count, role: response, min: 0.0, max: 5e3}
data: {file: 'plots.csv', format: csv, delimiter: ",", decimal: ".", missing: [""]}
trial:
  version: '1.1'
  title: "Demonstration trial"
  id: DEMO-1
  amendments: [{reason: clarify the exclusion rule, date: "2026-02-01", version: "1.1"}]
design: {least-units: {below: stop, count: 2, per: cell}, replicates: 3, layout: rcbd}
exclusions: [{reason: no baseline count, id: no-baseline, drop: unit, when: missing, column: count, at: before}]
endpoints:
- steps:
  - model: mixed
    id: mixed-log
    outcome:
      derive: raw
    transform: {offset: 1.0, kind: log-offset}
    fixed:
    - block
    - treatment
    - time
    - - treatment
      - time
    random: [[plot]]
    estimation: reml
    df: satterthwaite
    anova: 3
    checks: [{test: shapiro-wilk, fail-below: 5e-2}]
    on-fail: change-ranks
  - {id: change-ranks, model: kruskal-wallis, compare: treatment, outcome: {derive: change, to: after, from: before}, transform: {kind: none},
     answers: [{estimate: hodges-lehmann, hypothesis: versus-control, adjust: holm}]}
  alpha: 0.05
  id: density
  primary: true
  not-computable: fail
  response: count
  hypotheses:
  - {kind: versus-control, id: versus-control, sides: less, factor: treatment, adjust: dunnett, alpha: 0.050}
`

func TestHashIgnoresStyle(t *testing.T) {
	base := mustParse(t, "base.yaml", readFixture(t, basePlan))
	other := mustParse(t, "restyled.yaml", []byte(restyled))
	if plan.Hash(base) != plan.Hash(other) {
		t.Fatalf("restyled plan hashes differently\nbase:     %s\nrestyled: %s", plan.Canonical(base), plan.Canonical(other))
	}
	// A plan read from a different file name hashes the same.
	again := mustParse(t, "elsewhere/plan.yaml", readFixture(t, basePlan))
	if plan.Hash(again) != plan.Hash(base) {
		t.Fatal("file name changed the hash")
	}
}

// TestHashDefinition rebuilds the hash from its definition in doc.go.
func TestHashDefinition(t *testing.T) {
	p := mustParse(t, "base.yaml", readFixture(t, basePlan))
	c := plan.Canonical(p)
	sum := sha256.Sum256(c)
	if got, want := plan.Hash(p), "sha256:"+hex.EncodeToString(sum[:]); got != want {
		t.Fatalf("Hash = %s, want %s", got, want)
	}
	if !json.Valid(c) || strings.ContainsAny(string(c), "\n\t") {
		t.Fatalf("canonical form is not compact JSON: %s", c)
	}
	// Key order: the top-level keys appear in the documented order.
	order := []string{`"furrow"`, `"trial"`, `"data"`, `"columns"`, `"design"`, `"exclusions"`, `"endpoints"`}
	last := -1
	for _, k := range order {
		i := strings.Index(string(c), k)
		if i <= last {
			t.Fatalf("key %s out of order in %s", k, c)
		}
		last = i
	}
	if string(plan.Canonical(p)) != string(c) {
		t.Fatal("canonical form not deterministic")
	}
}

// TestHashSeesEveryField changes each leaf field of a plan that uses every
// key (testdata/full.yaml) and checks that the hash changes each time.
func TestHashSeesEveryField(t *testing.T) {
	src := readFixture(t, "testdata/full.yaml")
	base := plan.Hash(mustParse(t, "full.yaml", src))
	seen := map[string]string{base: "(unchanged)"}
	var paths []string
	collectLeaves(reflect.ValueOf(mustParse(t, "full.yaml", src)).Elem(), "", &paths)
	if len(paths) < 80 {
		t.Fatalf("only %d leaf fields found; the walk is broken", len(paths))
	}
	for _, path := range paths {
		p := mustParse(t, "full.yaml", src)
		mutate(reflect.ValueOf(p).Elem(), path)
		h := plan.Hash(p)
		if prev, dup := seen[h]; dup {
			t.Errorf("changing %s gives the same hash as %s", path, prev)
		}
		seen[h] = path
	}
}

// skipField lists fields that are not part of the meaning.
func skipField(name string) bool {
	switch name {
	case "Pos", "Where", "Path", "HasOffset", "HasLambda", "HasLower", "HasUpper":
		return true
	}
	return false
}

func collectLeaves(v reflect.Value, path string, out *[]string) {
	switch v.Kind() {
	case reflect.Struct:
		for i := 0; i < v.NumField(); i++ {
			f := v.Type().Field(i)
			if skipField(f.Name) {
				continue
			}
			collectLeaves(v.Field(i), path+"."+f.Name, out)
		}
	case reflect.Pointer:
		if v.IsNil() {
			*out = append(*out, path) // absent: set it
			return
		}
		collectLeaves(v.Elem(), path, out)
	case reflect.Slice:
		*out = append(*out, path+"#append")
		for i := 0; i < v.Len(); i++ {
			collectLeaves(v.Index(i), fmt.Sprintf("%s[%d]", path, i), out)
		}
	default:
		*out = append(*out, path)
	}
}

func mutate(v reflect.Value, path string) {
	path = strings.TrimPrefix(path, ".")
	if path == "" || path == "#append" {
		switch v.Kind() {
		case reflect.String:
			v.SetString(v.String() + "x")
		case reflect.Int:
			v.SetInt(v.Int() + 7)
		case reflect.Float64:
			v.SetFloat(v.Float() + 0.125)
		case reflect.Bool:
			v.SetBool(!v.Bool())
		case reflect.Pointer:
			if v.IsNil() {
				v.Set(reflect.New(v.Type().Elem()))
			} else {
				mutate(v.Elem(), "")
			}
		case reflect.Slice:
			v.Set(reflect.Append(v, reflect.Zero(v.Type().Elem())))
		}
		return
	}
	switch v.Kind() {
	case reflect.Pointer:
		if v.IsNil() {
			v.Set(reflect.New(v.Type().Elem()))
			return
		}
		mutate(v.Elem(), path)
	case reflect.Struct:
		name, rest, _ := strings.Cut(path, ".")
		idx := ""
		if i := strings.IndexAny(name, "[#"); i >= 0 {
			name, idx = name[:i], name[i:]
			rest = strings.TrimPrefix(idx+"."+rest, ".")
			if strings.HasSuffix(rest, ".") {
				rest = strings.TrimSuffix(rest, ".")
			}
		}
		mutate(v.FieldByName(name), rest)
	case reflect.Slice:
		if strings.HasPrefix(path, "#append") {
			mutate(v, "#append")
			return
		}
		var i int
		var rest string
		fmt.Sscanf(path, "[%d]", &i)
		rest = path[strings.IndexByte(path, ']')+1:]
		mutate(v.Index(i), rest)
	}
}
