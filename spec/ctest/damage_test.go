package ctest

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/format"
	"ingot/quantize"
)

// demoHeldOut is text the damaged models are used on: the first lines of
// the demo's held-out text (the damage runs use every damaged copy on it,
// so it is kept short).
func demoHeldOut(t *testing.T, lines int) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(tools(t).root, "cmd/ingot/demodata/heldout.txt"))
	if err != nil {
		t.Fatal(err)
	}
	all := strings.SplitAfter(string(b), "\n")
	return strings.Join(all[:min(lines, len(all))], "")
}

// tally is one line of the driver's damage report.
type tally struct {
	kind                   string
	tried, atOpen, byCheck int
}

func parseTallies(t *testing.T, out string) map[string]tally {
	t.Helper()
	m := map[string]tally{}
	for _, line := range strings.Split(strings.TrimSpace(out), "\n") {
		var c tally
		if _, err := fmt.Sscanf(line, "%s tried %d refused_at_open %d refused_by_check %d", &c.kind, &c.tried, &c.atOpen, &c.byCheck); err != nil {
			t.Fatalf("driver output %q: %v", line, err)
		}
		m[c.kind] = c
	}
	return m
}

// Every single-bit flip of the whole file (header, directory, every
// section, padding) and every truncation of the corruption matrix's models
// and of the golden models are refused, at open or by ingot_check; and every
// damaged copy that opens, checks or not, is used (every word looked up,
// text scored) under the address and undefined-behaviour sanitizers
// without a report. So are random 32-bit overwrites inside sections, also
// with every checksum and the digest recomputed as an attacker would, so
// that only the reader's bounds checks stand, and random header and
// directory fields (section count, offsets, lengths, kinds, orders,
// encodings), resealed likewise, so that only the open checks stand.
//
// A CRC whose generator has more than one term detects every single-bit
// error (W. W. Peterson and D. T. Brown (1961), "Cyclic codes for error
// detection", Proc. IRE 49(1); recalled from memory), which is why every
// flip inside a section must be found.
func TestDamagedCopies(t *testing.T) {
	p := tools(t)
	text := demoHeldOut(t, 6)
	models := demoModels(t)
	for model := range goldenModels(t) {
		// The Marrowfen goldens are the kinds of file demoModels already
		// damages (the demo's commands, floats and quantized, versions 1
		// to 3), four to six times larger: flipping each of their bits
		// would add minutes and no new case. TestGoldenVectors reads them.
		if strings.HasPrefix(filepath.Base(model), "marrowfen.") {
			continue
		}
		models = append(models, testModel{filepath.Base(model), model, nil})
	}
	for i, m := range models {
		t.Run(m.name, func(t *testing.T) {
			r := run(t, text, true, p.driverASan, "damage", m.path, fmt.Sprint(i+1))
			if r.code != 0 {
				t.Fatalf("driver exit %d:\n%s", r.code, r.stderr)
			}
			got := parseTallies(t, r.stdout)
			info, err := os.Stat(m.path)
			if err != nil {
				t.Fatal(err)
			}
			size := int(info.Size())
			if f := got["flip"]; f.tried != 8*size || f.atOpen+f.byCheck != f.tried {
				t.Errorf("bit flips: %+v; want all %d refused", f, 8*size)
			}
			if c := got["truncation"]; c.tried != size || c.atOpen != c.tried {
				t.Errorf("truncations: %+v; want all %d refused at open", c, size)
			}
			if o := got["overwrite"]; o.tried == 0 || o.atOpen+o.byCheck < o.tried*95/100 {
				// An overwrite that writes the value already there
				// changes nothing; any other is refused.
				t.Errorf("overwrites: %+v; want nearly all refused", o)
			}
			if s := got["resealed"]; s.tried == 0 || s.byCheck != 0 {
				t.Errorf("resealed overwrites: %+v; want each used, none refused by the checksums", s)
			}
			if l := got["layout"]; l.tried != 4000 {
				t.Errorf("resealed header and directory fields: %+v; want 4000 tried", l)
			}
			t.Logf("%s (%d bytes): %v", m.name, size, got)
		})
	}
}

// sectionSpan returns the offset and length of the section of the given
// kind and order of a model file.
func sectionSpan(t *testing.T, data []byte, kind, order uint32) (int, int) {
	t.Helper()
	s := binary.LittleEndian.Uint32(data[12:])
	for j := range s {
		e := data[64+32*j:]
		if binary.LittleEndian.Uint32(e) == kind && binary.LittleEndian.Uint32(e[8:]) == order {
			return int(binary.LittleEndian.Uint64(e[16:])), int(binary.LittleEndian.Uint64(e[24:]))
		}
	}
	t.Fatalf("no section of kind %d and order %d", kind, order)
	return 0, 0
}

