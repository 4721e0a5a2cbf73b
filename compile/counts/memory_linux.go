//go:build linux

package counts

import (
	"unsafe"

	"golang.org/x/sys/unix"
)

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

// hugePages asks the kernel to back the memory of b with huge pages where
// it can (madvise MADV_HUGEPAGE; a hint, ignored where unsupported): a
// large table probed at random then misses the TLB far less often.
func hugePages(b []byte) {
	const huge = 2 << 20
	if len(b) < huge {
		return
	}
	base := uintptr(unsafe.Pointer(&b[0]))
	start := (base+huge-1)&^(huge-1) - base
	end := (base+uintptr(len(b)))&^(huge-1) - base
	if end > start {
		unix.Madvise(b[start:end], unix.MADV_HUGEPAGE)
	}
}
