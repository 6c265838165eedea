package server

import (
	"bytes"
	"encoding/json"

	"glowlog/diag/spectrum"
)

// The stored JSON of a spectrum result is written by the generated,
// reflection-free encoder of package spectrum (spectrum.AppendJSON, the
// one `glowlog analyze` uses): byte for byte what json.Encoder with
// SetEscapeHTML(false) writes (TestEncodeSpectrumResultSameBytes here,
// TestAppendJSONMatchesEncodingJSON there). With the whole-spectrum fit's
// plot series the result is larger, and encoding/json's reflection and
// second compaction pass of every MarshalJSON took ~19 % of ingest.

// encodeSpectrumResult appends r as json.Encoder (SetEscapeHTML(false))
// writes it, with its trailing newline. A value encoding/json refuses
// (NaN, ±Inf) is reported with encoding/json's own error.
func encodeSpectrumResult(buf *bytes.Buffer, r *spectrum.Result) error {
	b, err := spectrum.AppendJSON(buf.AvailableBuffer(), r)
	if err != nil {
		return encodePlain(buf, r)
	}
	buf.Write(append(b, '\n'))
	return nil
}

// encodePlain appends v as json.Encoder with SetEscapeHTML(false) writes
// it (the reference of encodeSpectrumResult, and line-table results).
func encodePlain(buf *bytes.Buffer, v any) error {
	enc := json.NewEncoder(buf)
	enc.SetEscapeHTML(false)
	return enc.Encode(v)
}
