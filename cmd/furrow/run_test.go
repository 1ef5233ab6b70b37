package main

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"testing"
)

// TestDemoHashDoesNotDependOnFolders runs the README demo ("run --replace
// --out DIR examples/soil-nematodes/plan.yaml") twice: from the checkout
// with the output in one temporary folder, and on a copy of the example in
// another temporary "checkout", from another working folder, with the
// output somewhere else again. The printed content hash must be the same:
// nothing hashed may depend on where the run directory or the checkout is.
func TestDemoHashDoesNotDependOnFolders(t *testing.T) {
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	example := filepath.Join(root, "examples", "soil-nematodes")
	t.Setenv("SOURCE_DATE_EPOCH", "1772960400")

	// 1. As the README has it: from the checkout, output in a temporary folder.
	t.Chdir(root)
	first := demoHash(t, filepath.Join(t.TempDir(), "furrow-demo"), filepath.Join("examples", "soil-nematodes", "plan.yaml"))

	// 2. A copy of the example elsewhere, run from a third folder, the
	// output given relative to that folder.
	tmp := t.TempDir()
	copyDir := filepath.Join(tmp, "other", "checkout", "examples", "soil-nematodes")
	if err := os.MkdirAll(copyDir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"plan.yaml", "plan.registration.json", "plots.csv"} {
		b, err := os.ReadFile(filepath.Join(example, name))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(copyDir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	work := filepath.Join(tmp, "work", "deeper")
	if err := os.MkdirAll(work, 0o755); err != nil {
		t.Fatal(err)
	}
	t.Chdir(work)
	second := demoHash(t, filepath.Join("..", "runs", "demo"), filepath.Join(copyDir, "plan.yaml"))

	if first != second {
		t.Errorf("the content hash depends on where the run directory or the checkout is: %s from the checkout, %s from a copy", first, second)
	}
	// And it is the hash the README prints for the demo (the hash names
	// the build: a test binary and go run of the same tree agree).
	readme, err := os.ReadFile(filepath.Join(root, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	if m := wroteAudit.FindSubmatch(readme); m == nil || string(m[1]) != first {
		t.Errorf("README.md prints the demo's content hash as %q; the demo prints %s (update the README)", m, first)
	}
}

var wroteAudit = regexp.MustCompile(`(?m)^wrote \S+/audit\.json (sha256:[0-9a-f]{64})$`)

// demoHash runs "furrow run --replace --out out planPath" in process and
// returns the content hash it prints.
func demoHash(t *testing.T, out, planPath string) string {
	t.Helper()
	var stdout, stderr bytes.Buffer
	if code := run([]string{"run", "--replace", "--out", out, planPath}, nil, &stdout, &stderr); code != exitOK {
		t.Fatalf("furrow run exited %d: %s", code, stderr.String())
	}
	m := wroteAudit.FindStringSubmatch(stdout.String())
	if m == nil {
		t.Fatalf("no content hash in the output:\n%s", stdout.String())
	}
	return m[1]
}
