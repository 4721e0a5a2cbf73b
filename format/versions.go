package format

// ReadVersions returns the oldest and the newest format version Open reads.
func ReadVersions() (oldest, newest int) { return oldestVersion, Version }

// WrittenVersions returns the format versions Write produces, for a model
// in 32-bit floats and for a quantized one (the same version twice when one
// version holds both, as version 3 does).
func WrittenVersions() (floats, quantized int) {
	return Version, Version
}
