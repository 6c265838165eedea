package specfile

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// ownLabels are JCAMP-DX labels that describe the encoding of the data
// rather than the measurement, plus the keys ReadText derives from the
// header row. Writers generate their own and do not copy these from Meta.
var ownLabels = map[string]bool{
	"TITLE": true, "JCAMPDX": true, "XUNITS": true, "YUNITS": true,
	"XFACTOR": true, "YFACTOR": true, "FIRSTX": true, "LASTX": true,
	"DELTAX": true, "NPOINTS": true, "FIRSTY": true, "MINY": true,
	"MAXY": true, "MINX": true, "MAXX": true, "XYDATA": true,
	"XYPOINTS": true, "PEAKTABLE": true, "END": true, "BLOCKS": true,
	"BLOCKID": true, "NTUPLES": true, "HEADER": true, "XCOLUMN": true,
	"YCOLUMN": true,
}

// checkWritable validates s for the writers.
func checkWritable(fn string, s *Spectrum) error {
	if len(s.X) != len(s.Y) {
		panic(fmt.Sprintf("specfile: %s: len(X)=%d != len(Y)=%d", fn, len(s.X), len(s.Y)))
	}
	if len(s.X) == 0 {
		return fmt.Errorf("specfile: %s: %w: spectrum has no points", fn, ErrTooFewPoints)
	}
	for i := range s.X {
		if !isFinite(s.X[i]) || !isFinite(s.Y[i]) {
			return fmt.Errorf("specfile: %s: %w: point %d is (%g, %g)", fn, ErrNotFinite, i, s.X[i], s.Y[i])
		}
	}
	return nil
}

// oneLine flattens a header value onto one line.
func oneLine(s string) string {
	return strings.Join(strings.Fields(s), " ")
}

// sortedMeta returns the Meta keys worth writing, sorted.
func sortedMeta(s *Spectrum) []string {
	var keys []string
	for k := range s.Meta {
		if !ownLabels[normLabel(k)] {
			keys = append(keys, k)
		}
	}
	slices.Sort(keys)
	return keys
}

// WriteCSV writes s as comma-separated text that [ReadText] reads back
// with identical X and Y (numbers are written in the shortest form that
// round-trips, strconv 'g' with precision −1) and the same XUnit, Title
// and YUnit (brackets, quotes and delimiters in YUnit become blanks). Title and Meta are written as "# key: value" comments; Meta
// keys that describe a JCAMP-DX encoding (XFACTOR, NPOINTS, ...) are left
// out, and keys containing ':' or '=' do not read back unchanged.
//
//	# title: Hα, discharge 3
//	wavelength_nm,intensity (counts)
//	655.5,1203
//
// It returns an error wrapping ErrTooFewPoints for an empty spectrum and
// ErrNotFinite for NaN or infinite values, and panics if len(X) != len(Y).
func WriteCSV(w io.Writer, s *Spectrum) error {
	if err := checkWritable("WriteCSV", s); err != nil {
		return err
	}
	bw := bufio.NewWriter(w)
	if s.Title != "" {
		fmt.Fprintf(bw, "# title: %s\n", oneLine(s.Title))
	}
	for _, k := range sortedMeta(s) {
		if strings.EqualFold(k, "title") {
			continue
		}
		fmt.Fprintf(bw, "# %s: %s\n", oneLine(k), oneLine(s.Meta[k]))
	}
	xname := map[AxisUnit]string{NM: "wavelength_nm", Angstrom: "wavelength_angstrom",
		Micrometer: "wavelength_um", WavenumberPerCM: "wavenumber_cm-1"}[s.XUnit]
	if xname == "" {
		xname = "x"
	}
	yname := "intensity"
	if u := strings.Map(func(r rune) rune {
		if strings.ContainsRune("()[],;\t\"", r) {
			return ' '
		}
		return r
	}, oneLine(s.YUnit)); strings.TrimSpace(u) != "" {
		yname = "intensity (" + oneLine(u) + ")"
	}
	fmt.Fprintf(bw, "%s,%s\n", xname, yname)
	var buf []byte
	for i := range s.X {
		buf = strconv.AppendFloat(buf[:0], s.X[i], 'g', -1, 64)
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, s.Y[i], 'g', -1, 64)
		buf = append(buf, '\n')
		bw.Write(buf)
	}
	return bw.Flush()
}

