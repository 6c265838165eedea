package server

import (
	"bytes"
	"encoding/json"
	"sync"

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

// encodeSpectrumResultSplit is encodeSpectrumResult with the plot series
// taken out of the JSON (a placeholder, [null], for each) and returned in
// their compact stored form (spectrum.AppendJSONSplit), appended to
// series; spectrum.ExpandSeries gives encodeSpectrumResult's bytes back.
// A result whose text cannot be split is appended whole (no series).
// With series nil the form is written in a buffer of seriesBufPool and
// returned in a slice of its own length (AppendJSONSplit sizes a new
// buffer for the worst case, ~2.5 times the usual form).
func encodeSpectrumResultSplit(buf *bytes.Buffer, series []byte, r *spectrum.Result) ([]byte, error) {
	var sp *[]byte
	to := series
	if series == nil {
		sp = seriesBufPool.Get().(*[]byte)
		to = (*sp)[:0]
	}
	b, s, err := spectrum.AppendJSONSplit(buf.AvailableBuffer(), to, r)
	if sp != nil {
		s = ownSeries(sp, s, err)
	}
	if err != nil {
		return series, encodeSpectrumResult(buf, r)
	}
	buf.Write(append(b, '\n'))
	return s, nil
}

// ownSeries returns a copy of the series form s (nil when empty or
// err is set) and puts s's buffer back in seriesBufPool as *sp.
func ownSeries(sp *[]byte, s []byte, err error) []byte {
	var own []byte
	if len(s) > 0 && err == nil {
		own = bytes.Clone(s)
	}
	if cap(s) <= 1<<20 {
		*sp = s[:0]
		seriesBufPool.Put(sp)
	}
	return own
}

// seriesBufPool holds the buffers encodeSpectrumResultSplit writes series
// forms in.
var seriesBufPool = sync.Pool{New: func() any { b := make([]byte, 0, 64<<10); return &b }}

// encodeSpectrumResultSplitFull is encodeSpectrumResultSplit that also
// returns encodeSpectrumResult's bytes (the whole JSON, for an answer),
// written in the same pass over the series (spectrum.AppendJSONSplitFull),
// in a buffer of resultBufPool.
func encodeSpectrumResultSplitFull(buf *bytes.Buffer, r *spectrum.Result) (series, full []byte, err error) {
	fp, sp := resultBufPool.Get().(*[]byte), seriesBufPool.Get().(*[]byte)
	b, s, f, err := spectrum.AppendJSONSplitFull(buf.AvailableBuffer(), (*sp)[:0], (*fp)[:0], r)
	s = ownSeries(sp, s, err)
	if err != nil {
		resultBufPool.Put(fp)
		if err = encodeSpectrumResult(buf, r); err != nil {
			return nil, nil, err
		}
		return nil, bytes.Clone(buf.Bytes()), nil
	}
	buf.Write(append(b, '\n'))
	// f is from resultBufPool: writeMeasurementJSON puts it back.
	return s, append(f, '\n'), nil
}

// encodePlain appends v as json.Encoder with SetEscapeHTML(false) writes
// it (the reference of encodeSpectrumResult, and line-table results).
func encodePlain(buf *bytes.Buffer, v any) error {
	enc := json.NewEncoder(buf)
	enc.SetEscapeHTML(false)
	return enc.Encode(v)
}
