//go:build linux

package counts

import "golang.org/x/sys/unix"

// DefaultMemoryFraction is the share of physical memory that count and
// compile take as their budget when none is given: a quarter, so that a
// shared machine keeps room for the rest of its work.
const DefaultMemoryFraction = 4

// DefaultMemory returns physical memory / DefaultMemoryFraction, or 1 GiB
// when the system does not say how much memory it has.
func DefaultMemory() int64 { return physicalMemory() / DefaultMemoryFraction }

func physicalMemory() int64 {
	var si unix.Sysinfo_t
	if err := unix.Sysinfo(&si); err != nil || si.Totalram == 0 {
		return DefaultMemoryFraction << 30
	}
	return int64(uint64(si.Totalram) * uint64(si.Unit))
}
