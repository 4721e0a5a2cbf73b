//go:build !linux

package counts

// DefaultMemoryFraction is the share of physical memory that count and
// compile take as their budget when none is given.
const DefaultMemoryFraction = 4

// DefaultMemory returns 1 GiB where the physical memory is not known.
func DefaultMemory() int64 { return 1 << 30 }

func hugePages([]byte) {}
