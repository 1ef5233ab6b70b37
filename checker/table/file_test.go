package table

import (
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"furrow/checker/internal/fixture"
)

// TestReadTableRefusesDirectory: a directory is refused as not a
// regular file (named pipes and devices: TestReadTableRefusesSpecialFiles).
func TestReadTableRefusesDirectory(t *testing.T) {
	dir := t.TempDir()
	_, _, err := ReadTable(fixture.TablePlan(dir, "plots.csv"), dir)
	if err == nil || !strings.Contains(err.Error(), "it is a directory, not a regular file") || !strings.Contains(err.Error(), filepath.ToSlash(dir)) {
		t.Errorf("error %v", err)
	}
}

// TestReadTableSizeLimit: a file over Options.MaxSize is refused with a
// *SizeError that names the file, its size and the limit.
func TestReadTableSizeLimit(t *testing.T) {
	dir := t.TempDir()
	path := fixture.WriteData(t, dir, "plots.csv", []byte(goodCSV))
	p := fixture.TablePlan(dir, "plots.csv")
	_, _, err := ReadTableWith(p, "", Options{MaxSize: 64})
	var se *SizeError
	if !errors.As(err, &se) || se.Size != int64(len(goodCSV)) || se.Limit != 64 {
		t.Fatalf("error %v, want a SizeError", err)
	}
	want := "reading data " + filepath.ToSlash(path) + ": the file is 80 bytes, over the limit of 64 bytes on data files"
	if err.Error() != want {
		t.Errorf("error\n%s\nwant\n%s", err, want)
	}
	if _, _, err := ReadTableWith(p, "", Options{MaxSize: int64(len(goodCSV))}); err != nil {
		t.Errorf("a file exactly at the limit: %v", err)
	}
	if DefaultMaxSize != 2<<30 {
		t.Errorf("DefaultMaxSize %d", DefaultMaxSize)
	}
}

// TestReadTableConfined: the plan's data.file must resolve inside the
// plan's folder, by name and after symbolic links; Options.AllowOutside
// lifts that, and a data path given explicitly is read wherever it is.
func TestReadTableConfined(t *testing.T) {
	root := t.TempDir()
	dir := filepath.Join(root, "trial")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	outside := fixture.WriteData(t, root, "secret.csv", []byte("root:x:0:0:root:/root:/bin/bash\n"))
	fixture.WriteData(t, dir, "plots.csv", []byte(goodCSV))
	if err := os.Mkdir(filepath.Join(dir, "sub"), 0o755); err != nil {
		t.Fatal(err)
	}
	fixture.WriteData(t, filepath.Join(dir, "sub"), "plots.csv", []byte(goodCSV))
	links := runtime.GOOS != "windows"
	if links {
		if err := os.Symlink(outside, filepath.Join(dir, "link.csv")); err != nil {
			t.Fatal(err)
		}
		if err := os.Symlink("plots.csv", filepath.Join(dir, "inner.csv")); err != nil {
			t.Fatal(err)
		}
	}
	realOutside, _ := filepath.EvalSymlinks(outside)
	cases := []struct {
		file string
		want string // "" = read
	}{
		{"plots.csv", ""},
		{"sub/../plots.csv", ""},
		{"sub/plots.csv", ""},
		{filepath.ToSlash(filepath.Join(dir, "plots.csv")), ""}, // absolute, inside
		{"../secret.csv", `data.file "../secret.csv" lies outside the plan's folder`},
		{filepath.ToSlash(outside), `data.file "` + filepath.ToSlash(outside) + `" lies outside the plan's folder`},
		{"../trial/../secret.csv", `lies outside the plan's folder`},
		{"../no-such.csv", `lies outside the plan's folder`},
	}
	if links {
		cases = append(cases,
			struct{ file, want string }{"link.csv", `data.file "link.csv" is a link to ` + filepath.ToSlash(realOutside) + `, outside the plan's folder`},
			struct{ file, want string }{"inner.csv", ""})
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			p := fixture.TablePlan(dir, c.file)
			tab, _, err := ReadTable(p, "")
			if c.want == "" {
				if err != nil || tab == nil || tab.NumRows() != 4 {
					t.Fatalf("not read: %v", err)
				}
				return
			}
			var oe *OutsideError
			if !errors.As(err, &oe) || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want an OutsideError saying %q", err, c.want)
			}
			if !strings.HasPrefix(err.Error(), "plan.yaml:4:3: ") || strings.Contains(err.Error(), "root:x") {
				t.Errorf("error %q is not positioned at data.file, or shows the file", err)
			}
			// Allowed explicitly, the name is followed.
			if _, _, err := ReadTableWith(p, "", Options{AllowOutside: true}); errors.As(err, &oe) {
				t.Errorf("AllowOutside: %v", err)
			}
		})
	}
	// DATA given on the command line is the user's choice.
	if _, _, err := ReadTable(fixture.TablePlan(dir, "plots.csv"), outside); err != nil {
		var oe *OutsideError
		if errors.As(err, &oe) {
			t.Errorf("explicit data path confined: %v", err)
		}
	}
}
