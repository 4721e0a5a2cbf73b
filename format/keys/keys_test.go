package keys

import (
	"bytes"
	"crypto/ed25519"
	"crypto/rand"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/format"
)

// A generated pair reads back: the private key signs what the public key
// checks (Ed25519, RFC 8032), the id is the public key's SHA-256, and each
// file is refused where the other kind is wanted.
func TestGenerateAndRead(t *testing.T) {
	p, err := Generate(rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	privPath, pubPath := filepath.Join(dir, "k.key"), filepath.Join(dir, "k.pub")
	os.WriteFile(privPath, p.Private, 0o600)
	os.WriteFile(pubPath, p.Public, 0o644)
	priv, err := ReadPrivate(privPath)
	if err != nil {
		t.Fatal(err)
	}
	pub, err := ReadPublic(pubPath)
	if err != nil {
		t.Fatal(err)
	}
	msg := []byte("model digest")
	if !ed25519.Verify(pub, msg, ed25519.Sign(priv, msg)) {
		t.Error("the public key does not check the private key's signature")
	}
	if p.ID != format.KeyID(pub) || len(ID(p.ID)) != 64 {
		t.Errorf("key id %x", p.ID)
	}
	if _, err := ReadPrivate(pubPath); err == nil || !strings.Contains(err.Error(), "not a PEM PRIVATE KEY") {
		t.Errorf("a public key read as private: %v", err)
	}
	if _, err := ReadPublic(privPath); err == nil || !strings.Contains(err.Error(), "not a PEM PUBLIC KEY") {
		t.Errorf("a private key read as public: %v", err)
	}
	big := filepath.Join(dir, "big.pub")
	os.WriteFile(big, bytes.Repeat([]byte("A"), MaxFile+1), 0o644)
	if _, err := ReadPublic(big); err == nil {
		t.Error("a key file over the cap read")
	}
	// A PEM block of the right type holding something else.
	bad := []byte("-----BEGIN PUBLIC KEY-----\nAAAA\n-----END PUBLIC KEY-----\n")
	if _, err := ParsePublic("x.pub", bad); err == nil || !strings.HasPrefix(err.Error(), "x.pub: ") {
		t.Errorf("garbage in a PEM block: %v", err)
	}
}
