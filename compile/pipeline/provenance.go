package pipeline

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"strings"

	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/format/files"
)

// CommandLine renders a command line as one string that a POSIX shell reads
// back as the same words: a word of letters, digits and the characters
// -_./=:,+@% stays as it is, any other is put in single quotes (a single
// quote inside written '\”).
func CommandLine(words []string) string {
	q := make([]string, len(words))
	for i, w := range words {
		q[i] = shellQuote(w)
	}
	return strings.Join(q, " ")
}

func shellQuote(w string) string {
	if w == "" {
		return "''"
	}
	plain := true
	for _, r := range w {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_./=:,+@%", r)) {
			plain = false
			break
		}
	}
	if plain {
		return w
	}
	return "'" + strings.ReplaceAll(w, "'", `'\''`) + "'"
}

// DigestFile returns the length and SHA-256 digest of the named file's
// bytes, recorded under the name given.
func DigestFile(name string) (tables.Input, error) {
	f, _, err := files.OpenRegular(name)
	if err != nil {
		return tables.Input{}, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return tables.Input{}, fmt.Errorf("%s: %w", name, err)
	}
	return tables.Input{Name: name, Bytes: n, SHA256: hex.EncodeToString(h.Sum(nil))}, nil
}

// Record returns the provenance of one command: its line, the budget as
// given ("" for none) and what it read.
func Record(words []string, maxSize string, inputs ...tables.Input) tables.Command {
	if inputs == nil {
		inputs = []tables.Input{}
	}
	return tables.Command{Line: CommandLine(words), MaxSize: maxSize, Inputs: inputs}
}

// inputName is the name a count file is recorded under.
func inputName(name string) string {
	if name == input.Stdin {
		return "stdin"
	}
	return name
}
