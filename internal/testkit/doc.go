// Package testkit is the project's shared test support: tolerance
// comparisons, readers for the shared reference data beside the checkout,
// a count of the reference checks that were skipped because that data was
// absent, and the structural plan mutator of the plan fuzzers
// ([MutateYAML]).
//
// It sits at the module root because it serves the tests of stats, plan
// and checker alike, and Go's internal rule lets only a package there be
// imported by all three while staying out of the public API.
//
// It is imported only from _test.go files, never by production code; a
// test in this package (TestImports) enforces that and the import rule of
// stats/ (standard library, gonum and other stats packages only).
//
// # Tolerances
//
// Close(got, want, tol) is the absolute-or-relative comparison
// |got - want| <= tol·max(1, |want|); RelClose is purely relative, for
// tail probabilities where an absolute tolerance would accept anything
// tiny; Within(got, want, rel, abs) passes when either bound holds. Equal
// infinities and two NaNs compare equal (a NaN expected is a NaN got);
// otherwise NaN never compares close.
//
// # Reference data
//
// The public reference data live in shared/reference beside the checkout
// (the parent of the module root). SharedRef locates the folder by walking
// up from the working directory of the test to the directory holding
// go.mod. A test that needs a reference file it cannot find calls SkipRef
// (ReadJSON, ReadShared and SharedPath do so themselves). Reference values
// committed under a package's testdata are read with DecodeFile, which
// fails instead: their absence is a broken checkout. A package
// whose tests read shared data has
//
//	func TestMain(m *testing.M) { testkit.Main(m) }
//
// which prints one line to stdout after the run when any were skipped:
//
//	furrow/stats/lm: 12 reference checks skipped: ../shared/reference not found beside the checkout
package testkit
