package inspect

import (
	"encoding/json"
	"math"
	"strconv"
)

// Number is a float64 that marshals to a JSON number, written as
// encoding/json writes a float64, or to null when it is not finite (JSON
// has no infinities or NaN). Every report's number that may not be finite
// is a Number: the one way ingot writes them.
type Number float64

// MarshalJSON implements json.Marshaler.
func (n Number) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsInf(f, 0) || math.IsNaN(f) {
		return []byte("null"), nil
	}
	return json.Marshal(f)
}

// Stored is a log10 value as the model file stores it, a float32. It
// marshals to the shortest decimal that reads back as the same float32, or
// to null when it is not finite (the -Inf of the unigram <s>).
type Stored float32

// MarshalJSON implements json.Marshaler.
func (s Stored) MarshalJSON() ([]byte, error) {
	f := float64(s)
	if math.IsInf(f, 0) || math.IsNaN(f) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 32), nil
}
