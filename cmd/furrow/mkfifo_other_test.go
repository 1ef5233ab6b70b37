//go:build !unix

package main

import "errors"

// mkfifo makes a named pipe; there are none in the file system here.
func mkfifo(path string) error { return errors.New("no named pipes on this system") }
