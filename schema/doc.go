// Package schema holds furrow's JSON Schemas (draft 2020-12), embedded in
// the binary and compiled once, and turns schema failures into plain,
// positioned problems.
//
// # Schemas
//
// Every file named *.schema.json in this directory is embedded. [ByName]
// returns one compiled schema by file name; [Plan] is the plan schema
// (plan.schema.json, $id [PlanID], format [PlanVersion]), and [PlanJSON]
// its text, which `furrow schema` prints and which editors load through
// the comment "# yaml-language-server: $schema=../../schema/plan.schema.json"
// at the top of each example plan. An embedded schema that does not
// compile is a build defect and panics on first use; adding a schema is
// adding a file plus, if wanted, an accessor like Plan.
//
// # Validating YAML
//
// [FromYAML] converts a yaml.v3 node tree to JSON values and indexes the
// line and column of every value (and of every key) by its JSON pointer.
// It never follows aliases and refuses anchors, merge keys, custom tags,
// duplicate keys, non-finite numbers and excessive nesting.
// [Schema.ValidateYAML] validates the converted tree and maps each failing
// keyword back to the YAML position, worded from the keyword and its
// arguments in the schema, e.g.
//
//	role must be one of response, treatment, ...; got "reponse" (did you mean "response"?)
//	unknown key "exclusion" at the top level (did you mean "exclusions"?)
//	data is missing the required key "file"
//
// The validating library's messages and JSON pointers never reach the
// user. [Schema.ValidateJSON] does the same for a decoded JSON value,
// without positions.
//
// # Reference
//
// [Reference] renders the plan schema as a Markdown table (property path,
// type, allowed values, description) for README.md, where a test keeps
// it up to date between the plan-reference markers.
package schema
