package main

import (
	"fmt"
	"strconv"
	"strings"
)

// parseSize reads a size in bytes, with an optional unit: B, KB, MB, GB
// (powers of 1000) or KiB, MiB, GiB (powers of 1024); case-insensitive.
func parseSize(s string) (int64, error) {
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

// humanSize renders n bytes for people.
func humanSize(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.2f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.2f MiB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f KiB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d B", n)
}