// WriteJCAMP writes s as JCAMP-DX 5.01 that [ReadJCAMP] reads back.
//
// If X is evenly spaced (every x_i within 10⁻⁶ of a step of
// x_0 + i·(x_last − x_0)/(n − 1)) it writes ##XYDATA=(X++(Y..Y)) in the
// compressed DIF/DUP form with Y-value checks, in lines of at most 80
// characters. The ordinates are integers Y_i = round(y_i/YFACTOR):
// YFACTOR = 1 if every y is a whole number of magnitude at most 2⁵³, which
// reads back exactly; otherwise YFACTOR = 10^(⌊log₁₀ max|y|⌋ − 9), so each
// y reads back within YFACTOR/2, about 10⁻⁹ of the largest |y|. Read-back
// X values are recomputed from FIRSTX and LASTX, which are written exactly.
// Intensities so small that this scaling loses precision (subnormal
// float64) are written as XYPOINTS instead.
//
// Otherwise it writes ##XYPOINTS=(XY..XY), one "x, y" pair per line in
// shortest round-trip form, which reads back exactly.
//
// Title becomes ##TITLE; Meta entries become labels, keys in upper case
// and prefixed with '$' unless they already look like JCAMP-DX label
// names, so "integration_ms" reads back as "$INTEGRATION_MS". Errors and
// panics are as for [WriteCSV].
func WriteJCAMP(w io.Writer, s *Spectrum) error {
	if err := checkWritable("WriteJCAMP", s); err != nil {
		return err
	}
	n := len(s.X)
	even := n >= 2 && s.X[0] != s.X[n-1]
	span := s.X[n-1] - s.X[0]
	step := span / float64(n-1)
	xAt := func(i int) float64 { return s.X[0] + span*float64(i)/float64(n-1) }
	for i := 0; even && i < n; i++ {
		even = math.Abs(s.X[i]-xAt(i)) <= 1e-6*math.Abs(step)
	}

	bw := bufio.NewWriter(w)
	g := func(v float64) string { return strconv.FormatFloat(v, 'G', -1, 64) }
	title := oneLine(s.Title)
	if title == "" {
		title = "untitled"
	}
	fmt.Fprintf(bw, "##TITLE=%s\n##JCAMP-DX=5.01\n", jcampValue(title))
	meta := map[string]string{"DATA TYPE": "UV/VIS SPECTRUM", "ORIGIN": "", "OWNER": ""}
	for _, k := range sortedMeta(s) {
		meta[jcampKey(k)] = s.Meta[k]
	}
	keys := make([]string, 0, len(meta))
	for k := range meta {
		keys = append(keys, k)
	}
	// Required labels first, in the order the standard lists them.
	rank := map[string]int{"DATA TYPE": 1, "ORIGIN": 2, "OWNER": 3}
	slices.SortFunc(keys, func(a, b string) int {
		if ra, rb := rank[a], rank[b]; ra != rb {
			return cmpRank(ra, rb)
		}
		return strings.Compare(a, b)
	})
	for _, k := range keys {
		fmt.Fprintf(bw, "##%s=%s\n", k, jcampValue(meta[k]))
	}
	xunits := map[AxisUnit]string{NM: "NANOMETERS", Angstrom: "ANGSTROMS",
		Micrometer: "MICROMETERS", WavenumberPerCM: "1/CM"}[s.XUnit]
	if xunits == "" {
		xunits = "ARBITRARY UNITS"
	}
	yunits := jcampValue(oneLine(s.YUnit))
	if yunits == "" {
		yunits = "ARBITRARY UNITS"
	}
	fmt.Fprintf(bw, "##XUNITS=%s\n##YUNITS=%s\n", xunits, yunits)

	var yf float64
	var k []int64
	if even {
		yf, k, even = scaleOrdinates(s.Y)
	}
	if !even {
		fmt.Fprintf(bw, "##XFACTOR=1\n##YFACTOR=1\n##FIRSTX=%s\n##LASTX=%s\n##NPOINTS=%d\n##FIRSTY=%s\n##XYPOINTS=(XY..XY)\n",
			g(s.X[0]), g(s.X[n-1]), n, g(s.Y[0]))
		for i := range s.X {
			fmt.Fprintf(bw, "%s, %s\n", g(s.X[i]), g(s.Y[i]))
		}
		fmt.Fprintf(bw, "##END=\n")
		return bw.Flush()
	}

	fmt.Fprintf(bw, "##XFACTOR=1\n##YFACTOR=%s\n##FIRSTX=%s\n##LASTX=%s\n##DELTAX=%s\n##NPOINTS=%d\n##FIRSTY=%s\n##XYDATA=(X++(Y..Y))\n",
		g(yf), g(s.X[0]), g(s.X[n-1]), strconv.FormatFloat(step, 'G', 12, 64), n, g(float64(k[0])*yf))
	writeDIFDUP(bw, s.X, k, g)
	fmt.Fprintf(bw, "##END=\n")
	return bw.Flush()
}

