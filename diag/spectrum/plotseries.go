package spectrum

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"math/bits"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
)

// Compact storage of a result's plot series (the PlotFloats of the
// windows and of the whole-spectrum fit, ~70 % of a whole-route result's
// JSON text). AppendJSONSplit writes the JSON with every non-empty series
// replaced by a placeholder, [null], and the series themselves into a
// separate binary form; ExpandSeries puts them back, giving AppendJSON's
// bytes exactly: the series are kept as the decimal digits their JSON
// text has (eight significant digits, plotDigits), not recomputed, and
// written by the same code (appendDigits8) as AppendJSON writes them.
//
// The binary form ("series"): the magic bytes 'G' 'S' and the format
// version (1 or 2), the number of series (uvarint), then per series a
// header (uvarint) and its values, in the order of the placeholders in
// the JSON (AppendJSONSplit makes sure the JSON holds no other "[null]").
// The header is the series' length in version 1; in version 2 it is
// length<<2 | mode, the mode saying how the mantissas are coded: 0 by
// their first differences (all series of version 1), 1 by their second
// differences (AppendJSONSplit's choice for the wavelengths, an even
// grid, and the models, which are smooth: ~1 and ~1.6 bytes a value
// instead of ~3 and ~2), 2 as residuals (below). Each value is one
// uvarint u:
//
//   - u&3 == 0: same decimal exponent as the previous value of the
//     series; the signed eight-digit mantissa (±m) differs from the
//     previous one by d = zigzag⁻¹(u>>2), or in mode 1 by d plus the
//     previous difference (0 at a series' start and after a new
//     exponent; a null or a value in bytes leaves it, like the previous
//     mantissa, unchanged);
//   - u&3 == 1: a new exponent, previous + zigzag⁻¹(u>>2), followed by a
//     uvarint zigzag(±m);
//   - u == 2: a NaN or ±Inf (written as null);
//   - u == 3: a value AppendJSON leaves to strconv (zeros, extreme
//     magnitudes, near-ties of the eighth digit), followed by its eight
//     bytes (IEEE 754, little-endian).
//
// The previous exponent and mantissa start at 0 for every series.
//
// Mode 2 codes a residual (data − model) against the two series before
// it in the form, which have its length (the data and the model; their
// eight-digit values D and M): where D and M have digits with the same
// exponent and differ, the value is predicted from D − M in integers
// (residual P with exponent eP, predictResidual), and
//
//   - u&3 == 0: the value has exponent eP and mantissa P + zigzag⁻¹(u>>2)
//     (the mantissas of D and M are off by half a unit at most: the
//     difference takes about a byte instead of 4–5);
//   - u&3 == 1: exponent eP + zigzag⁻¹(u>>2) (0 in place of eP without a
//     prediction), followed by a uvarint zigzag(±m);
//   - u == 2 and u == 3 as above.
//
// AppendJSONSplit offers mode 2 for each residual and keeps it where it
// is the smaller.
// Spectra's series take about 1–5 bytes a value instead of about 10 as
// text. AppendJSONSplit writes version 2; ExpandSeries reads both (rows
// stored before version 2 keep their version-1 form).

// seriesMagic starts the binary form AppendJSONSplit writes (format
// version 2); seriesMagicV1 the form of version 1.
var (
	seriesMagic   = []byte{'G', 'S', 2}
	seriesMagicV1 = []byte{'G', 'S', 1}
)

// seriesPlaceholder is what AppendJSONSplit writes for a series.
var seriesPlaceholder = []byte(placeholderText)

// placeholderText is seriesPlaceholder as a string.
const placeholderText = "[null]"

// placeholderSeries is a series whose JSON is seriesPlaceholder.
var placeholderSeries = PlotFloats{math.NaN()}

// The modes of a series in the form (version 2).
const (
	seriesFirst    = 0 // first differences
	seriesSecond   = 1 // second differences
	seriesResidual = 2 // against the data and model before it
)

// seriesDigit is one value's eight digits as the form holds them: the
// signed mantissa ±m and the exponent, or e10 noDigits for a null or a
// value kept in bytes.
type seriesDigit struct {
	s   int64
	e10 int
}

// seriesRecords are the digits of the last three series written or read,
// the k-th at [k%3] (k its place in the form; -1: none).
type seriesRecords [3]struct {
	k int
	d []seriesDigit
}

