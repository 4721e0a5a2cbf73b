package pipeline

import (
	"fmt"
	"strconv"
	"strings"
)

// ParseSize reads a size in bytes, as --max-size, --budget and --max-line
// take it: a positive number with an optional unit, B, KB, MB, GB (powers
// of 1000, the SI prefixes) or KiB, MiB, GiB (powers of 1024, the IEC
// binary prefixes); case-insensitive. A fraction of a byte is dropped.
func ParseSize(s string) (int64, error) {
	t := strings.TrimSpace(s)
	units := []struct {
		suffix string
		mult   float64
	}{
		{"kib", 1 << 10}, {"mib", 1 << 20}, {"gib", 1 << 30},
		{"kb", 1e3}, {"mb", 1e6}, {"gb", 1e9}, {"b", 1},
	}
	mult := 1.0
	lower := strings.ToLower(t)
	for _, u := range units {
		if strings.HasSuffix(lower, u.suffix) {
			mult = u.mult
			t = strings.TrimSpace(t[:len(t)-len(u.suffix)])
			break
		}
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || !(v > 0) || v*mult > 1<<62 {
		return 0, fmt.Errorf("size %q is not a positive number of bytes (units: B, KB, MB, GB, KiB, MiB, GiB)", s)
	}
	if v*mult < 1 {
		return 0, fmt.Errorf("size %q is less than one byte", s)
	}
	return int64(v * mult), nil
}
