package format

import (
	"encoding/binary"
	"ingot/compile/fixture"
	"testing"

	"ingot/compile/tables"
)

// The versions reported are the ones the reader accepts and the writer
// puts in the header.
func TestReportedVersions(t *testing.T) {
	oldest, newest := ReadVersions()
	floats, quantized := WrittenVersions()
	for name, tb := range map[string]struct {
		data []byte
		want int
	}{
		"floats":    {mustMarshal(t, tinyModel(t)), floats},
		"quantized": {mustMarshal(t, quantizedRandom()), quantized},
	} {
		if v := int(binary.LittleEndian.Uint32(tb.data[offVersion:])); v != tb.want {
			t.Errorf("%s model written as version %d, reported %d", name, v, tb.want)
		}
	}
	data := mustMarshal(t, tinyModel(t))
	for v := oldest - 1; v <= newest+1; v++ {
		b := append([]byte(nil), data...)
		binary.LittleEndian.PutUint32(b[offVersion:], uint32(v))
		_, err := FromBytes(b)
		// The header checksum covers the version, so a changed version
		// is refused for its checksum or its number; only the version
		// the file was written with opens.
		if v < oldest || v > newest {
			if err == nil {
				t.Errorf("version %d outside %d..%d opened", v, oldest, newest)
			}
		}
	}
}

func quantizedRandom() *tables.Tables {
	tb := fixture.RandomTables(7, 30, []int{50, 40})
	quantizeByRounding(tb, 0.05, 2)
	return tb
}