// of returns the digits of series k when they are kept and n long.
func (sc *seriesRecords) of(k, n int) []seriesDigit {
	if r := &sc[k%len(sc)]; r.k == k && len(r.d) == n {
		return r.d
	}
	return nil
}

// seriesScratch holds *seriesRecords for AppendJSONSplit and
// ExpandSeries.
var seriesScratch = sync.Pool{New: func() any { return new(seriesRecords) }}

// seriesPow10 are the powers of ten up to 10⁸.
var seriesPow10 = [16]int64{1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8}

// predictResidual returns the eight-digit mantissa P and exponent eP of
// D − M from the digits of D and M (mode 2); ok is false where they have
// none, other exponents, or are equal. Integers only: the writer and the
// reader find the same prediction.
func predictResidual(d, m seriesDigit) (p int64, eP int, ok bool) {
	if d.e10 != m.e10 || d.e10 == noDigits || d.s == m.s {
		return 0, 0, false
	}
	diff := d.s - m.s // |diff| < 2·10⁸, in units of 10^(e10−7)
	sg := diff >> 63
	a := (diff ^ sg) - sg
	// The digits of a (1 ≤ a < 2²⁸): those of the least value of its
	// bit length, plus one from the next power of ten on.
	t := &residualDigits[bits.Len64(uint64(a))&31]
	nd := t.nd
	if a >= t.thr {
		nd++
	}
	if nd > 8 {
		return predictNine(diff, d.e10)
	}
	return diff * seriesPow10[(8-nd)&15], d.e10 - 8 + int(nd), true
}

// predictNine is predictResidual for a difference of nine digits: rounded
// to eight, half away from zero.
func predictNine(diff int64, e10 int) (p int64, eP int, ok bool) {
	a := diff
	if a < 0 {
		a = -a
	}
	p = (a + 5) / 10
	if diff < 0 {
		p = -p
	}
	return p, e10 + 1, true
}

// residualDigits[n] are, for the integers of bit length n ≤ 28, the
// number of digits nd of the least (2ⁿ⁻¹) and the power of ten 10^nd
// from which they have one more.
var residualDigits = func() (t [32]struct{ thr, nd int64 }) {
	for n := 1; n < len(t); n++ {
		lo := int64(1) << (n - 1)
		nd := int64(len(strconv.FormatInt(lo, 10)))
		t[n].nd, t[n].thr = nd, 1
		for range nd {
			t[n].thr *= 10
		}
	}
	return t
}()

// ErrSeriesSplit is returned by AppendJSONSplit when its placeholder
// JSON cannot be told apart from the result's own text (a "[null]"
// elsewhere in it): store AppendJSON's output instead.
var ErrSeriesSplit = errors.New("spectrum: plot series placeholder ambiguous")

// AppendJSONSplit appends r's JSON to b as AppendJSON does, with every
// non-empty plot series written as the placeholder [null], and the series
// to series in the binary form above. ExpandSeries(nil, json, series)
// gives AppendJSON's bytes. A result with no series gives an empty
// series form (nothing appended). Errors are AppendJSON's, or
// ErrSeriesSplit.
func AppendJSONSplit(b, series []byte, r *Result) (json, seriesOut []byte, err error) {
	return appendJSONSplit(b, series, nil, r)
}

// AppendJSONSplitFull is AppendJSONSplit that also appends AppendJSON's
// bytes (what ExpandSeries gives) to full, in the same pass over the
// series. On an error full is returned as given.
func AppendJSONSplitFull(b, series, full []byte, r *Result) (json, seriesOut, fullOut []byte, err error) {
	f0 := len(full)
	b, series, err = appendJSONSplit(b, series, &full, r)
	if err != nil {
		full = full[:f0]
	}
	return b, series, full, err
}

