package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestSignedReleaseVerifies(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	key := filepath.Join(dir, "release")
	other := filepath.Join(dir, "other")
	for _, k := range []string{key, other} {
		if code, _, e := ingot(t, "keygen", "-o", k); code != 0 {
			t.Fatalf("keygen: %s", e)
		}
	}
	if fi, _ := os.Stat(key + ".key"); fi.Mode().Perm() != 0o600 {
		t.Errorf("private key mode %v, want 0600", fi.Mode().Perm())
	}
	if code, _, e := ingot(t, "keygen", "-o", key); code != 2 || !strings.Contains(e, "exists") {
		t.Errorf("keygen over an existing key: exit %d %s", code, e)
	}
	// Unsigned: the signature check fails.
	if code, out, _ := ingot(t, "verify", "--public-key", key+".pub", m); code != 1 || !strings.Contains(out, "not signed") {
		t.Errorf("unsigned model: exit %d\n%s", code, out)
	}
	if code, _, e := ingot(t, "sign", "--key", key+".key", m); code != 0 {
		t.Fatalf("sign: %s", e)
	}
	if code, out, e := ingot(t, "verify", "--public-key", key+".pub", m); code != 0 {
		t.Errorf("signed model: exit %d\n%s%s", code, out, e)
	}
	if code, out, _ := ingot(t, "verify", "--public-key", other+".pub", m); code != 1 || !strings.Contains(out, "another key") {
		t.Errorf("wrong key: exit %d\n%s", code, out)
	}
	// Any changed byte: exit 1.
	data, _ := os.ReadFile(m)
	for _, at := range []int{8, 100, len(data) / 2, len(data) - 120} {
		b := append([]byte(nil), data...)
		b[at] ^= 0x10
		bad := filepath.Join(dir, "bad.ingot")
		os.WriteFile(bad, b, 0o644)
		if code, _, e := ingot(t, "verify", "--public-key", key+".pub", bad); code != 1 {
			t.Errorf("byte %d changed: exit %d %s", at, code, e)
		}
	}
}

func TestQuantizedModelsPassVerify(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	for _, bits := range []string{"4", "8"} {
		q := filepath.Join(dir, "q"+bits+".ingot")
		if code, _, e := ingot(t, "quantize", "--bits", bits, "-o", q, m); code != 0 {
			t.Fatal(e)
		}
		if code, out, e := ingot(t, "verify", q); code != 0 {
			t.Errorf("%s bits: exit %d\n%s%s", bits, code, out, e)
		}
	}
}

// Every pruned, cut-off or quantized model passes ingot verify, its
// normalisation within the model's own tolerance (law of probability).
func TestShrunkModelsPassVerify(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	cut := demoModel(t, t.TempDir(), "--min-count", "2=2,3=3")
	held := filepath.Join(dir, "held.txt")
	os.WriteFile(held, []byte(demoHeldout), 0o644)
	steps := map[string][]string{
		"pruned":               {"prune", "--drop-below", "1e-5", "-o", filepath.Join(dir, "p.ingot"), m},
		"pruned to a budget":   {"prune", "--max-size", "15KB", "-o", filepath.Join(dir, "b.ingot"), m},
		"pruned, 6 bits":       {"prune", "--max-size", "12KB", "--bits", "6", "-o", filepath.Join(dir, "pq.ingot"), m},
		"quantized equal-mass": {"quantize", "--bits", "3", "--trainer", "equal-mass", "-o", filepath.Join(dir, "qb.ingot"), m},
		"quantized 16 bits":    {"quantize", "--bits", "16", "-o", filepath.Join(dir, "q16.ingot"), m},
	}
	outputs := map[string]string{"cut off": cut}
	for name, args := range steps {
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("%s: %s", name, e)
		}
		outputs[name] = args[len(args)-2]
	}
	for name, path := range outputs {
		if code, out, e := ingot(t, "verify", path); code != 0 {
			t.Errorf("%s: verify exit %d\n%s%s", name, code, out, e)
		}
	}
}
