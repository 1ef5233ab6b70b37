package testkit

import (
	"os"
	"testing"
)

// Golden compares got with the golden file at path. With update it
// rewrites the file instead (and the test passes); otherwise a missing
// file or a difference fails the test, naming regen, the command that
// regenerates the file.
func Golden(t testing.TB, path string, got []byte, update bool, regen string) {
	t.Helper()
	if update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (regenerate with %s)", err, regen)
	}
	if string(got) != string(want) {
		t.Errorf("%s differs from what the test got (regenerate with %s)\ngot:\n%s\nwant:\n%s", path, regen, got, want)
	}
}