// appendJSONSplit is AppendJSONSplit, appending the whole JSON to *full
// too when full is not nil.
func appendJSONSplit(b, series []byte, full *[]byte, r *Result) (json, seriesOut []byte, err error) {
	var list [][]float64
	var modes []int // list[k]'s mode (seriesFirst, …)
	grid := -1      // the whole fit's wavelengths in list
	take := func(p *PlotFloats, mode int) {
		if len(*p) > 0 {
			list = append(list, *p)
			modes = append(modes, mode)
			*p = placeholderSeries
		}
	}
	// The series in AppendJSON's order: the windows' (in the order of
	// Window's fields), then the whole fit's.
	rr := *r
	if len(r.Windows) > 0 {
		rr.Windows = make([]Window, len(r.Windows))
		for i, w := range r.Windows {
			take(&w.WavelengthNM, seriesSecond)
			take(&w.Data, seriesFirst)
			take(&w.Model, seriesSecond)
			take(&w.Residual, seriesResidual)
			rr.Windows[i] = w
		}
	}
	if r.Whole != nil {
		w := *r.Whole
		if len(w.WavelengthNM) > 0 {
			grid = len(list)
		}
		take(&w.WavelengthNM, seriesSecond)
		take(&w.Data, seriesFirst)
		take(&w.Model, seriesSecond)
		take(&w.Residual, seriesResidual)
		rr.Whole = &w
	}
	start := len(b)
	b, err = appendJSONResult(b, &rr)
	if err != nil {
		return b, series, err
	}
	js := b[start:]
	if len(list) == 0 {
		if full != nil {
			*full = append(*full, js...)
		}
		return b, series, nil
	}
	// The placeholders first: the split is refused before anything is
	// written to series or full.
	var offs [16]int
	at := offs[:0]
	pos := 0
	for range list {
		i := bytes.Index(js[pos:], seriesPlaceholder)
		if i < 0 {
			return b, series, ErrSeriesSplit
		}
		pos += i
		at = append(at, pos)
		pos += len(seriesPlaceholder)
	}
	if bytes.Contains(js[pos:], seriesPlaceholder) {
		return b, series, ErrSeriesSplit
	}
	nv := 0
	for _, p := range list {
		nv += len(p)
	}
	// Room for the usual 3–5 bytes a value (and 8–12 as text) at once.
	series = slices.Grow(series, 16+8*len(list)+5*nv)
	series = append(series, seriesMagic...)
	series = binary.AppendUvarint(series, uint64(len(list)))
	var text []byte
	if full != nil {
		text = slices.Grow(*full, len(js)+12*nv)
	}
	// The digits of the series written that a residual may follow (its
	// data and model; the k-th at [k%3]), not the grid's (copied).
	sc := seriesScratch.Get().(*seriesRecords)
	defer seriesScratch.Put(sc)
	for i := range sc {
		sc[i].k = -1
	}
	pos = 0
	for k, p := range list {
		if full != nil {
			text = append(text, js[pos:at[k]]...)
		}
		pos = at[k] + len(seriesPlaceholder)
		if k == grid {
			series, text = appendGridSeries(series, text, full != nil, p)
			continue
		}
		var dm, mm []seriesDigit // a residual's data and model
		if modes[k] == seriesResidual && k >= 2 {
			dm, mm = sc.of(k-2, len(p)), sc.of(k-1, len(p))
		}
		var rec []seriesDigit // kept for a residual after it
		if k+1 < len(list) && modes[k+1] == seriesResidual || k+2 < len(list) && modes[k+2] == seriesResidual {
			r := &sc[k%len(sc)]
			r.k, r.d = k, slices.Grow(r.d[:0], len(p))[:len(p)]
			rec = r.d
		}
		series, text = appendSeriesValues(series, text, full != nil, p, modes[k], rec, dm, mm)
	}
	if full != nil {
		*full = append(text, js[pos:]...)
	}
	return b, series, nil
}

// gridMemo is what appendSeriesValues wrote for a whole fit's
// wavelengths (their series form, and their JSON text unless nil): the
// spectra of one spectrograph share their grid, and the next result on
// it copies these bytes instead of finding the digits of ~2000 values
// again (a fifth of the series' values). Both are functions of the
// values alone (appendSeriesValues starts each series afresh), so the
// bytes are the same as written anew.
type gridMemo struct {
	values     []float64
	form, text []byte
}

// lastGrid is the grid written last (one for the process; replaced, never
// changed).
var lastGrid atomic.Pointer[gridMemo]

// appendGridSeries is appendSeriesValues for a whole fit's wavelengths
// (by second differences), through lastGrid.
func appendGridSeries(b, text []byte, withText bool, p []float64) ([]byte, []byte) {
	if m := lastGrid.Load(); m != nil && (m.text != nil || !withText) && sameBits(m.values, p) {
		b = append(b, m.form...)
		if withText {
			text = append(text, m.text...)
		}
		return b, text
	}
	b0, t0 := len(b), len(text)
	b, text = appendSeriesValues(b, text, withText, p, seriesSecond, nil, nil, nil)
	m := &gridMemo{values: slices.Clone(p), form: slices.Clone(b[b0:])}
	if withText {
		m.text = slices.Clone(text[t0:])
	}
	lastGrid.Store(m)
	return b, text
}

