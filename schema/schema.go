package schema

import (
	"bytes"
	"embed"
	"encoding/json"
	"fmt"
	"slices"
	"sync"

	"github.com/santhosh-tekuri/jsonschema/v5"
	"gopkg.in/yaml.v3"
)

// PlanID is the $id of the plan schema. It names format 1 of the plan
// language; a later, incompatible format gets a new id.
const PlanID = "https://furrow.invalid/schema/plan/v1.json"

// PlanVersion is the plan-format version the plan schema describes (the
// value of a plan's top-level "furrow" key).
const PlanVersion = 1

// PlanFile is the file name of the plan schema inside this package (and
// in the repository, schema/plan.schema.json).
const PlanFile = "plan.schema.json"

//go:embed *.schema.json
var files embed.FS

// Schema is one compiled, embedded JSON Schema (draft 2020-12) together
// with its decoded source, which is used to word validation problems.
type Schema struct {
	file string
	raw  []byte
	doc  map[string]any
	c    *jsonschema.Schema
}

var (
	cacheMu sync.Mutex
	cache   = map[string]func() *Schema{}
)

// ByName returns the embedded schema in the named file (for example
// "plan.schema.json"), compiled once. It returns an error when no such
// schema is embedded. It panics when the embedded schema itself does not
// compile, which is a build defect rather than a user error.
func ByName(file string) (*Schema, error) {
	cacheMu.Lock()
	get, ok := cache[file]
	if !ok {
		raw, err := files.ReadFile(file)
		if err != nil {
			cacheMu.Unlock()
			return nil, fmt.Errorf("no embedded schema named %q", file)
		}
		get = sync.OnceValue(func() *Schema { return mustCompile(file, raw) })
		cache[file] = get
	}
	cacheMu.Unlock()
	return get(), nil
}

// Plan returns the compiled plan schema.
func Plan() *Schema {
	s, err := ByName(PlanFile)
	if err != nil {
		panic("schema: " + err.Error())
	}
	return s
}

// PlanJSON returns the plan schema's JSON text, as embedded (a fresh copy).
func PlanJSON() []byte { return Plan().JSON() }

// JSON returns the schema's source text (a fresh copy).
func (s *Schema) JSON() []byte { return slices.Clone(s.raw) }

// ID returns the schema's $id.
func (s *Schema) ID() string {
	id, _ := s.doc["$id"].(string)
	return id
}

func mustCompile(file string, raw []byte) *Schema {
	var doc map[string]any
	if err := json.Unmarshal(raw, &doc); err != nil {
		panic(fmt.Sprintf("schema: embedded %s is not JSON: %v", file, err))
	}
	id, _ := doc["$id"].(string)
	if id == "" {
		panic(fmt.Sprintf("schema: embedded %s has no $id", file))
	}
	c := jsonschema.NewCompiler()
	c.Draft = jsonschema.Draft2020
	if err := c.AddResource(id, bytes.NewReader(raw)); err != nil {
		panic(fmt.Sprintf("schema: embedded %s: %v", file, err))
	}
	compiled, err := c.Compile(id)
	if err != nil {
		panic(fmt.Sprintf("schema: embedded %s does not compile: %v", file, err))
	}
	return &Schema{file: file, raw: raw, doc: doc, c: compiled}
}

// Problem is one way a document does not match a schema, worded for a
// person and placed at a line and column of the YAML source (0 when the
// document did not come from YAML).
type Problem struct {
	Line, Column int
	// Path is the location of the offending value, in the form
	// "endpoints[0].steps[1].fixed[2]"; empty for the document root.
	Path string
	// Code is a stable identifier of the kind of problem: "unknown-key",
	// "missing-key", "wrong-type", "not-allowed", "out-of-range",
	// "too-few", "too-many", "duplicate", "bad-form", "yaml-alias",
	// "yaml-tag", "yaml-duplicate-key", "not-finite", "too-deep",
	// "invalid".
	Code string
	// Summary is one plain lower-case sentence without a final period.
	Summary string
}

// ValidateJSON validates a decoded JSON value (as produced by
// encoding/json with UseNumber, or by this package's YAML conversion) and
// returns the problems in document order. Positions are zero.
func (s *Schema) ValidateJSON(v any) []Problem {
	return s.validate(v, nil)
}

// ValidateYAML converts a YAML document (a *yaml.Node of kind
// DocumentNode, or its content node) to JSON values and validates it.
// Each problem carries the line and column of the YAML node it concerns.
// Problems of the YAML itself that JSON cannot express (aliases, custom
// tags, duplicate keys, non-finite numbers) are reported too, and the
// schema is not applied to the values concerned.
func (s *Schema) ValidateYAML(doc *yaml.Node) []Problem {
	v, ix, probs := FromYAML(doc)
	probs = append(probs, s.validate(v, ix)...)
	return sortProblems(probs)
}
