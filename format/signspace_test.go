package format

import (
	"crypto/ed25519"
	"ingot/compile/fixture"
	"testing"
)

// Signing adds exactly SignatureSpace bytes to an unsigned file, and
// re-signing adds none: a model fitted to a budget with that room left
// still fits once signed.
func TestSignatureSpace(t *testing.T) {
	data := mustMarshal(t, fixture.RandomTables(4, 40, []int{60, 50}))
	_, priv, _ := ed25519.GenerateKey(nil)
	signed, err := Sign(data, priv)
	if err != nil {
		t.Fatal(err)
	}
	if got := len(signed) - len(data); got != SignatureSpace {
		t.Errorf("signing added %d bytes, SignatureSpace is %d", got, SignatureSpace)
	}
	again, err := Sign(signed, priv)
	if err != nil {
		t.Fatal(err)
	}
	if len(again) != len(signed) {
		t.Errorf("re-signing changed the size from %d to %d", len(signed), len(again))
	}
}
