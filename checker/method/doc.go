// Package method holds the statistical methods a plan can name, each as
// one value: the assumption checks ([Check]) and the model kinds
// ([Model]). A value carries its plan name, a one-paragraph doc, the
// plan-language rules it imposes (what a step of that kind must, may and
// must not declare, and the defaults it fills), how it runs, how its step
// compares two levels for a hypothesis, and how it is described in words.
//
// [Registry] lists them all. It is the one list the rest of furrow reads:
// plan validation (through the [plan.Methods] interface it implements),
// the plan schema's enums (a test compares them), the engine, explain and
// the report. Nothing else keeps a list of method names or switches on
// them.
//
// # Adding a check
//
// Write one file, check_<name>.go, declaring a [Check] value with its
// Name (the plan's spelling), Title, Doc, Words, Target and Run, add it
// to the checks in registry.go, add the name to the test enum of
// schema/plan.schema.json, and give the test it runs a check against an
// external reference value in stats/. TestRegistryMatchesSchema fails
// until the schema lists it; TestEveryMethodEndToEnd (checker/render)
// runs it on every model kind through the engine, explain and the report.
//
// # Adding a model kind
//
// Write model_<name>.go with a [Model] value (Name, Title, Doc, Rules,
// Pairing, Describe), add it to the models in registry.go and to the
// model enum of the schema, give the engine its fit (the engine's fitter
// table is checked against the registry by a test), and add a step of the
// kind to methodSteps in checker/render/methods_test.go.
//
// # Words
//
// Describe and Words produce plain sentences. Plan identifiers inside
// them are marked with [Code]; renderers turn the marks into code spans.
package method
