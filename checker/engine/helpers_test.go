package engine_test

// Helpers of the external tests (degenerate_test.go), copied from other
// tests (one copy per package until they move to a shared test package).
// degenerate_test.go is an external test so that it can render the report
// (furrow/checker/render imports this package through simulate).

import (
	"testing"

	"furrow/checker/internal/fixture"
	"furrow/checker/record"
	"furrow/checker/render"
)

// checkFuzzResult checks the properties of a returned result.
func checkFuzzResult(t *testing.T, name string, r *record.Result, data []byte) {
	t.Helper()
	fixture.CheckSane(t, name, r, data, func(r *record.Result) error { _, err := render.BuildReport(r).HTML(); return err })
}
