package format

import "fmt"

// FormatError reports bytes that break the model format: what is wrong and
// where (file, section, byte offset from the start of the file).
type FormatError struct {
	// Path is the file name; empty when the bytes did not come from a file.
	Path string
	// Section names the part of the file, for example "header",
	// "directory entry 3" or "probabilities of order 2".
	Section string
	// Offset is the byte offset in the file where the problem lies.
	Offset int64
	// Msg says what is wrong, in lower case.
	Msg string
}

func (e *FormatError) Error() string {
	s := fmt.Sprintf("%s at offset %d: %s", e.Section, e.Offset, e.Msg)
	if e.Path != "" {
		s = e.Path + ": " + s
	}
	return s
}

// Problem is one defect of a model file, what is wrong and where: the one
// problem type every check reports (verify.Problem is this type; a
// FormatError carries one). Its JSON keys are section, offset and message.
type Problem struct {
	// Section names the part of the file: "header", "directory entry 3
	// (word text)", "probabilities of order 2", "signature", ...
	Section string `json:"section"`
	// Offset is the byte offset in the file where the defect lies, or -1
	// when the defect has no place in the file (a release gate's verdict,
	// a missing signature).
	Offset int64 `json:"offset"`
	// Msg says what is wrong, in lower case.
	Msg string `json:"message"`
}

func (p Problem) String() string {
	if p.Offset < 0 {
		return fmt.Sprintf("%s: %s", p.Section, p.Msg)
	}
	return fmt.Sprintf("%s at offset %d: %s", p.Section, p.Offset, p.Msg)
}

// Problem returns the error's defect and where it lies, without the file.
func (e *FormatError) Problem() Problem {
	return Problem{Section: e.Section, Offset: e.Offset, Msg: e.Msg}
}

func formatErr(section string, offset int64, format string, args ...any) *FormatError {
	return &FormatError{Section: section, Offset: offset, Msg: fmt.Sprintf(format, args...)}
}
