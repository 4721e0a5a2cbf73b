package main

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"ingot/format"
)

// A damaged file through 'ingot verify', one case per kind of damage: a
// flipped bit in the header, the directory, the padding and a section of
// every kind (a quantized, signed demo model has all eleven) exits 1 with a
// one-line message naming the damaged part; a truncated file exits 1 naming
// the truncation, and a file cut inside its magic exits 2 (not a model).
// The full matrix of flips and truncations is verify's TestCorruptionMatrix.
func TestVerifyNamesTheDamagedPart(t *testing.T) {
	dir := t.TempDir()
	plain := demoModel(t, dir)
	model := filepath.Join(dir, "q.ingot")
	if code, _, e := ingot(t, "quantize", "--bits", "4", "-o", model, plain); code != 0 {
		t.Fatal(e)
	}
	key := filepath.Join(dir, "release")
	if code, _, e := ingot(t, "keygen", "-o", key); code != 0 {
		t.Fatal(e)
	}
	if code, _, e := ingot(t, "sign", "--key", key+".key", model); code != 0 {
		t.Fatal(e)
	}
	clean, err := os.ReadFile(model)
	if err != nil {
		t.Fatal(err)
	}
	m, err := format.FromBytes(clean)
	if err != nil {
		t.Fatal(err)
	}

	type damage struct {
		name string
		data []byte
		code int
		want string // in the one-line message on stderr
	}
	flipped := func(at int64) []byte {
		b := slices.Clone(clean)
		b[at] ^= 0x10
		return b
	}
	cases := []damage{
		{"digest in the header", flipped(30), 1, "header"},
		{"offset in the directory", flipped(64 + 32*2 + 16), 1, "header"},
		{"cut by 8 bytes", clean[:len(clean)-8], 1, "truncated"},
		{"cut inside the directory", clean[:100], 1, "truncated"},
		{"cut inside the header", clean[:40], 1, "truncated"},
		{"cut inside the magic", clean[:5], 2, "not a readable ingot model"},
	}
	seen := map[format.SectionKind]bool{}
	padding := false
	end := int64(64 + 32*len(m.Sections()))
	for _, s := range m.Sections() {
		if s.Offset > end && !padding {
			padding = true
			cases = append(cases, damage{"padding before " + s.Name(), flipped(end), 1, "padding before " + s.Name()})
		}
		end = s.Offset + s.Length
		if seen[s.Kind] {
			continue
		}
		seen[s.Kind] = true
		cases = append(cases, damage{s.Name(), flipped(s.Offset + s.Length/2), 1, s.Name()})
	}
	for k := format.KindSummary; k <= format.KindBackoffCodebook; k++ {
		if !seen[k] {
			t.Errorf("the demo model has no %s section", k)
		}
	}
	if !padding {
		t.Error("the demo model has no padding between sections")
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(dir, "damaged.ingot")
			if err := os.WriteFile(path, c.data, 0o644); err != nil {
				t.Fatal(err)
			}
			code, _, e := ingot(t, "verify", path)
			if code != c.code || !strings.Contains(e, c.want) || strings.Count(e, "\n") != 1 {
				t.Errorf("exit %d, stderr %q; want exit %d naming %q", code, e, c.code, c.want)
			}
		})
	}
}
