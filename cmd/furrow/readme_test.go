package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestReadme keeps the README honest about the command line: it must show
// the current "furrow help" output, give "go test ./..." as the test
// command, and .ci/run must run that same command.
func TestReadme(t *testing.T) {
	root := filepath.Join("..", "..")
	readme, err := os.ReadFile(filepath.Join(root, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	var out, errb bytes.Buffer
	if code := run([]string{"help"}, nil, &out, &errb); code != exitOK {
		t.Fatalf("furrow help exited %d: %s", code, errb.String())
	}
	if !bytes.Contains(readme, out.Bytes()) {
		t.Errorf("README.md does not show the current output of furrow help:\n%s", out.String())
	}
	const testCmd = "go test ./..."
	if !bytes.Contains(readme, []byte("```\n"+testCmd+"\n```")) {
		t.Errorf("README.md does not give %q as a command block of its own", testCmd)
	}
	ci, err := os.ReadFile(filepath.Join(root, ".ci", "run"))
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, line := range strings.Split(string(ci), "\n") {
		if strings.TrimSpace(line) == testCmd {
			found = true
		}
	}
	if !found {
		t.Errorf(".ci/run does not run %q on a line of its own", testCmd)
	}
	for _, marker := range []string{"<!-- plan-reference:begin -->", "<!-- plan-reference:end -->"} {
		if !bytes.Contains(readme, []byte(marker)) {
			t.Errorf("README.md lacks the marker %s", marker)
		}
	}
}
