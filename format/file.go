package format

import (
	"errors"
	"fmt"

	"ingot/format/files"
)

// Open maps the model file at path into memory and checks its header,
// directory, summary and build info. It does not read the large columns:
// opening takes the same time for any model size. Use Verify to check every
// byte. Close releases the mapping.
//
// path must name a regular file: a directory, a device (such as /dev/zero)
// or a named pipe is refused, and opening never blocks. Where memory mapping
// is not available, Open reads the file into memory, as Load does.
//
// A mapped file must not be truncated or rewritten in place while it is
// open (replace model files by writing a new file and renaming it over the
// old one). A query that reads a part of the mapping the file no longer
// holds gets a memory fault, which kills the process unless the query runs
// inside Guard; rewriting in place without changing the size gives mixed
// answers. Load reads the model into memory instead.
func Open(path string) (*Model, error) {
	return open(path, false)
}

// Load reads the model file at path into memory and opens it, with the same
// checks as Open. The Model does not depend on the file afterwards: the file
// may be replaced, truncated or removed while the Model is in use. It costs
// the file's size in memory and the time to read it.
func Load(path string) (*Model, error) {
	return open(path, true)
}

// MapBytes returns the bytes of the regular file at path, mapped read-only
// (read into memory where mapping is not available, or for a file shorter
// than the header), for a caller that examines the raw bytes of a file that
// may not open as a model, such as a verifier. release unmaps them; it is
// never nil. The hazard of Open applies: read the bytes inside Guard.
func MapBytes(path string) (data []byte, release func() error, err error) {
	data, release, _, err = readBytes(path, false)
	return data, release, err
}

// readBytes maps or reads the file; mapped says which.
func readBytes(path string, inMemory bool) (data []byte, release func() error, mapped bool, err error) {
	f, st, err := files.OpenRegular(path)
	if err != nil {
		return nil, nil, false, err
	}
	defer f.Close()
	size := st.Size()
	if size != int64(int(size)) {
		return nil, nil, false, fmt.Errorf("%s: %d bytes do not fit in this machine's address space", path, size)
	}
	if !inMemory && size >= headerSize {
		if data, release, _ := mapFile(f, int(size)); release != nil {
			return data, release, true, nil
		}
	}
	// Asked for, too small to map, or mapping unavailable.
	if data, err = files.ReadExactly(f, size); err != nil {
		return nil, nil, false, fmt.Errorf("reading %s: %w", path, err)
	}
	return data, func() error { return nil }, false, nil
}

func open(path string, inMemory bool) (*Model, error) {
	data, release, mapped, err := readBytes(path, inMemory)
	if err != nil {
		return nil, err
	}
	var m *Model
	err = Guard(func() error {
		var err error
		m, err = FromBytes(data)
		return err
	})
	if err != nil {
		release()
		var fe *FormatError
		if errors.As(err, &fe) {
			fe.Path = path
		}
		var fault *FaultError
		if errors.As(err, &fault) {
			fault.Path = path
		}
		return nil, err
	}
	if mapped {
		m.release = release
	}
	m.path = path
	return m, nil
}

// Mapped reports whether the model reads a memory-mapped file (Open) rather
// than bytes in memory (Load, FromBytes).
func (m *Model) Mapped() bool { return m.release != nil }
