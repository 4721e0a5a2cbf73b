package format

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"

	"ingot/compile/tables"
)

// buildInfo is the JSON form of tables.Info in the build-info section. It
// uses the same field names; numbers that JSON cannot hold (infinities, NaN)
// are written as the strings "Infinity", "-Infinity" and "NaN", since a
// log10 of zero is a real case (an empty context that gives the uniform
// distribution no weight).
type buildInfo struct {
	Method                 string               `json:"method"`
	Discounts              []map[string]number  `json:"discounts,omitempty"`
	Fallbacks              []string             `json:"fallbacks,omitempty"`
	Options                map[string]string    `json:"options,omitempty"`
	EmptyContextLogBackoff number               `json:"empty_context_log10_backoff"`
	ToolVersion            string               `json:"tool_version,omitempty"`
	BuildTime              string               `json:"build_time,omitempty"`
	History                []string             `json:"history,omitempty"`
	Commands               []tables.Command     `json:"commands,omitempty"`
	Quantization           *tables.Quantization `json:"quantization,omitempty"`
}

// number is a float64 that survives JSON even when it is not finite.
type number float64

func (n number) MarshalJSON() ([]byte, error) {
	f := float64(n)
	switch {
	case math.IsNaN(f):
		return []byte(`"NaN"`), nil
	case math.IsInf(f, 1):
		return []byte(`"Infinity"`), nil
	case math.IsInf(f, -1):
		return []byte(`"-Infinity"`), nil
	}
	return json.Marshal(f)
}

func (n *number) UnmarshalJSON(b []byte) error {
	var s string
	if err := json.Unmarshal(b, &s); err == nil {
		switch s {
		case "NaN":
			*n = number(math.NaN())
		case "Infinity":
			*n = number(math.Inf(1))
		case "-Infinity":
			*n = number(math.Inf(-1))
		default:
			return fmt.Errorf("number %q is neither numeric nor Infinity, -Infinity or NaN", s)
		}
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return err
	}
	*n = number(f)
	return nil
}

// marshalInfo encodes the build information as one line of JSON without a
// final newline. encoding/json sorts map keys, so the bytes depend only on
// the values.
func marshalInfo(info tables.Info) ([]byte, error) {
	b := buildInfo{
		Method:                 info.Method,
		Fallbacks:              info.Fallbacks,
		Options:                info.Options,
		EmptyContextLogBackoff: number(info.EmptyContextLogBackoff),
		ToolVersion:            info.ToolVersion,
		BuildTime:              info.BuildTime,
		History:                info.History,
		Commands:               info.Commands,
		Quantization:           info.Quantization,
	}
	if info.Discounts != nil {
		b.Discounts = make([]map[string]number, len(info.Discounts))
		for i, d := range info.Discounts {
			if d == nil {
				continue
			}
			b.Discounts[i] = make(map[string]number, len(d))
			for name, v := range d {
				b.Discounts[i][name] = number(v)
			}
		}
	}
	var out bytes.Buffer
	enc := json.NewEncoder(&out)
	enc.SetEscapeHTML(false) // keep <s> and friends readable
	if err := enc.Encode(b); err != nil {
		return nil, err
	}
	return bytes.TrimSuffix(out.Bytes(), []byte("\n")), nil
}

// unmarshalInfo decodes the build-info section.
func unmarshalInfo(data []byte) (tables.Info, error) {
	var b buildInfo
	if err := json.Unmarshal(data, &b); err != nil {
		return tables.Info{}, err
	}
	info := tables.Info{
		Method:                 b.Method,
		Fallbacks:              b.Fallbacks,
		Options:                b.Options,
		EmptyContextLogBackoff: float64(b.EmptyContextLogBackoff),
		ToolVersion:            b.ToolVersion,
		BuildTime:              b.BuildTime,
		History:                b.History,
		Commands:               b.Commands,
		Quantization:           b.Quantization,
	}
	if b.Discounts != nil {
		info.Discounts = make([]map[string]float64, len(b.Discounts))
		for i, d := range b.Discounts {
			if d == nil {
				continue
			}
			info.Discounts[i] = make(map[string]float64, len(d))
			for name, v := range d {
				info.Discounts[i][name] = float64(v)
			}
		}
	}
	return info, nil
}
