package server

import (
	"bytes"
	"encoding/json"
	"math"
	"strconv"
	"sync"

	"glowlog/diag/spectrum"
)

// The stored JSON of a spectrum result is about 48 kB, a third of it the
// fitted windows' plot series (spectrum.PlotFloats). encoding/json passes
// the output of every MarshalJSON through its compactor, which scans those
// bytes a second time; together the series took about 60 % of the
// encoding (profile of BenchmarkAPIIngest). encodeSpectrumResult writes the
// windows directly and lets encoding/json write the rest: the bytes are
// the same as json.Encoder's (TestEncodeSpectrumResultSameBytes).

// windowsMarker stands in for a result's windows while encoding/json
// writes the rest; markerJSON is how it is written. The upper level is one
// no Balmer line has, so the bytes occur nowhere else.
var (
	windowsMarker = []spectrum.Window{{Uppers: []int{-987654321}}}
	markerJSON    = func() []byte {
		b, err := json.Marshal(windowsMarker)
		if err != nil {
			panic(err)
		}
		return append([]byte(`"windows":`), b...)
	}()
	markerHead = markerJSON[:min(len(markerJSON), 48)]
	// scratch holds the encoding without the windows.
	scratch = sync.Pool{New: func() any { return bytes.NewBuffer(make([]byte, 0, 64<<10)) }}
)

// encodeSpectrumResult appends r as json.Encoder (SetEscapeHTML(false))
// writes it, with its trailing newline.
func encodeSpectrumResult(buf *bytes.Buffer, r *spectrum.Result) error {
	ok, err := encodeWindowsFast(buf, r)
	if err != nil || ok {
		return err
	}
	return encodePlain(buf, r)
}

// encodeWindowsFast is encodeSpectrumResult's fast path; false (and
// nothing written) when it does not apply.
func encodeWindowsFast(buf *bytes.Buffer, r *spectrum.Result) (bool, error) {
	if len(r.Windows) == 0 {
		return false, nil
	}
	cp := *r
	cp.Windows = windowsMarker
	rest := scratch.Get().(*bytes.Buffer)
	defer scratch.Put(rest)
	rest.Reset()
	if err := encodePlain(rest, &cp); err != nil {
		return false, err
	}
	// The marker holds quotes, which a JSON string escapes: the bytes can
	// only be the marker itself. Its head (with the odd upper level) is
	// searched for: a long pattern is searched for much more slowly.
	b := rest.Bytes()
	i := bytes.Index(b, markerHead)
	if i < 0 || !bytes.HasPrefix(b[i:], markerJSON) {
		return false, nil // not where expected: the slow way
	}
	buf.Grow(len(b) + 16*windowPoints(r.Windows))
	buf.Write(b[:i])
	out := buf.AvailableBuffer()
	out = append(out, `"windows":`...)
	out = appendWindows(out, r.Windows)
	buf.Write(out)
	buf.Write(b[i+len(markerJSON):])
	return true, nil
}

// encodePlain is json.Encoder without HTML escaping.
func encodePlain(buf *bytes.Buffer, v any) error {
	enc := json.NewEncoder(buf)
	enc.SetEscapeHTML(false)
	return enc.Encode(v)
}

func windowPoints(ws []spectrum.Window) int {
	n := 0
	for _, w := range ws {
		n += len(w.WavelengthNM) + len(w.Data) + len(w.Model) + len(w.Residual)
	}
	return n
}

// appendWindows writes ws as encoding/json does: the field names of
// spectrum.Window in order, each series as PlotFloats.MarshalJSON writes it
// (8 significant digits, null for NaN and ±Inf).
func appendWindows(b []byte, ws []spectrum.Window) []byte {
	b = append(b, '[')
	for k, w := range ws {
		if k > 0 {
			b = append(b, ',')
		}
		b = append(b, `{"upper_levels":`...)
		if w.Uppers == nil {
			b = append(b, "null"...)
		} else {
			b = append(b, '[')
			for i, u := range w.Uppers {
				if i > 0 {
					b = append(b, ',')
				}
				b = strconv.AppendInt(b, int64(u), 10)
			}
			b = append(b, ']')
		}
		b = append(b, `,"wavelength_nm":`...)
		b = appendPlotFloats(b, w.WavelengthNM)
		b = append(b, `,"data":`...)
		b = appendPlotFloats(b, w.Data)
		b = append(b, `,"model":`...)
		b = appendPlotFloats(b, w.Model)
		b = append(b, `,"residual":`...)
		b = appendPlotFloats(b, w.Residual)
		b = append(b, '}')
	}
	return append(b, ']')
}

// appendPlotFloats is spectrum.PlotFloats.MarshalJSON appending to b.
func appendPlotFloats(b []byte, p spectrum.PlotFloats) []byte {
	b = append(b, '[')
	for i, v := range p {
		if i > 0 {
			b = append(b, ',')
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			b = append(b, "null"...)
			continue
		}
		b = strconv.AppendFloat(b, v, 'g', 8, 64)
	}
	return append(b, ']')
}
