//go:build unix

package plan

import (
	"os"
	"syscall"
)

// openNoWait opens path for reading without waiting for a writer when it
// is a named pipe (O_NONBLOCK; it has no effect on regular files).
func openNoWait(path string) (*os.File, error) {
	return os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
}
