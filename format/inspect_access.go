package format

// Version returns the format version recorded in the file's header (1, or 2
// when a column is quantized).
func (m *Model) Version() int { return m.version }

// Size returns the length of the model file in bytes, which the open checks
// found equal to the file length recorded in the header.
func (m *Model) Size() int64 { return int64(len(m.data)) }
