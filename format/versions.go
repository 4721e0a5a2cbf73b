package format

import "ingot/compile/tables"

// ReadVersions returns the oldest and the newest format version Open reads.
func ReadVersions() (oldest, newest int) { return oldestVersion, Version }

// WrittenVersions returns the format versions Write produces: the oldest
// version that can hold a model, for a model in 32-bit floats and for a
// quantized one (the same version twice when one version holds both).
func WrittenVersions() (floats, quantized int) {
	plain := &tables.Tables{Levels: []tables.Level{{}, {}}}
	q := &tables.Tables{Levels: []tables.Level{{}, {ProbCodebook: []float32{0}}}}
	return int(version(plain)), int(version(q))
}
