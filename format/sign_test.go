package format

import (
	"crypto/ed25519"
	"errors"
	"ingot/compile/fixture"
	"math/rand/v2"
	"strings"
	"testing"
)

func keyPair(t *testing.T, seed byte) (ed25519.PublicKey, ed25519.PrivateKey) {
	s := make([]byte, ed25519.SeedSize)
	s[0] = seed
	priv := ed25519.NewKeyFromSeed(s)
	return priv.Public().(ed25519.PublicKey), priv
}

func TestSignature(t *testing.T) {
	data := mustMarshal(t, fixture.RandomTables(9, 200, []int{800, 600}))
	pub, priv := keyPair(t, 1)
	other, _ := keyPair(t, 2)

	if err := mustOpen(t, data).CheckSignature(pub); !errors.Is(err, ErrUnsigned) {
		t.Fatalf("unsigned model: %v", err)
	}
	signed, err := Sign(data, priv)
	if err != nil {
		t.Fatal(err)
	}
	m := mustOpen(t, signed)
	if m.Digest() != mustOpen(t, data).Digest() {
		t.Error("signing changed the content digest")
	}
	if err := m.CheckSignature(pub); err != nil {
		t.Errorf("good signature refused: %v", err)
	}
	if err := m.Verify(); err != nil {
		t.Errorf("signed model fails verification: %v", err)
	}
	if _, ok := m.Signed(); !ok {
		t.Error("Signed reports no signature")
	}
	if err := m.CheckSignature(other); err == nil || !strings.Contains(err.Error(), "another key") {
		t.Errorf("wrong key: %v", err)
	}
	// Re-signing replaces the signature rather than adding one.
	again, err := Sign(signed, priv)
	if err != nil || len(again) != len(signed) {
		t.Errorf("re-signing: %v, %d bytes vs %d", err, len(again), len(signed))
	}
	// Any changed byte of the file is refused: at open (header, directory,
	// small sections) or by the signature check.
	r := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 300; trial++ {
		b := append([]byte(nil), signed...)
		i := r.IntN(len(b))
		b[i] ^= 1 << r.IntN(8)
		m, err := FromBytes(b)
		if err != nil {
			continue
		}
		if err := m.CheckSignature(pub); err == nil {
			t.Fatalf("flipped byte %d: signature still accepted", i)
		}
	}
}

func TestSignRefusesDamagedModel(t *testing.T) {
	data := mustMarshal(t, fixture.RandomTables(9, 200, []int{800}))
	_, priv := keyPair(t, 1)
	data[len(data)-9] ^= 0x40 // inside the last column, not checked at open
	if _, err := Sign(data, priv); err == nil || !strings.Contains(err.Error(), "damaged") {
		t.Errorf("got %v", err)
	}
}
