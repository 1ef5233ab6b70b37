package verify

import (
	"errors"
	"fmt"
	"io/fs"
	"path/filepath"

	"furrow/checker/table"
	"furrow/plan"
)

// readData reads the data file for its hash, bounded as the run reads it:
// a regular file of at most max bytes (0: table.DefaultMaxSize). A file
// that does not exist is returned as fs.ErrNotExist; the other errors
// name the file.
func readData(path string, max int64) ([]byte, error) {
	if max <= 0 {
		max = table.DefaultMaxSize
	}
	b, err := plan.ReadFile(path, max)
	var big *plan.TooLargeError
	switch {
	case err == nil:
		return b, nil
	case errors.As(err, &big):
		return nil, &table.SizeError{Path: filepath.ToSlash(path), Size: big.Size, Limit: big.Limit}
	case errors.Is(err, fs.ErrNotExist), errors.Is(err, fs.ErrPermission):
		return nil, fmt.Errorf("reading data: %w", err)
	}
	return nil, fmt.Errorf("reading data %s: %w", filepath.ToSlash(path), err)
}
