package format

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"errors"
	"fmt"
)

// The signature section (kind 9) holds one signature over the content
// digest:
//
//	offset  size  field
//	0       4     scheme: 1 = Ed25519 over SignedMessage(digest)
//	4       4     reserved, 0
//	8       32    key id: SHA-256 of the signer's 32-byte Ed25519 public key
//	40      64    the Ed25519 signature
//
// The digest leaves signature sections out, so signing changes no digest,
// and any change to any other byte that matters breaks the signature.
const (
	signatureScheme = 1
	signatureSize   = 104
)

// SignatureSpace is the number of bytes signing adds to an unsigned model
// file: a directory entry and the signature section (both multiples of the
// section alignment, so no padding changes). A file fitted to a budget
// leaves this much room so that it still fits once signed.
const SignatureSpace = directoryEntry + signatureSize

// signaturePrefix is prepended to the digest in the signed message, so that
// a signature over a model file cannot be mistaken for one over anything
// else signed with the same key.
const signaturePrefix = "ingot model content digest\x00"

// SignedMessage returns the bytes an Ed25519 signature of a model covers.
func SignedMessage(digest [32]byte) []byte {
	return append([]byte(signaturePrefix), digest[:]...)
}

// KeyID returns the identifier of a public key: its SHA-256.
func KeyID(pub ed25519.PublicKey) [32]byte { return sha256.Sum256(pub) }

// Sign returns the model file data with a signature by priv added (any
// earlier signature is replaced). data must be a model that opens; the
// content and its digest are unchanged, and the model's checksums and digest
// are checked first so that a damaged model is never signed.
func Sign(data []byte, priv ed25519.PrivateKey) ([]byte, error) {
	m, err := FromBytes(data)
	if err != nil {
		return nil, err
	}
	if err := m.VerifyChecksums(); err != nil {
		return nil, fmt.Errorf("refusing to sign a damaged model: %w", err)
	}
	pub, ok := priv.Public().(ed25519.PublicKey)
	if !ok || len(priv) != ed25519.PrivateKeySize {
		return nil, errors.New("not an Ed25519 private key")
	}
	sig := make([]byte, signatureSize)
	putU32(sig[0:], signatureScheme)
	id := KeyID(pub)
	copy(sig[8:40], id[:])
	copy(sig[40:], ed25519.Sign(priv, SignedMessage(m.digest)))

	var sections []section
	for _, s := range m.sections {
		if s.Kind == KindSignature {
			continue
		}
		sections = append(sections, section{
			Section: Section{Kind: s.Kind, Encoding: s.Encoding, Order: s.Order},
			data:    data[s.Offset : s.Offset+s.Length],
		})
	}
	sections = append(sections, section{Section: Section{Kind: KindSignature}, data: sig})
	header := assemble(sections, uint32(m.version))
	var out bytes.Buffer
	if err := writeFile(&out, header, sections); err != nil {
		return nil, err
	}
	if !bytes.Equal(out.Bytes()[offDigest:offDigest+32], m.digest[:]) {
		return nil, errors.New("signing changed the content digest") // cannot happen
	}
	return out.Bytes(), nil
}

// ErrUnsigned is returned by CheckSignature for a model without a signature.
var ErrUnsigned = errors.New("model is not signed")

// Signed reports whether the model carries a signature section, and the id
// of the key that made it.
func (m *Model) Signed() (keyID [32]byte, ok bool) {
	b, ok := m.signature()
	if !ok || len(b) != signatureSize {
		return keyID, false
	}
	copy(keyID[:], b[8:40])
	return keyID, true
}

func (m *Model) signature() ([]byte, bool) {
	b, _, ok := m.signatureSection()
	return b, ok
}

// signatureSection returns the signature section's bytes and its offset
// in the file.
func (m *Model) signatureSection() ([]byte, int64, bool) {
	for _, s := range m.sections {
		if s.Kind == KindSignature {
			return m.data[s.Offset : s.Offset+s.Length], s.Offset, true
		}
	}
	return nil, 0, false
}

// CheckSignature checks that the model is signed by pub and that its
// content matches the signed digest: the digest recorded in the header must
// equal the digest of the sections (every byte of content is read) and the
// signature must verify over it. It returns ErrUnsigned when there is no
// signature.
func (m *Model) CheckSignature(pub ed25519.PublicKey) error {
	if len(pub) != ed25519.PublicKeySize {
		return errors.New("not an Ed25519 public key")
	}
	b, at, ok := m.signatureSection()
	if !ok {
		return ErrUnsigned
	}
	if len(b) != signatureSize || u32(b) != signatureScheme {
		return m.withPath(formatErr("signature", at, "signature section of %d bytes, scheme %d: expected %d bytes, scheme %d", len(b), schemeOf(b), signatureSize, signatureScheme))
	}
	if id := KeyID(pub); !bytes.Equal(b[8:40], id[:]) {
		return m.withPath(formatErr("signature", at+8, "signed by another key (key id %x…, this key is %x…)", b[8:16], id[:8]))
	}
	if err := m.VerifyChecksums(); err != nil {
		return err
	}
	if !ed25519.Verify(pub, SignedMessage(m.digest), b[40:]) {
		return m.withPath(formatErr("signature", at+40, "signature does not match the content digest: the model was changed after signing, or the signature is damaged"))
	}
	return nil
}

func schemeOf(b []byte) uint32 {
	if len(b) < 4 {
		return 0
	}
	return u32(b)
}
