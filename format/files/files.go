// Package files opens the files ingot reads with bounded resources: a path
// must name a regular file (not a directory, a device such as /dev/zero, a
// socket or a named pipe), it is opened without blocking (a named pipe with
// no writer does not hang the caller), and small files such as keys are read
// through a cap. It also tells whether two paths name the same file, so that
// a command can refuse to overwrite one of its inputs.
package files

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
)

// ErrNotRegular is wrapped by the error for a path that exists but is not a
// regular file.
var ErrNotRegular = errors.New("not a regular file")

// Kind names the kind of file a mode describes, for messages: "a directory",
// "a named pipe", "a device", "a socket", "a regular file".
func Kind(mode fs.FileMode) string {
	switch {
	case mode.IsRegular():
		return "a regular file"
	case mode.IsDir():
		return "a directory"
	case mode&fs.ModeNamedPipe != 0:
		return "a named pipe"
	case mode&fs.ModeSocket != 0:
		return "a socket"
	case mode&(fs.ModeDevice|fs.ModeCharDevice) != 0:
		return "a device"
	case mode&fs.ModeSymlink != 0:
		return "a symbolic link"
	}
	return "not a regular file"
}

// OpenRegular opens path for reading and returns the file and its
// information. It opens without blocking, so that a named pipe with no
// writer does not hang, and refuses anything but a regular file with an
// error that wraps ErrNotRegular and says what the path is ("is a
// directory"). Symbolic links are followed.
func OpenRegular(path string) (*os.File, fs.FileInfo, error) {
	f, err := os.OpenFile(path, os.O_RDONLY|nonBlocking, 0)
	if err != nil {
		return nil, nil, err
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, nil, err
	}
	if !st.Mode().IsRegular() {
		f.Close()
		return nil, nil, &fs.PathError{Op: "open", Path: path, Err: fmt.Errorf("is %s, %w", Kind(st.Mode()), ErrNotRegular)}
	}
	return f, st, nil
}

// ReadCapped reads the regular file at path whole, refusing a file larger
// than limit bytes before reading it (and a file that grows past limit while
// it is read).
func ReadCapped(path string, limit int64) ([]byte, error) {
	f, st, err := OpenRegular(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if st.Size() > limit {
		return nil, fmt.Errorf("%s: file is %d bytes; at most %d are read", path, st.Size(), limit)
	}
	b, err := io.ReadAll(io.LimitReader(f, limit+1))
	if err != nil {
		return nil, err
	}
	if int64(len(b)) > limit {
		return nil, fmt.Errorf("%s: file grew past %d bytes while read", path, limit)
	}
	return b, nil
}

// ReadRegular reads the regular file at path whole; it allocates the size
// the file has when opened, and refuses a file that changes size meanwhile.
func ReadRegular(path string) ([]byte, error) {
	f, st, err := OpenRegular(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadExactly(f, st.Size())
}

// ReadExactly reads the whole of an open regular file whose size was size
// when it was opened, allocating size bytes and no more. A file that
// shrank or grew since is an error.
func ReadExactly(f *os.File, size int64) ([]byte, error) {
	if size != int64(int(size)) {
		return nil, fmt.Errorf("%s: %d bytes do not fit in this machine's address space", f.Name(), size)
	}
	b := make([]byte, size)
	if _, err := io.ReadFull(f, b); err != nil {
		if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF) {
			return nil, fmt.Errorf("%s: file shrank while read (it was %d bytes)", f.Name(), size)
		}
		return nil, err
	}
	var one [1]byte
	if n, _ := f.Read(one[:]); n > 0 {
		return nil, fmt.Errorf("%s: file grew while read (it was %d bytes)", f.Name(), size)
	}
	return b, nil
}

// FirstRepeat returns the positions of the first two paths that name the
// same file (the same device and inode: links and different spellings of a
// path resolved). Paths that do not exist, and "-", are left out.
func FirstRepeat(paths []string) (i, j int, ok bool) {
	infos := make([]fs.FileInfo, len(paths))
	for k, p := range paths {
		if p == "-" {
			continue
		}
		if st, err := os.Stat(p); err == nil {
			infos[k] = st
		}
	}
	for j := range infos {
		for i := range j {
			if infos[i] != nil && infos[j] != nil && os.SameFile(infos[i], infos[j]) {
				return i, j, true
			}
		}
	}
	return 0, 0, false
}
