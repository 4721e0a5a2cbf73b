package main

import (
	"fmt"

	"ingot/compile/pipeline"
)

// parseSize reads a size in bytes with an optional unit (pipeline.ParseSize).
func parseSize(s string) (int64, error) { return pipeline.ParseSize(s) }

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