// write puts data in a new file of the test's temporary directory.
func write(t *testing.T, name string, data []byte) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func flipped(data []byte, at int, bit uint) []byte {
	c := append([]byte(nil), data...)
	c[at] ^= 1 << bit
	return c
}

// The example program's contract (issue: exit 1 naming the damaged
// section, 2 on an unreadable file or bad input, --no-checksums reads a
// damaged file), with and without the sanitizers.
func TestScoreProgramContract(t *testing.T) {
	p := tools(t)
	models := demoModels(t)
	plain := models[0].data
	off, n := sectionSpan(t, plain, 5, 2) // last words of order 2
	lastWords := write(t, "last-words.ingot", flipped(plain, off+n/2, 3))
	qdata := models[1].data
	qoff, qn := sectionSpan(t, qdata, 6, 3) // packed probabilities of order 3
	packed := write(t, "packed.ingot", flipped(qdata, qoff+qn-1, 0))
	future := append([]byte(nil), plain...)
	binary.LittleEndian.PutUint32(future[8:], 9)
	s := binary.LittleEndian.Uint32(future[12:])
	crc := crc32.Update(crc32.Checksum(future[:60], crc32.MakeTable(crc32.Castagnoli)), crc32.MakeTable(crc32.Castagnoli), future[64:64+32*s])
	binary.LittleEndian.PutUint32(future[60:], crc)
	cases := []struct {
		name   string
		args   []string
		stdin  string
		code   int
		stderr string
	}{
		{"intact", []string{models[0].path}, "turn the camera on\n", 0, ""},
		{"damaged last words", []string{lastWords}, "turn the camera on\n", 1, "last words of order 2"},
		{"damaged last words, no checksums", []string{"--no-checksums", lastWords}, "turn the camera on\n", 0, ""},
		{"damaged packed column", []string{packed}, "turn the camera on\n", 1, "probabilities of order 3"},
		{"damaged packed column, no checksums", []string{"--no-checksums", packed}, "turn the camera on\n", 0, ""},
		{"flipped header", []string{write(t, "header.ingot", flipped(plain, 20, 1))}, "", 2, "header"},
		{"truncated", []string{write(t, "cut.ingot", plain[:len(plain)-8])}, "", 2, "truncated"},
		{"future version", []string{write(t, "future.ingot", future)}, "", 2, "version 9"},
		{"not a model", []string{write(t, "text.txt", []byte("turn the camera on\n"))}, "", 2, "not an ingot model file"},
		{"missing", []string{filepath.Join(t.TempDir(), "absent.ingot")}, "", 2, "absent.ingot"},
		{"a directory", []string{t.TempDir()}, "", 2, "not a regular file"},
		{"invalid UTF-8", []string{models[0].path}, "turn the camera on\nturn \xff on\n", 2, "stdin:2: invalid UTF-8"},
		{"no model", nil, "", 2, "usage"},
		{"unknown option", []string{"--fast", models[0].path}, "", 2, "unknown option --fast"},
	}
	for _, c := range cases {
		for _, sanitizer := range []bool{false, true} {
			prog, name := p.score, c.name
			if sanitizer {
				prog, name = p.scoreASan, name+"/sanitized"
			}
			t.Run(name, func(t *testing.T) {
				r := run(t, c.stdin, sanitizer, prog, c.args...)
				if r.code != c.code || !strings.Contains(r.stderr, c.stderr) {
					t.Fatalf("exit %d, stderr %q; want exit %d and %q", r.code, r.stderr, c.code, c.stderr)
				}
				if c.code == 0 && strings.Count(r.stdout, "\n") != strings.Count(c.stdin, "\n") {
					t.Fatalf("output %q", r.stdout)
				}
			})
		}
	}
}

