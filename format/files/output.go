package files

import (
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// CheckOutput checks, before any work, that path can be written as an
// output and that it is not one of the inputs: its directory must exist and
// take new files, an existing path must be a regular file, and it must not
// be the same file (device and inode, links resolved) as any input. Inputs
// that do not exist, and "-", are left out. It creates and removes a
// temporary file in the directory to learn that it can.
func CheckOutput(path string, inputs ...string) error {
	if path == "" || path == "-" {
		return nil
	}
	if st, err := os.Stat(path); err == nil {
		if !st.Mode().IsRegular() {
			return fmt.Errorf("output %s is %s, not a file that can be replaced", path, Kind(st.Mode()))
		}
		for _, in := range inputs {
			if in == "-" {
				continue
			}
			if ist, err := os.Stat(in); err == nil && os.SameFile(st, ist) {
				if in == path {
					return fmt.Errorf("output %s is also an input: writing it would destroy the input", path)
				}
				return fmt.Errorf("output %s is the same file as the input %s: writing it would destroy the input", path, in)
			}
		}
	}
	dir := filepath.Dir(path)
	st, err := os.Stat(dir)
	if err != nil {
		return fmt.Errorf("output %s: directory %s: %w", path, dir, unwrapPath(err))
	}
	if !st.IsDir() {
		return fmt.Errorf("output %s: %s is %s, not a directory", path, dir, Kind(st.Mode()))
	}
	f, err := CreateTemp(dir, "."+filepath.Base(path)+".check-", 0o600)
	if err != nil {
		return fmt.Errorf("output %s: cannot create files in %s: %w", path, dir, unwrapPath(err))
	}
	f.Close()
	os.Remove(f.Name())
	return nil
}

func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// CreateTemp creates a new file in dir, named prefix and random letters,
// exclusively and with permissions perm as the process's umask leaves
// them (os.CreateTemp always uses 0600).
func CreateTemp(dir, prefix string, perm fs.FileMode) (*os.File, error) {
	for range 100 {
		var b [8]byte
		rand.Read(b[:])
		name := filepath.Join(dir, prefix+hex.EncodeToString(b[:]))
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, perm)
		if errors.Is(err, fs.ErrExist) {
			continue
		}
		return f, err
	}
	return nil, fmt.Errorf("cannot find a free temporary name in %s", dir)
}

// KeepMode gives the new file at tmp the permission bits of the file at
// path that it is about to replace; when nothing is at path, tmp keeps the
// permissions it was created with.
func KeepMode(tmp, path string) error {
	st, err := os.Stat(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	return os.Chmod(tmp, st.Mode().Perm())
}

// PublishExclusive gives the finished file at tmp the name path only if
// nothing has that name yet (a hard link, which fails when path exists),
// then removes the name tmp. Two processes publishing the same path at
// once: exactly one succeeds.
func PublishExclusive(tmp, path string) error {
	if err := os.Link(tmp, path); err != nil {
		return err
	}
	return os.Remove(tmp)
}
