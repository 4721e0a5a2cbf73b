package format

import (
	"encoding/json"
	"testing"
)

// A FormatError carries the one problem type: the same section, offset and
// message, which read the same in the error (after the file) and in a
// check's report, and in JSON as section, offset and message.
func TestFormatErrorCarriesAProblem(t *testing.T) {
	e := &FormatError{Path: "m.ingot", Section: "word text", Offset: 640, Msg: "word 3 is not valid UTF-8"}
	p := e.Problem()
	if p != (Problem{Section: "word text", Offset: 640, Msg: "word 3 is not valid UTF-8"}) || e.Error() != "m.ingot: "+p.String() {
		t.Errorf("problem %+v, error %q, problem text %q", p, e.Error(), p.String())
	}
	if s := (Problem{Section: "signature", Offset: -1, Msg: "the model is not signed"}).String(); s != "signature: the model is not signed" {
		t.Errorf("a problem with no place: %q", s)
	}
	b, _ := json.Marshal(p)
	if string(b) != `{"section":"word text","offset":640,"message":"word 3 is not valid UTF-8"}` {
		t.Errorf("JSON %s", b)
	}
}