// The score program itself, sanitized, on damaged files on disk: sampled
// single-bit flips in every section of the corruption matrix's models
// are refused (exit 1, naming a section, or 2 when open finds them), and
// with --no-checksums every file that opens is scored without a
// sanitizer report.
func TestScoreProgramOnDamagedFiles(t *testing.T) {
	p := tools(t)
	text := demoHeldOut(t, 300)
	rng := rand.New(rand.NewPCG(14, 14))
	for _, m := range demoModels(t) {
		s := binary.LittleEndian.Uint32(m.data[12:])
		for j := range s {
			e := m.data[64+32*j:]
			off, n := int(binary.LittleEndian.Uint64(e[16:])), int(binary.LittleEndian.Uint64(e[24:]))
			if n == 0 {
				continue
			}
			at := off + rng.IntN(n)
			path := write(t, "damaged.ingot", flipped(m.data, at, uint(rng.IntN(8))))
			r := run(t, text, true, p.scoreASan, path)
			if !(r.code == 1 && strings.Contains(r.stderr, "damaged:") || r.code == 2) {
				t.Errorf("%s, byte %d flipped: exit %d, %q; want it refused", m.name, at, r.code, r.stderr)
			}
			r = run(t, text, true, p.scoreASan, "--no-checksums", path)
			if r.code != 0 && r.code != 2 {
				t.Errorf("%s, byte %d flipped, no checksums: exit %d, %q", m.name, at, r.code, r.stderr)
			}
		}
	}
}

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// reseal recomputes every section checksum, the content digest and the
// header checksum (spec/FORMAT.md section 5), as an attacker would.
func reseal(data []byte) {
	s := binary.LittleEndian.Uint32(data[12:])
	h := sha256.New()
	for j := range s {
		e := data[64+32*j:]
		off, n := binary.LittleEndian.Uint64(e[16:]), binary.LittleEndian.Uint64(e[24:])
		b := data[off : off+n]
		binary.LittleEndian.PutUint32(e[12:], crc32.Checksum(b, castagnoli))
		if binary.LittleEndian.Uint32(e) != 9 {
			var rec [20]byte
			copy(rec[:12], e[:12])
			copy(rec[12:], e[24:32])
			h.Write(rec[:])
			h.Write(b)
		}
	}
	copy(data[24:56], h.Sum(nil))
	crc := crc32.Update(crc32.Checksum(data[:60], castagnoli), castagnoli, data[64:64+32*s])
	binary.LittleEndian.PutUint32(data[60:], crc)
}

// A packed index at or above its codebook's length (spec/FORMAT.md 4.5:
// "the file is damaged") is never used to read past the codebook: with
// every index set to the codebook's length and the file resealed so that every check
// passes, the predictions that read the column are NaN, and the others
// are numbers.
func TestCodebookIndexOutOfRange(t *testing.T) {
	p := tools(t)
	// 8-bit codebooks of a small model hold fewer values than 2^8.
	tb := fixture.Estimate(t, fixture.Demo(t)[:40], 3, estimate.Options{Method: estimate.KneserNey})
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	data, err := format.Marshal(q)
	if err != nil {
		t.Fatal(err)
	}
	s := binary.LittleEndian.Uint32(data[12:])
	damaged := false
	for order := uint32(2); order <= 3 && !damaged; order++ {
		_, cLen := sectionSpan(t, data, 10, order)
		off, n := sectionSpan(t, data, 6, order)
		bits := binary.LittleEndian.Uint32(data[off:])
		if uint64(cLen/4) >= 1<<bits {
			continue // every index fits this codebook
		}
		// Every index becomes L, the first value out of range: read
		// unchecked, it would land just past the codebook, on bytes that
		// are no NaN.
		stream := data[off+8 : off+n]
		clear(stream)
		L := uint64(cLen / 4)
		for i := uint64(0); (i+1)*uint64(bits) <= uint64(len(stream))*8; i++ {
			for b := range uint64(bits) {
				if L>>b&1 == 1 {
					at := i*uint64(bits) + b
					stream[at/8] |= 1 << (at % 8)
				}
			}
		}
		damaged = true
	}
	if !damaged {
		t.Fatalf("no probability codebook of orders 2-3 shorter than its index width allows (%d sections)", s)
	}
	reseal(data)
	path := write(t, "indexes.ingot", data)
	held := demoHeldOut(t, 20)
	for _, sanitizer := range []bool{false, true} {
		prog := p.score
		if sanitizer {
			prog = p.scoreASan
		}
		r := run(t, held, sanitizer, prog, path)
		if r.code != 0 {
			t.Fatalf("exit %d: %s (the resealed file passes every check)", r.code, r.stderr)
		}
		if !strings.Contains(r.stdout, "nan") {
			t.Fatalf("no prediction came out NaN:\n%s", r.stdout)
		}
		if strings.Count(r.stdout, "nan") == len(strings.Fields(r.stdout)) {
			t.Fatalf("every prediction came out NaN:\n%s", r.stdout)
		}
	}
}
