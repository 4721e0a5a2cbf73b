//go:build unix

package format

import (
	"os"

	"golang.org/x/sys/unix"
)

// mapFile maps size bytes of f read-only. It returns a nil release function
// when mapping fails, and the caller then reads the file instead.
func mapFile(f *os.File, size int) ([]byte, func() error, error) {
	data, err := unix.Mmap(int(f.Fd()), 0, size, unix.PROT_READ, unix.MAP_SHARED)
	if err != nil {
		return nil, nil, err
	}
	return data, func() error { return unix.Munmap(data) }, nil
}