// sameBits reports whether a and b hold the same float64 bit patterns
// (−0 is not 0, and a NaN is itself).
func sameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i, v := range a {
		if math.Float64bits(v) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

func zigzag(v int64) uint64   { return uint64(v<<1) ^ uint64(v>>63) }
func unzigzag(u uint64) int64 { return int64(u>>1) ^ -int64(u&1) }

// seriesExp is, for one binary exponent of a float64, the decimal
// exponent of its values: e10 for values below thr (float64 bits of
// 10^(e10+1), rounded), e10+1 from thr on. ⌊log₁₀ a⌋ takes at most two
// values over a binade; the table gives it with one comparison, which the
// compiler makes a conditional move (the loop of plotDigits branched on
// it, and noisy data made that branch unpredictable). A guess that is
// wrong (10^n not exact in float64, a rounded product) is caught by
// seriesDigitsChunk's range check.
type seriesExp struct {
	thr uint64
	e10 int64
}

// seriesExps holds seriesExp by biased binary exponent (the float64
// bits >> 52 of |v|). Exponents whose values plotDigits refuses or
// divides for (outside [1e-15, 1e8)) get an e10 that sends
// seriesDigitsChunk to plotDigits.
var seriesExps = func() (t [2048]seriesExp) {
	for be := range t {
		t[be] = seriesExp{thr: math.MaxUint64, e10: 1 << 20}
		if be == 0 || be == 2047 {
			continue // zeros, subnormals; ±Inf, NaN
		}
		lo := math.Float64frombits(uint64(be) << 52) // 2^(be−1023)
		e10 := int(math.Floor(math.Log10(lo)))
		if p, _ := strconv.ParseFloat("1e"+strconv.Itoa(e10), 64); lo < p {
			e10-- // Log10 rounded up
		} else if p, _ := strconv.ParseFloat("1e"+strconv.Itoa(e10+1), 64); lo >= p {
			e10++ // rounded down
		}
		if e10 < -15 || e10 > 8 { // plotDigits refuses a binade that begins below 1e-15
			continue
		}
		thr, _ := strconv.ParseFloat("1e"+strconv.Itoa(e10+1), 64)
		t[be] = seriesExp{thr: math.Float64bits(thr), e10: int64(e10)}
	}
	return t
}()

// seriesDigitsChunk sets digits[j] to plotDigits' answer for chunk[j]
// as the form holds it (the mantissa m signed as the value, ±m, and e10;
// or {0, noDigits} where it refuses), faster for the values of plot
// series ([1e-15, 1e8)): the decimal exponent from seriesExps, one
// product with an exact power of ten, and no branch that depends on the
// data but for the rare values left to plotDigits itself. As in
// plotDigits, the digits of a correctly rounded product x with an exact
// power of ten are those of the value unless the ninth digit and beyond
// are within 1e-6 of one half; a product in [1e7, 1e8) is the one
// plotDigits ends with (one power of ten puts it there), so the answer
// is plotDigits' whenever the fast path gives one. Values outside that
// range (zeros, NaN, ±Inf, magnitudes plotDigits refuses or divides
// for, a guess of the exponent that missed), near-ties, and a rounding
// that carries into 10⁸ go to plotDigits. digits is at least as long as
// chunk.
func seriesDigitsChunk(digits []seriesDigit, chunk []float64) {
	digits = digits[:len(chunk)]
	for j, w := range chunk {
		raw := math.Float64bits(w)
		bits := raw &^ (1 << 63)
		t := &seriesExps[bits>>52]
		e := t.e10
		if bits >= t.thr {
			e++
		}
		k := uint64(7 - e)
		x := 0.0
		if k < uint64(len(plotPow10)) {
			x = math.Float64frombits(bits) * plotPow10[k]
		}
		mi := int64(x) // x < 1e9 here or refused below: one instruction
		frac := x - float64(mi)
		if frac > 0.5 {
			mi++
		}
		if !(x >= 1e7 && mi < 1e8) || math.Abs(frac-0.5) < 1e-6 {
			digits[j] = slowDigits(w)
			continue
		}
		neg := int64(raw) >> 63 // −1 for a negative value, else 0
		digits[j] = seriesDigit{(mi ^ neg) - neg, int(e)}
	}
}

// slowDigits is plotDigits' answer for v as the form holds it, for
// seriesDigitsChunk.
func slowDigits(v float64) seriesDigit {
	m, e10, ok := plotDigits(v)
	if !ok {
		return seriesDigit{0, noDigits}
	}
	s := int64(m)
	if v < 0 {
		s = -s
	}
	return seriesDigit{s, e10}
}

// seriesChunk is the number of values whose digits appendSeriesValues
// finds in one pass before it writes them.
const seriesChunk = 256

// noDigits marks a value plotDigits refuses.
const noDigits = math.MinInt

// appendSeriesValues appends one series' header and values to b (format
// version 2, in mode), and with withText its JSON text (as
// appendPlotFloats writes it) to text. rec, when not nil (len(p) long),
// gets the values' digits. A residual (mode seriesResidual) needs the
// digits of its data and model (dm, mm; len(p) long): without them, or
// where it would be the larger, it is written by first differences.
// The digits of a chunk of values are found first (seriesDigitsChunk),
// in a loop whose rounds do not wait for each other (the digits are a
// chain of dependent floating-point steps that the writing of the bytes,
// which depends on them, kept the processor from overlapping), then
// written (each mode in a loop of its own: one loop for all modes was
// markedly slower), then their text (appendSeriesText).
func appendSeriesValues(b, text []byte, withText bool, p []float64, mode int, rec, dm, mm []seriesDigit) ([]byte, []byte) {
	if mode == seriesResidual && (len(dm) != len(p) || len(mm) != len(p)) {
		mode = seriesFirst
	}
	b0 := len(b)
	b = binary.AppendUvarint(b, uint64(len(p))<<2|uint64(mode))
	if withText {
		text = append(text, '[')
	}
	cb := chunkBufs.Get().(*seriesChunkBufs)
	if mode == seriesResidual {
		v0 := len(b)
		cb.all = slices.Grow(cb.all[:0], len(p))[:len(p)]
		b, text = appendResidualValues(b, text, withText, p, cb, dm, mm, cb.all)
		if !firstLonger(cb.all, p, len(b)-v0) {
			b, _ = appendSeriesValues(b[:b0], nil, false, p, seriesFirst, nil, nil, nil)
		}
	} else {
		b, text = appendDeltaValues(b, text, withText, p, cb, mode == seriesSecond, rec)
	}
	chunkBufs.Put(cb)
	if withText {
		text = append(text, ']')
	}
	return b, text
}

// appendDeltaValues writes p's values by first (or with second, second)
// differences, for appendSeriesValues; rec, when not nil, gets their
// digits.
func appendDeltaValues(b, text []byte, withText bool, p []float64, cb *seriesChunkBufs, second bool, rec []seriesDigit) ([]byte, []byte) {
	var prevS, prevD int64
	prevE := 0
	keepD := int64(0) // −1: the previous difference is kept (second)
	if second {
		keepD = -1
	}
	for i := 0; i < len(p); i += seriesChunk {
		chunk := p[i:min(i+seriesChunk, len(p))]
		digits := cb.digits[:len(chunk)]
		if rec != nil {
			digits = rec[i : i+len(chunk)]
		}
		seriesDigitsChunk(digits, chunk)
		us, nu := &cb.us, 0 // at most two a value
		for j, d := range digits {
			if d.e10 == prevE {
				dd := d.s - prevS
				us[nu&(len(us)-1)] = zigzag(dd-prevD) << 2
				nu++
				prevD, prevS = dd&keepD, d.s
				continue
			}
			if d.e10 == noDigits {
				us[nu&(len(us)-1)] = seriesRaw | uint64(j)
				nu++
				continue
			}
			us[nu&(len(us)-1)] = zigzag(int64(d.e10-prevE))<<2 | 1
			us[(nu+1)&(len(us)-1)] = zigzag(d.s)
			nu += 2
			prevE, prevD, prevS = d.e10, 0, d.s
		}
		b = putUvarints(b, us[:nu], chunk)
		if withText {
			text = appendSeriesText(text, i > 0, digits, chunk)
		}
	}
	return b, text
}

// appendResidualValues writes p's values as residuals of dm − mm (mode
// 2), for appendSeriesValues, and sets all[i] to p[i]'s digits
// (firstLonger's).
func appendResidualValues(b, text []byte, withText bool, p []float64, cb *seriesChunkBufs, dm, mm, all []seriesDigit) (_, _ []byte) {
	for i := 0; i < len(p); i += seriesChunk {
		chunk := p[i:min(i+seriesChunk, len(p))]
		digits, preds := all[i:i+len(chunk)], cb.preds[:len(chunk)]
		seriesDigitsChunk(digits, chunk)
		dmc, mmc := dm[i:i+len(chunk)], mm[i:i+len(chunk)]
		for j := range preds {
			pr, eP, ok := predictResidual(dmc[j], mmc[j])
			if !ok {
				eP = noDigits
			}
			preds[j] = seriesDigit{pr, eP}
		}
		us, nu := &cb.us, 0 // at most two a value
		for j, d := range digits {
			if d.e10 == noDigits {
				us[nu&(len(us)-1)] = seriesRaw | uint64(j)
				nu++
				continue
			}
			if pr := preds[j]; d.e10 == pr.e10 {
				us[nu&(len(us)-1)] = zigzag(d.s-pr.s) << 2
				nu++
				continue
			}
			eP := preds[j].e10
			if eP == noDigits {
				eP = 0
			}
			us[nu&(len(us)-1)] = zigzag(int64(d.e10-eP))<<2 | 1
			us[(nu+1)&(len(us)-1)] = zigzag(d.s)
			nu += 2
		}
		b = putUvarints(b, us[:nu], chunk)
		if withText {
			text = appendSeriesText(text, i > 0, digits, chunk)
		}
	}
	return b, text
}

// firstLonger reports whether p's values (their digits all) by first
// differences take more than limit bytes, counting only until they do:
// a data − model residual takes about three times mode 2's bytes by
// first differences, so about a third of its values are counted.
func firstLonger(all []seriesDigit, p []float64, limit int) bool {
	var prevS int64
	prevE, n := 0, 0
	for j, d := range all {
		switch {
		case d.e10 == prevE:
			n += uvarintLen(zigzag(d.s-prevS) << 2)
		case d.e10 == noDigits:
			if v := p[j]; math.IsNaN(v) || math.IsInf(v, 0) {
				n++
			} else {
				n += 9
			}
			if n > limit {
				return true
			}
			continue
		default:
			n += uvarintLen(zigzag(int64(d.e10-prevE))<<2|1) + uvarintLen(zigzag(d.s))
			prevE = d.e10
		}
		prevS = d.s
		if n > limit {
			return true
		}
	}
	return false
}

// seriesRaw marks, in the uvarints of a chunk (putUvarints), the place
// of a value without digits (its index in the chunk below): the
// uvarints of a series' values are below 2³³ (mantissas below 10⁸ in
// magnitude, their first and second differences below 4·10⁸, exponents
// and their changes below 400).
const seriesRaw = 1 << 63

// putUvarints appends us as uvarints to b, and for each seriesRaw|j the
// value chunk[j] without digits (putNoDigits). A uvarint of one byte (most
// of a residual's) is stored as it is; one below 2³⁵ (all of the form's)
// as one little-endian word whose five seven-bit groups and continuation
// bits are put in place without a loop (the loop of binary.AppendUvarint
// branched on every byte, and the lengths of noisy differences vary
// unpredictably); the word's bytes past the uvarint are overwritten by
// the next or left past the end.
func putUvarints(b []byte, us []uint64, chunk []float64) []byte {
	b = slices.Grow(b, 10*len(us)+8)
	n, out := len(b), b[:cap(b)]
	for _, u := range us {
		if u < 0x80 { // most of a residual's
			out[n] = byte(u)
			n++
			continue
		}
		if u >= 1<<35 {
			if u&seriesRaw != 0 {
				n += putNoDigits(out[n:], chunk[u&^seriesRaw])
			} else {
				n += binary.PutUvarint(out[n:], u)
			}
			continue
		}
		w := u&0x7f | u<<1&0x7f00 | u<<2&0x7f0000 | u<<3&0x7f000000 | u<<4&0x7f00000000
		l := uvarintLens[bits.Len64(u)]
		binary.LittleEndian.PutUint64(out[n:], w|uvarintMore[l])
		n += int(l)
	}
	return out[:n]
}

// uvarintLens[n] is the length of the uvarint of a value of n bits;
// uvarintMore[l] the continuation bits of a uvarint of l ≤ 5 bytes.
var (
	uvarintLens = func() (t [65]uint8) {
		for n := range t {
			t[n] = uint8(max(1, (n+6)/7))
		}
		return t
	}()
	uvarintMore = func() (t [11]uint64) {
		for l := 2; l <= 5; l++ {
			t[l] = 0x8080808080808080 & (1<<(8*(l-1)) - 1)
		}
		return t
	}()
)

// appendSeriesText appends the JSON text of chunk's values (as
// appendPlotFloatsEach writes them, a comma before each but the first
// unless comma) from their digits, in room made for the chunk at once.
func appendSeriesText(text []byte, comma bool, digits []seriesDigit, chunk []float64) []byte {
	digits = digits[:len(chunk)]
	// Each value's text (a comma, a sign and "1.2345678e-05", or
	// strconv's) takes at most 16 bytes; putDigits8 writes 24.
	text = slices.Grow(text, 16*len(chunk)+24)
	n, out := len(text), text[:cap(text)]
	for j, d := range digits {
		if comma {
			out[n] = ','
			n++
		}
		comma = true
		if d.e10 == noDigits {
			v := chunk[j]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				n += copy(out[n:], "null")
			} else {
				out = strconv.AppendFloat(out[:n], v, 'g', 8, 64)
				n, out = len(out), out[:cap(out)]
			}
			continue
		}
		m, neg := d.s, 0
		if m < 0 {
			m, neg = -m, 1
		}
		if uint(d.e10+4) >= 12 { // %e: exponent below −4 or from 8 on
			n += putDigits8((*[24]byte)(out[n:n+24]), neg == 1, uint64(m), d.e10)
			continue
		}
		// putDigits8's %f, inline and without a branch on the digits:
		// the sign written always and counted when there is one; the
		// digits, and for a value from 1 on the point after dp of them
		// and the rest after it, all written (the bytes past the text
		// are scratch), the length chosen.
		dg := eightDigits(uint64(m))
		nd := 8 - bits.LeadingZeros64(dg)/8
		w := dg | 0x3030303030303030
		o := (*[24]byte)(out[n : n+24])
		o[0] = '-'
		k := neg
		if dp := d.e10 + 1; dp > 0 {
			binary.LittleEndian.PutUint64(o[k:], w)
			o[k+dp] = '.'
			binary.LittleEndian.PutUint64(o[k+dp+1:], w>>(8*uint(dp)))
			l := dp
			if nd > dp {
				l = nd + 1
			}
			n += k + l
		} else {
			binary.LittleEndian.PutUint64(o[k:], 0x3030303030302e30) // "0.000000"
			k += 2 - dp
			binary.LittleEndian.PutUint64(o[k:], w)
			n += k + nd
		}
	}
	return out[:n]
}

