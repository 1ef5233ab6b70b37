package engine

import (
	"os"
	"path/filepath"
	"testing"

	"furrow/internal/testkit"
)

// TestMain prints, after the run, how many reference checks were skipped
// because ../shared/reference was not beside the checkout.
func TestMain(m *testing.M) { testkit.Main(m) }

// readTestdata returns the committed file testdata/<rel>; a missing file
// is a broken checkout and fails the test.
func readTestdata(t *testing.T, rel string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", filepath.FromSlash(rel)))
	if err != nil {
		t.Fatalf("reading committed test data: %v", err)
	}
	return b
}
