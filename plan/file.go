package plan

import (
	"bytes"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strconv"
	"strings"
)

// TooLargeError is returned by ReadFile for a file that holds more than
// the bytes it may read.
type TooLargeError struct {
	// Size is the size of the file in bytes, or -1 when the file grew
	// past Limit while it was read.
	Size int64
	// Limit is the largest size read.
	Limit int64
}

// Error says how large the file is and what the limit is.
func (e *TooLargeError) Error() string {
	if e.Size < 0 {
		return fmt.Sprintf("the file grew past the limit of %s while it was read", ByteSize(e.Limit))
	}
	return fmt.Sprintf("the file is %s, over the limit of %s", ByteSize(e.Size), ByteSize(e.Limit))
}

// ReadFile reads the regular file at path, at most max bytes (max > 0).
// A named pipe, a device, a socket or a directory is refused before it is
// opened for reading, so that reading never waits on a pipe or runs on
// without end (/dev/zero); a file of more than max bytes is refused with a
// *TooLargeError. Errors from the file system (a missing file) are
// returned as they are; the others do not repeat the path, which the
// caller names.
func ReadFile(path string, max int64) ([]byte, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if err := regular(st); err != nil {
		return nil, err
	}
	f, err := openNoWait(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// Stat the open file too: the name may have been swapped for a pipe
	// between the two looks.
	if st, err = f.Stat(); err != nil {
		return nil, err
	}
	if err := regular(st); err != nil {
		return nil, err
	}
	if st.Size() > max {
		return nil, &TooLargeError{Size: st.Size(), Limit: max}
	}
	var b bytes.Buffer
	b.Grow(int(st.Size()) + 1) // one more, to see the end without growing
	n, err := b.ReadFrom(io.LimitReader(f, max+1))
	if err != nil {
		return nil, err
	}
	if n > max {
		return nil, &TooLargeError{Size: -1, Limit: max}
	}
	return b.Bytes(), nil
}

// regular returns an error naming what the file is when it is not a
// regular file.
func regular(st fs.FileInfo) error {
	m := st.Mode()
	if m.IsRegular() {
		return nil
	}
	what := "not a regular file"
	switch {
	case m.IsDir():
		what = "a directory"
	case m&fs.ModeNamedPipe != 0:
		what = "a named pipe (FIFO)"
	case m&fs.ModeSocket != 0:
		what = "a socket"
	case m&fs.ModeCharDevice != 0:
		what = "a character device"
	case m&fs.ModeDevice != 0:
		what = "a device"
	}
	return fmt.Errorf("it is %s, not a regular file; only regular files are read", what)
}

// ByteSize writes a number of bytes for a message: "512 bytes",
// "1.5 MiB (1572864 bytes)", "2 GiB (2147483648 bytes)".
func ByteSize(n int64) string {
	if n < 1024 {
		return strconv.FormatInt(n, 10) + " bytes"
	}
	v, suffix := float64(n)/1024, "KiB"
	for _, s := range []string{"MiB", "GiB", "TiB", "PiB", "EiB"} {
		if v < 1024 {
			break
		}
		v, suffix = v/1024, s
	}
	// Three significant digits, trailing zeros dropped: 1.95, 10.8, 512.
	digits := 0
	switch {
	case v < 10:
		digits = 2
	case v < 100:
		digits = 1
	}
	num := strconv.FormatFloat(v, 'f', digits, 64)
	if strings.Contains(num, ".") {
		num = strings.TrimRight(strings.TrimRight(num, "0"), ".")
	}
	return num + " " + suffix + " (" + strconv.FormatInt(n, 10) + " bytes)"
}
