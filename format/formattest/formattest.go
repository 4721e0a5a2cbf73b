// Package formattest writes tables as model bytes and opens them, for the
// tests of the packages that read models. It is for tests only.
package formattest

import (
	"testing"

	"ingot/compile/tables"
	"ingot/format"
)

// Marshal writes tb as a model file of the current version, or fails the
// test.
func Marshal(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := format.Marshal(tb)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// Open writes tb and opens the bytes as a model, or fails the test.
func Open(t testing.TB, tb *tables.Tables) *format.Model {
	t.Helper()
	m, err := format.FromBytes(Marshal(t, tb))
	if err != nil {
		t.Fatal(err)
	}
	return m
}
