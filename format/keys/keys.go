// Package keys makes and reads the Ed25519 key files that sign models
// (format.Sign) and check their signatures: a private key as PKCS #8 in
// PEM ("PRIVATE KEY"), a public key as PKIX in PEM ("PUBLIC KEY"), both
// standard encodings any tool reads. Key files are read through a small
// cap, as regular files only.
package keys

import (
	"crypto/ed25519"
	"crypto/x509"
	"encoding/hex"
	"encoding/pem"
	"fmt"
	"io"

	"ingot/format"
	"ingot/format/files"
)

// MaxFile caps what is read of a key file: a PEM Ed25519 key is about 120
// bytes.
const MaxFile = 64 << 10

// Pair is a new key pair, PEM-encoded, and its key id.
type Pair struct {
	Private, Public []byte
	ID              [32]byte
}

// Generate makes an Ed25519 key pair from random (crypto/rand.Reader, or a
// fixed source in tests).
func Generate(random io.Reader) (*Pair, error) {
	pub, priv, err := ed25519.GenerateKey(random)
	if err != nil {
		return nil, err
	}
	privDER, err := x509.MarshalPKCS8PrivateKey(priv)
	if err != nil {
		return nil, err
	}
	pubDER, err := x509.MarshalPKIXPublicKey(pub)
	if err != nil {
		return nil, err
	}
	return &Pair{
		Private: pem.EncodeToMemory(&pem.Block{Type: "PRIVATE KEY", Bytes: privDER}),
		Public:  pem.EncodeToMemory(&pem.Block{Type: "PUBLIC KEY", Bytes: pubDER}),
		ID:      format.KeyID(pub),
	}, nil
}

// ParsePrivate reads a PEM private key (name says where it came from in
// errors).
func ParsePrivate(name string, data []byte) (ed25519.PrivateKey, error) {
	der, err := decode(name, data, "PRIVATE KEY")
	if err != nil {
		return nil, err
	}
	k, err := x509.ParsePKCS8PrivateKey(der)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	priv, ok := k.(ed25519.PrivateKey)
	if !ok {
		return nil, fmt.Errorf("%s: not an Ed25519 key", name)
	}
	return priv, nil
}

// ParsePublic reads a PEM public key (name says where it came from in
// errors).
func ParsePublic(name string, data []byte) (ed25519.PublicKey, error) {
	der, err := decode(name, data, "PUBLIC KEY")
	if err != nil {
		return nil, err
	}
	k, err := x509.ParsePKIXPublicKey(der)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	pub, ok := k.(ed25519.PublicKey)
	if !ok {
		return nil, fmt.Errorf("%s: not an Ed25519 key", name)
	}
	return pub, nil
}

// ReadPrivate reads the private key file at path.
func ReadPrivate(path string) (ed25519.PrivateKey, error) {
	b, err := files.ReadCapped(path, MaxFile)
	if err != nil {
		return nil, err
	}
	return ParsePrivate(path, b)
}

// ReadPublic reads the public key file at path.
func ReadPublic(path string) (ed25519.PublicKey, error) {
	b, err := files.ReadCapped(path, MaxFile)
	if err != nil {
		return nil, err
	}
	return ParsePublic(path, b)
}

func decode(name string, data []byte, want string) ([]byte, error) {
	block, _ := pem.Decode(data)
	if block == nil || block.Type != want {
		return nil, fmt.Errorf("%s: not a PEM %s", name, want)
	}
	return block.Bytes, nil
}

// ID is a key id as reports write it: hexadecimal.
func ID(id [32]byte) string { return hex.EncodeToString(id[:]) }

// KeygenReport is ingot keygen's JSON report: the files written and the
// key id (the SHA-256 of the public key).
type KeygenReport struct {
	PrivateKey string `json:"private_key"`
	PublicKey  string `json:"public_key"`
	KeyID      string `json:"key_id"`
}

// SignReport is ingot sign's JSON report: the model signed and the key id.
type SignReport struct {
	Model string `json:"model"`
	KeyID string `json:"key_id"`
}