// putNoDigits writes a value without digits at the start of out (room
// for 9 bytes) and returns the length: a NaN or ±Inf as the tag 2,
// another (zeros, extreme magnitudes, near-ties) as the tag 3 and its
// eight bytes.
func putNoDigits(out []byte, v float64) int {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		out[0] = 2
		return 1
	}
	out[0] = 3
	binary.LittleEndian.PutUint64(out[1:], math.Float64bits(v))
	return 9
}

// seriesChunkBufs are appendSeriesValues' buffers for a chunk: the
// values' digits and a residual's predictions (e10 noDigits: none).
// Pooled: as local arrays they were zeroed (8 kB) at every call, two
// dozen a result.
type seriesChunkBufs struct {
	digits [seriesChunk]seriesDigit
	preds  [seriesChunk]seriesDigit
	us     [2 * seriesChunk]uint64 // the chunk's uvarints (putUvarints)
	all    []seriesDigit           // a residual's digits (firstLonger)
}

var chunkBufs = sync.Pool{New: func() any { return new(seriesChunkBufs) }}

// uvarintLen is the length of u's uvarint.
func uvarintLen(u uint64) int { return (bits.Len64(u|1) + 6) / 7 }

// errSeriesCorrupt reports a series form that does not fit its JSON.
var errSeriesCorrupt = errors.New("spectrum: stored plot series corrupt")

