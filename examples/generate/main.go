// Command generate writes the data of furrow's bundled example trials.
//
// Every scenario is invented. The values come from a seeded PCG generator
// (math/rand/v2), so each run writes byte-identical files. Run it from the
// module root:
//
//	go run ./examples/generate
//
// It writes, for each example folder under -out (default "examples"), the
// data as CSV (in the delimiter and decimal separator the example's plan
// declares) and as XLSX (sheet "plots"). The plans and READMEs beside them
// are written by hand and are not touched.
package main

import (
	"bytes"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

func run(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("generate", flag.ContinueOnError)
	fs.SetOutput(stderr)
	out := fs.String("out", "examples", "folder that holds the example folders")
	check := fs.Bool("check", false, "report files that differ from a fresh generation instead of writing them")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	if fs.NArg() != 0 {
		fmt.Fprintln(stderr, "generate: no arguments expected")
		return 2
	}
	files, err := generateAll()
	if err != nil {
		fmt.Fprintf(stderr, "generate: %v\n", err)
		return 1
	}
	stale := 0
	for _, f := range files {
		path := filepath.Join(*out, filepath.FromSlash(f.name))
		old, err := os.ReadFile(path)
		if err == nil && bytes.Equal(old, f.data) {
			continue
		}
		if *check {
			fmt.Fprintf(stdout, "%s differs from a fresh generation\n", filepath.ToSlash(path))
			stale++
			continue
		}
		if err := writeAtomic(path, f.data); err != nil {
			fmt.Fprintf(stderr, "generate: %v\n", err)
			return 1
		}
		fmt.Fprintf(stdout, "wrote %s\n", filepath.ToSlash(path))
	}
	if stale > 0 {
		return 1
	}
	return 0
}

// file is one generated output, named relative to the examples folder.
type file struct {
	name string
	data []byte
}

// generateAll builds every example's data files in a fixed order.
func generateAll() ([]file, error) {
	var files []file
	for _, ex := range []struct {
		dir  string
		make func() (*table, error)
		csv  csvStyle
	}{
		{"soil-nematodes", nematodes, csvStyle{comma: ',', decimal: '.', missing: "NA"}},
		{"wheat-varieties", wheat, csvStyle{comma: ';', decimal: ',', missing: ""}},
		{"irrigation-split-plot", splitPlot, csvStyle{comma: ',', decimal: '.', missing: ""}},
	} {
		t, err := ex.make()
		if err != nil {
			return nil, fmt.Errorf("%s: %w", ex.dir, err)
		}
		c, err := t.csv(ex.csv)
		if err != nil {
			return nil, fmt.Errorf("%s: writing csv: %w", ex.dir, err)
		}
		x, err := t.xlsx("plots")
		if err != nil {
			return nil, fmt.Errorf("%s: writing xlsx: %w", ex.dir, err)
		}
		files = append(files,
			file{ex.dir + "/plots.csv", c},
			file{ex.dir + "/plots.xlsx", x},
		)
	}
	return files, nil
}

// writeAtomic writes data to a temporary file in the target folder and
// renames it over path, so a reader never sees a half-written file.
func writeAtomic(path string, data []byte) error {
	dir := filepath.Dir(path)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("creating %s: %w", dir, err)
	}
	tmp, err := os.CreateTemp(dir, ".generate-*")
	if err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	name := tmp.Name()
	_, werr := tmp.Write(data)
	cerr := tmp.Close()
	if werr != nil || cerr != nil {
		os.Remove(name)
		return fmt.Errorf("writing %s: %w", path, cmpErr(werr, cerr))
	}
	if err := os.Chmod(name, 0o644); err != nil {
		os.Remove(name)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Rename(name, path); err != nil {
		os.Remove(name)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

func cmpErr(a, b error) error {
	if a != nil {
		return a
	}
	return b
}
