package main

import (
	"encoding/json"
	"path/filepath"
	"testing"
)

// verify --public-key reports a signature by another key at the key id
// inside the signature section, whose offset inspect gives.
func TestSignatureProblemHasTheSectionOffset(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	p := func(n string) string { return filepath.Join(dir, n) }
	for _, args := range [][]string{{"keygen", "-o", p("a")}, {"keygen", "-o", p("b")}, {"sign", "--key", p("a.key"), model}} {
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("%v: %s", args, e)
		}
	}
	_, out, _ := ingot(t, "inspect", "--json", model)
	var ins struct {
		Sections []struct {
			Name   string `json:"name"`
			Offset int64  `json:"offset"`
		} `json:"sections"`
	}
	if err := json.Unmarshal([]byte(out), &ins); err != nil {
		t.Fatal(err)
	}
	at := int64(-1)
	for _, s := range ins.Sections {
		if s.Name == "signature" {
			at = s.Offset
		}
	}
	if at <= 0 {
		t.Fatalf("inspect shows no signature section: %s", out)
	}
	code, out, _ := ingot(t, "verify", "--json", "--public-key", p("b.pub"), model)
	var rep struct {
		Checks []struct {
			Name     string `json:"name"`
			Problems []struct {
				Section string `json:"section"`
				Offset  int64  `json:"offset"`
			} `json:"problems"`
		} `json:"checks"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	found := false
	for _, c := range rep.Checks {
		if c.Name == "signature" {
			found = len(c.Problems) == 1 && c.Problems[0].Section == "signature" && c.Problems[0].Offset == at+8
			if !found {
				t.Errorf("signature problems %+v, want one at offset %d (the key id in the section at %d)", c.Problems, at+8, at)
			}
		}
	}
	if code != exitCheckFailed || !found {
		t.Errorf("exit %d, signature check found %v: %s", code, found, out)
	}
}