// ExpandSeries appends to dst the JSON that AppendJSONSplit's placeholder
// JSON js and series form stand for: AppendJSON's bytes. An empty series
// form appends js unchanged (a result stored whole). A series form that
// does not fit js (another number of placeholders, or of bytes) gives an
// error.
func ExpandSeries(dst []byte, js string, series []byte) ([]byte, error) {
	if len(series) == 0 {
		return append(dst, js...), nil
	}
	v2 := bytes.HasPrefix(series, seriesMagic)
	if !v2 && !bytes.HasPrefix(series, seriesMagicV1) {
		return dst, errSeriesCorrupt
	}
	rd := series[len(seriesMagic):]
	uv := func() (uint64, bool) {
		u, n := binary.Uvarint(rd)
		if n <= 0 {
			return 0, false
		}
		rd = rd[n:]
		return u, true
	}
	count, ok := uv()
	if !ok || count > uint64(len(js)) {
		return dst, errSeriesCorrupt
	}
	// Version 2: the digits read, for residuals (pooled: ~90 kB for a
	// whole fit's series).
	recs := seriesScratch.Get().(*seriesRecords)
	defer seriesScratch.Put(recs)
	for i := range recs {
		recs[i].k = -1
	}
	pos := 0
	for k := range int(count) {
		i := strings.Index(js[pos:], string(seriesPlaceholder))
		if i < 0 {
			return dst, errSeriesCorrupt
		}
		off := pos + i
		dst = append(dst, js[pos:off]...)
		n, ok := uv()
		mode := seriesFirst
		if v2 {
			n, mode = n>>2, int(n&3)
		}
		if !ok || n > uint64(len(rd)) || mode > seriesResidual {
			return dst, errSeriesCorrupt
		}
		var rec, dm, mm []seriesDigit
		if v2 {
			r := &recs[k%len(recs)]
			r.k, r.d = k, slices.Grow(r.d[:0], int(n))[:n]
			rec = r.d
		}
		if mode == seriesResidual {
			if k < 2 {
				return dst, errSeriesCorrupt
			}
			if dm, mm = recs.of(k-2, int(n)), recs.of(k-1, int(n)); dm == nil || mm == nil {
				return dst, errSeriesCorrupt
			}
		}
		dst = append(dst, '[')
		var prevS, prevD int64
		prevE := 0
		for i := range n {
			if i > 0 {
				dst = append(dst, ',')
			}
			u, ok := uv()
			if !ok {
				return dst, errSeriesCorrupt
			}
			var sv int64 // the value's signed mantissa and exponent
			var e10 int
			switch {
			case u == 2:
				if rec != nil {
					rec[i] = seriesDigit{0, noDigits}
				}
				dst = append(dst, "null"...)
				continue
			case u == 3:
				if len(rd) < 8 {
					return dst, errSeriesCorrupt
				}
				if rec != nil {
					rec[i] = seriesDigit{0, noDigits}
				}
				dst = appendFloat8(dst, math.Float64frombits(binary.LittleEndian.Uint64(rd)))
				rd = rd[8:]
				continue
			case mode == seriesResidual:
				pr, eP, okP := predictResidual(dm[i], mm[i])
				switch u & 3 {
				case 0:
					if !okP {
						return dst, errSeriesCorrupt
					}
					sv, e10 = pr+unzigzag(u>>2), eP
				case 1:
					if !okP {
						eP = 0
					}
					e10 = eP + int(unzigzag(u>>2))
					s, ok := uv()
					if !ok {
						return dst, errSeriesCorrupt
					}
					sv = unzigzag(s)
				default:
					return dst, errSeriesCorrupt
				}
			case u&3 == 0:
				d := unzigzag(u >> 2)
				if mode == seriesSecond {
					d += prevD
					prevD = d
				}
				prevS += d
				sv, e10 = prevS, prevE
			case u&3 == 1:
				prevE += int(unzigzag(u >> 2))
				s, ok := uv()
				if !ok {
					return dst, errSeriesCorrupt
				}
				prevS, prevD = unzigzag(s), 0
				sv, e10 = prevS, prevE
			default:
				return dst, errSeriesCorrupt
			}
			m := sv
			if m < 0 {
				m = -m
			}
			if m < 1e7 || m >= 1e8 || e10 < -400 || e10 > 400 {
				return dst, errSeriesCorrupt
			}
			if rec != nil {
				rec[i] = seriesDigit{sv, e10}
			}
			dst = appendDigits8(dst, sv < 0, uint64(m), e10)
		}
		dst = append(dst, ']')
		pos = off + len(seriesPlaceholder)
	}
	if len(rd) != 0 || strings.Contains(js[pos:], string(seriesPlaceholder)) {
		return dst, errSeriesCorrupt
	}
	return append(dst, js[pos:]...), nil
}
