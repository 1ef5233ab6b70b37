package main

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// TestDeterministic generates every file twice and requires identical
// bytes: the generator must not depend on map order, the clock or the
// machine.
func TestDeterministic(t *testing.T) {
	a, err := generateAll()
	if err != nil {
		t.Fatal(err)
	}
	b, err := generateAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(a) != len(b) {
		t.Fatalf("got %d files, then %d", len(a), len(b))
	}
	for i := range a {
		if a[i].name != b[i].name || !bytes.Equal(a[i].data, b[i].data) {
			t.Errorf("%s: second generation differs from the first", a[i].name)
		}
	}
}

// TestCommittedUpToDate compares the committed example data with a fresh
// generation, so a change to the generator cannot leave stale examples.
func TestCommittedUpToDate(t *testing.T) {
	files, err := generateAll()
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range files {
		got, err := os.ReadFile(filepath.Join("..", filepath.FromSlash(f.name)))
		if err != nil {
			t.Errorf("reading committed %s: %v (run: go run ./examples/generate)", f.name, err)
			continue
		}
		if !bytes.Equal(got, f.data) {
			t.Errorf("examples/%s differs from a fresh generation (run: go run ./examples/generate)", f.name)
		}
	}
}

// TestRunWritesAndChecks runs the command into a temporary folder, then
// asks it to check that folder: nothing may differ.
func TestRunWritesAndChecks(t *testing.T) {
	dir := t.TempDir()
	var out, errb bytes.Buffer
	if code := run([]string{"-out", dir}, &out, &errb); code != 0 {
		t.Fatalf("generate exited %d: %s", code, errb.String())
	}
	out.Reset()
	if code := run([]string{"-out", dir, "-check"}, &out, &errb); code != 0 || out.Len() != 0 {
		t.Fatalf("check after write exited %d, printed %q", code, out.String())
	}
	if err := os.WriteFile(filepath.Join(dir, "wheat-varieties", "plots.csv"), []byte("x\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if code := run([]string{"-out", dir, "-check"}, &out, &errb); code != 1 || out.Len() == 0 {
		t.Fatalf("check of an edited file exited %d, printed %q; want exit 1 and a report", code, out.String())
	}
}

// TestScenarioShape checks the layout each README promises.
func TestScenarioShape(t *testing.T) {
	for _, tc := range []struct {
		name    string
		make    func() (*table, error)
		rows    int
		missing int
	}{
		{"soil-nematodes", nematodes, 6 * 4 * 3 * 2, 4},
		{"wheat-varieties", wheat, 8 * 4, 0},
		{"irrigation-split-plot", splitPlot, 3 * 4 * 4, 0},
	} {
		tab, err := tc.make()
		if err != nil {
			t.Fatal(err)
		}
		if len(tab.rows) != tc.rows {
			t.Errorf("%s: %d rows, want %d", tc.name, len(tab.rows), tc.rows)
		}
		n := 0
		for _, r := range tab.rows {
			if len(r) != len(tab.header) {
				t.Fatalf("%s: row with %d cells, header has %d", tc.name, len(r), len(tab.header))
			}
			for _, c := range r {
				if c.missing {
					n++
				}
			}
		}
		if n != tc.missing {
			t.Errorf("%s: %d missing values, want %d", tc.name, n, tc.missing)
		}
	}
}
