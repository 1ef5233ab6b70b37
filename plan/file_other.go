//go:build !unix

package plan

import "os"

// openNoWait opens path for reading. Systems other than Unix have no
// named pipes in the file system for it to wait on.
func openNoWait(path string) (*os.File, error) {
	return os.Open(path)
}
