// Package ctest tests the reference reader in C (spec/c) from Go: it builds
// the reader with the system's C compiler (plain, and with the address and
// undefined-behaviour sanitizers), checks its CRC-32C and SHA-256 against
// published test vectors, its answers against the golden vectors and
// against the Go reader on models of the bundled corpus, and feeds it
// damaged files. The tests need a C compiler (`cc`) on the PATH.
//
// The C files live in spec/c and spec/ctest/testdata, never beside Go
// files: a directory holding both would be built by Go as a cgo package.
package ctest