// scaleOrdinates returns YFACTOR and the integer ordinates for ASDF, as
// WriteJCAMP documents, and ok=false if some y would not be reproduced
// within 10⁻⁹ max|y| (subnormal magnitudes), in which case XYPOINTS is used.
func scaleOrdinates(y []float64) (yf float64, k []int64, ok bool) {
	yf = 1.0
	maxAbs := 0.0
	whole := true
	for _, v := range y {
		maxAbs = math.Max(maxAbs, math.Abs(v))
		whole = whole && v == math.Trunc(v)
	}
	if !whole || maxAbs > 1<<53 {
		yf = math.Pow10(int(math.Floor(math.Log10(maxAbs))) - 9)
	}
	k = make([]int64, len(y))
	for i, v := range y {
		q := math.Round(v / yf)
		if !(math.Abs(q) < 1<<62) || !(math.Abs(q*yf-v) <= 1e-9*maxAbs) {
			return 0, nil, false
		}
		k[i] = int64(q)
	}
	return yf, k, true
}

func cmpRank(a, b int) int {
	if a == 0 {
		a = math.MaxInt
	}
	if b == 0 {
		b = math.MaxInt
	}
	if a < b {
		return -1
	}
	return 1
}

// jcampKey turns a Meta key into a label name: kept if it is upper-case
// label text (letters, digits, blank, '-', '/', '_', optional leading '$'),
// else upper-cased, other characters replaced by '_', and prefixed '$'.
func jcampKey(k string) string {
	valid := k != ""
	for i, r := range k {
		ok := 'A' <= r && r <= 'Z' || '0' <= r && r <= '9' || strings.ContainsRune(" -/_", r) || r == '$' && i == 0
		valid = valid && ok
	}
	if valid {
		return k
	}
	return "$" + strings.Map(func(r rune) rune {
		if 'A' <= r && r <= 'Z' || '0' <= r && r <= '9' {
			return r
		}
		return '_'
	}, strings.ToUpper(k))
}

// jcampValue makes a value safe for one label line: no line breaks, and no
// "$$", which would start a comment.
func jcampValue(v string) string {
	return strings.ReplaceAll(oneLine(v), "$$", "$ $")
}

// maxLineLen is the JCAMP-DX line length limit.
const jcampLineLen = 80

// writeDIFDUP writes (X++(Y..Y)) lines in DIF form with DUP runs. Each
// line after the first starts with the abscissa and SQZ value of the last
// point of the previous line (the Y-value check); a final line repeats the
// last point so that it, too, is checked.
func writeDIFDUP(w *bufio.Writer, x []float64, k []int64, g func(float64) string) {
	n := len(k)
	var line, run []byte
	for i := 0; i < n-1; {
		// The blank keeps "656.5" + "E00" (SQZ 500) from reading as an
		// exponent.
		line = append(append(line[:0], g(x[i])...), ' ')
		line = appendPseudo(line, k[i], sqzPos, sqzNeg)
		j := i
		var runD int64
		runN := 0
		run = run[:0]
		for j+1 < n {
			d := k[j+1] - k[j]
			var tok []byte
			if runN > 0 && d == runD {
				tok = appendPseudo(nil, d, difPos, difNeg)
				tok = appendDup(tok, runN+1)
				if len(line)+len(tok) > jcampLineLen {
					break
				}
				runN++
			} else {
				tok = appendPseudo(nil, d, difPos, difNeg)
				if len(line)+len(run)+len(tok) > jcampLineLen && j > i {
					break
				}
				line = append(line, run...)
				runD, runN = d, 1
			}
			run = append(run[:0], tok...)
			j++
		}
		line = append(line, run...)
		line = append(line, '\n')
		w.Write(line)
		i = j
	}
	// The check line for the last point.
	line = append(append(line[:0], g(x[n-1])...), ' ')
	line = appendPseudo(line, k[n-1], sqzPos, sqzNeg)
	line = append(line, '\n')
	w.Write(line)
}

const (
	sqzPos = "@ABCDEFGHI"
	sqzNeg = "@abcdefghi"
	difPos = "%JKLMNOPQR"
	difNeg = "%jklmnopqr"
	dupSym = "0STUVWXYZs"
)

// appendPseudo appends v with its leading digit replaced by the
// pseudo-digit from pos or neg.
func appendPseudo(b []byte, v int64, pos, neg string) []byte {
	table := pos
	if v < 0 {
		table, v = neg, -v
	}
	start := len(b)
	b = strconv.AppendInt(b, v, 10)
	b[start] = table[b[start]-'0']
	return b
}

// appendDup appends a DUP count (n ≥ 1).
func appendDup(b []byte, n int) []byte {
	start := len(b)
	b = strconv.AppendInt(b, int64(n), 10)
	b[start] = dupSym[b[start]-'0']
	return b
}
