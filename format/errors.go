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

func formatErr(section string, offset int64, format string, args ...any) *FormatError {
	return &FormatError{Section: section, Offset: offset, Msg: fmt.Sprintf(format, args...)}
}
