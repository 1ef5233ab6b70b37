//go:build unix

package table

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"furrow/checker/internal/fixture"
)

// TestReadTableRefusesSpecialFiles: a named pipe and a device are refused
// at once, without reading from them (a pipe with no writer would block
// the read for ever, /dev/zero never ends).
func TestReadTableRefusesSpecialFiles(t *testing.T) {
	dir := t.TempDir()
	p := fixture.TablePlan(dir, "plots.csv")
	fifo := filepath.Join(dir, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct{ name, path, want string }{
		{"fifo", fifo, "it is a named pipe (FIFO), not a regular file; only regular files are read"},
	}
	if _, err := os.Stat("/dev/zero"); err == nil {
		cases = append(cases, struct{ name, path, want string }{"dev-zero", "/dev/zero", "it is a character device, not a regular file"})
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, ds, err := ReadTable(p, c.path)
			if err == nil || tab != nil || ds != nil {
				t.Fatalf("no error: %v %v", tab, ds)
			}
			if !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), filepath.ToSlash(c.path)) {
				t.Errorf("error %q does not name the file or say %q", err, c.want)
			}
		})
	}
	// The plan's own data.file naming the pipe is refused the same way.
	if _, _, err := ReadTable(fixture.TablePlan(dir, "pipe.csv"), ""); err == nil || !strings.Contains(err.Error(), "named pipe") {
		t.Errorf("data.file naming a pipe: %v", err)
	}
}
