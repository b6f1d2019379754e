package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"

	"locusmith/airframe"
)

// loadFile reads the airframe file at path and parses it. It reads at most
// airframe.MaxFileBytes+1 bytes, which is enough for the parser to refuse
// a file that is too long without holding all of it. A file that cannot be
// read gives the wrapped os error; invalid content an *airframe.Errors.
func loadFile(path string) (*airframe.File, error) {
	f, err := openRegular(path)
	if err != nil {
		return nil, fmt.Errorf("read airframe file: %w", err)
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, airframe.MaxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("read airframe file: %w", err)
	}
	return airframe.Parse(path, data)
}

// errNotRegular is the error of an input that is not a regular file.
var errNotRegular = errors.New("not a regular file")

// openRegular opens path for reading only when it is a regular file (a
// symbolic link to one is fine). A named pipe would block the open until a
// writer comes, a device such as /dev/zero would never end, a directory
// is no input: each is refused with an error that says what it is,
// without blocking. The check is made on the path before the open and
// again on the opened file (the path may change in between), and the open
// itself does not wait for a pipe's writer (openNoBlock).
func openRegular(path string) (*os.File, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if err := regular(st); err != nil {
		return nil, err
	}
	f, err := openNoBlock(path)
	if err != nil {
		return nil, err
	}
	st, err = f.Stat()
	if err == nil {
		err = regular(st)
	}
	if err != nil {
		f.Close()
		return nil, err
	}
	return f, nil
}

// regular returns nil for a regular file, else an error naming the kind.
func regular(st fs.FileInfo) error {
	m := st.Mode()
	if m.IsRegular() {
		return nil
	}
	what := "a special file"
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
		what = "a block device"
	}
	return fmt.Errorf("%w: it is %s; an input must be a regular file", errNotRegular, what)
}
