package pipeline

import "testing"

// Units as the SI prefixes (kilo = 1000) and the IEC 80000-13 binary
// prefixes (kibi = 1024) define them.
func TestParseSize(t *testing.T) {
	for in, want := range map[string]int64{
		"500": 500, "500B": 500, "2KB": 2000, "2kb": 2000, "1.5MB": 1500000, "8MiB": 8 << 20,
		"1 KiB": 1024, "3GiB": 3 << 30, "2GB": 2e9, " 7 ": 7, "2.9": 2,
	} {
		if got, err := ParseSize(in); err != nil || got != want {
			t.Errorf("%q: %d, %v; want %d", in, got, err, want)
		}
	}
	for _, bad := range []string{"", "0", "-1KB", "KB", "0.5", "1e30GB", "NaN", "inf", "12 parsecs"} {
		if n, err := ParseSize(bad); err == nil {
			t.Errorf("%q accepted as %d", bad, n)
		}
	}
}
