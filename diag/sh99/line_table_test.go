package sh99

import (
	"bytes"
	_ "embed"
	"flag"
	"fmt"
	"go/format"
	"math"
	"os"
	"strconv"
	"strings"
	"sync/atomic"
	"testing"
)

// rawTables is the Stehlé & Hutcheon (1999) Balmer data set, unchanged:
// the provenance copy (data/PROVENANCE.md) from which line_table.go and
// data/sh99-profiles.bin are generated.
//
//go:embed data/stehle-hutcheon-1999-balmer.json.gz
var rawTables []byte

// fileTables mirrors the JSON layout of the data file.
type fileTables struct {
	Lines []fileLine `json:"lines"`
}

type fileLine struct {
	Lower   int         `json:"lower"`
	Upper   int         `json:"upper"`
	TK      []float64   `json:"T_K"`
	NeCM3   []float64   `json:"ne_cm3"`
	X       []float64   `json:"delta_nu_over_F0"`
	Lambda0 [][]float64 `json:"lambda0_vac_angstrom"`
	// Profile[i][j][k] at X[i], NeCM3[j], TK[k]; 0 where not tabulated.
	Profile [][][]float64 `json:"profile"`
}

var updateTables = flag.Bool("update-tables", false, "rewrite line_table.go and data/sh99-profiles.bin from the provenance JSON")

// referenceLine builds a line straight from the provenance file, every
// node profile and table width computed here: what lineTable and
// profileValues must reproduce.
func referenceLine(fl fileLine) (*Line, error) {
	upper, tK, neCM3, x, lambda0, prof := fl.Upper, fl.TK, fl.NeCM3, fl.X, fl.Lambda0, fl.Profile
	nx, nne, nt := len(x), len(neCM3), len(tK)
	if nx < 4 || nne < 2 || nt < 2 || len(prof) != nx || len(lambda0) != nne {
		return nil, fmt.Errorf("sh99: line n=%d→2: malformed grid", upper)
	}
	l := &Line{upper: upper, ne: neCM3, t: tK, x: x,
		lne: make([]float64, nne), lt: make([]float64, nt),
		xPerNM: make([]float64, nne), tab: make([][]bool, nne)}
	nodes := make([][]*nodeProfile, nne)
	for j, v := range neCM3 {
		l.lne[j] = math.Log(v)
		if j > 0 && !(l.lne[j] > l.lne[j-1]) {
			return nil, fmt.Errorf("sh99: line n=%d→2: n_e grid not increasing", upper)
		}
	}
	for k, v := range tK {
		l.lt[k] = math.Log(v)
		if k > 0 && !(l.lt[k] > l.lt[k-1]) {
			return nil, fmt.Errorf("sh99: line n=%d→2: T grid not increasing", upper)
		}
	}
	for i := 1; i < nx; i++ {
		if !(x[i] > x[i-1]) {
			return nil, fmt.Errorf("sh99: line n=%d→2: detuning grid not increasing", upper)
		}
	}
	for j := range neCM3 {
		nodes[j] = make([]*nodeProfile, nt)
		l.tab[j] = make([]bool, nt)
		for k := range tK {
			if len(prof[0][j]) != nt || len(lambda0[j]) != nt {
				return nil, fmt.Errorf("sh99: line n=%d→2: malformed grid", upper)
			}
			if prof[0][j][k] == 0 {
				continue // not tabulated
			}
			if lam := lambda0[j][k] / 10; lam > 0 {
				if l.lambda0NM == 0 {
					l.lambda0NM = lam
				} else if lam != l.lambda0NM {
					return nil, fmt.Errorf("sh99: line n=%d→2: λ₀ varies across the grid", upper)
				}
			}
			p := make([]float64, nx)
			for i := range x {
				p[i] = prof[i][j][k]
			}
			np, err := newNodeProfile(x, p)
			if err != nil {
				return nil, fmt.Errorf("sh99: line n=%d→2, n_e=%g cm⁻³, T=%g K: %w", upper, neCM3[j], tK[k], err)
			}
			nodes[j][k] = np
			l.tab[j][k] = true
		}
	}
	if !(l.lambda0NM > 0) {
		return nil, fmt.Errorf("sh99: line n=%d→2: no wavelength", upper)
	}
	l.setXPerNM()
	for kind := range numKinds {
		for s := range 2 {
			l.lw[kind][s] = make([][]float64, nne)
			for j := range nne {
				l.lw[kind][s][j] = make([]float64, nt)
			}
		}
	}
	for j := range nne {
		for k := range nt {
			np := nodes[j][k]
			for kind := range numKinds {
				l.lw[kind][0][j][k] = math.NaN()
				l.lw[kind][1][j][k] = math.NaN()
			}
			if np == nil {
				continue
			}
			l.lw[FWHM][0][j][k] = math.Log(np.fwhm() / l.xPerNM[j])
			l.lw[FWHA][0][j][k] = math.Log(np.fwha() / l.xPerNM[j])
		}
	}
	l.nodeAt = make([][]atomic.Pointer[nodeProfile], nne)
	l.nodeOff = make([][]int, nne)
	for j := range nne {
		l.nodeAt[j] = make([]atomic.Pointer[nodeProfile], nt)
		l.nodeOff[j] = make([]int, nt)
		for k := range nt {
			l.nodeOff[j][k] = -1 // all prepared here
			l.nodeAt[j][k].Store(nodes[j][k])
		}
	}
	return l, nil
}

// pack appends v in the 3-byte form of profileValues; ok is false if v's
// shortest decimal form does not fit or does not unpack to v bit for bit.
func pack(dst []byte, v float64) ([]byte, bool) {
	s := strconv.FormatFloat(v, 'e', -1, 64) // d.ddde±x
	mant, exp, _ := strings.Cut(s, "e")
	e, err := strconv.Atoi(exp)
	if err != nil {
		return dst, false
	}
	if i := strings.IndexByte(mant, '.'); i >= 0 {
		e -= len(mant) - i - 1
		mant = mant[:i] + mant[i+1:]
	}
	m, err := strconv.Atoi(mant)
	if err != nil || m < math.MinInt16 || m > math.MaxInt16 || e < math.MinInt8 || e > math.MaxInt8 {
		return dst, false
	}
	b := []byte{byte(uint16(m)), byte(uint16(m) >> 8), byte(int8(e))}
	if math.Float64bits(unpack(string(b))) != math.Float64bits(v) {
		return dst, false
	}
	return append(dst, b...), true
}

// TestLineTableGenerated: line_table.go (grids and table widths) and
// data/sh99-profiles.bin (profile values) are what the provenance JSON
// gives, bit for bit: the files are regenerated here and compared byte
// for byte, and every node profile unpacked by Balmer equals the one
// built from the JSON in every field. -update-tables rewrites both files.
func TestLineTableGenerated(t *testing.T) {
	f := rawFile(t)
	num := func(v float64) string {
		if math.IsNaN(v) {
			return "nan"
		}
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	list := func(b *strings.Builder, vs []float64) {
		b.WriteString("[]float64{")
		for i, v := range vs {
			if i > 0 {
				b.WriteString(", ")
			}
			b.WriteString(num(v))
		}
		b.WriteString("}")
	}
	var b strings.Builder
	var packed []byte
	b.WriteString("// Code generated by go test -run TestLineTableGenerated -update-tables ./diag/sh99/; DO NOT EDIT.\n\npackage sh99\n\n")
	b.WriteString("// lineTable holds the Balmer lines of data/stehle-hutcheon-1999-balmer.json.gz: grids, tabulated nodes and the\n")
	b.WriteString("// table widths (ln nm) measured on every node profile. The profile values are in data/sh99-profiles.bin.\n")
	b.WriteString("var lineTable = []lineData{\n")
	refs := map[int]*Line{}
	for _, fl := range f.Lines {
		if fl.Lower != 2 {
			continue
		}
		l, err := referenceLine(fl)
		if err != nil {
			t.Fatal(err)
		}
		refs[fl.Upper] = l
		fmt.Fprintf(&b, "\t{\n\t\tupper: %d, lambda0NM: %s,\n\t\tneCM3: ", l.upper, num(l.lambda0NM))
		list(&b, l.ne)
		b.WriteString(",\n\t\ttK: ")
		list(&b, l.t)
		b.WriteString(",\n\t\tx: ")
		list(&b, fl.X)
		b.WriteString(",\n\t\ttab: []string{")
		for j := range l.ne {
			if j > 0 {
				b.WriteString(", ")
			}
			row := make([]byte, len(l.t))
			for k := range l.t {
				row[k] = '0'
				if l.tab[j][k] {
					row[k] = '1'
					for _, v := range mustNodes(t, l)[j][k].p {
						var ok bool
						if packed, ok = pack(packed, v); !ok {
							t.Fatalf("n=%d: profile value %v does not pack", l.upper, v)
						}
					}
				}
			}
			fmt.Fprintf(&b, "%q", row)
		}
		b.WriteString("},\n\t\tlnW: [numKinds][][]float64{\n")
		for kind := range numKinds {
			b.WriteString("\t\t\t{\n")
			for j := range l.ne {
				b.WriteString("\t\t\t\t")
				list(&b, l.lw[kind][0][j])
				b.WriteString(",\n")
			}
			b.WriteString("\t\t\t},\n")
		}
		b.WriteString("\t\t},\n\t},\n")
	}
	b.WriteString("}\n")
	src, err := format.Source([]byte(b.String()))
	if err != nil {
		t.Fatal(err)
	}
	if *updateTables {
		if err := os.WriteFile("line_table.go", src, 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile("data/sh99-profiles.bin", packed, 0o644); err != nil {
			t.Fatal(err)
		}
		t.Log("rewritten: run the test again (without -update-tables) to check the embedded copies")
		return
	}
	if old, err := os.ReadFile("line_table.go"); err != nil || !bytes.Equal(old, src) {
		t.Errorf("line_table.go differs from what the provenance JSON gives (%v): regenerate with -update-tables", err)
	}
	if profileValues != string(packed) {
		t.Errorf("data/sh99-profiles.bin differs from the provenance JSON's values: regenerate with -update-tables")
	}
	// The lines as used: every field of every node profile and every
	// width as computed from the JSON.
	s := mustLoad(t)
	if len(s.order) != len(refs) {
		t.Fatalf("%d lines, the JSON has %d", len(s.order), len(refs))
	}
	same := func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }
	sameAll := func(a, b []float64) bool {
		if len(a) != len(b) {
			return false
		}
		for i := range a {
			if !same(a[i], b[i]) {
				return false
			}
		}
		return true
	}
	nodes := 0
	for u, ref := range refs {
		l := mustLine(t, s, u)
		got, err := l.profiles()
		if err != nil {
			t.Fatal(err)
		}
		if !same(l.lambda0NM, ref.lambda0NM) || !sameAll(l.ne, ref.ne) || !sameAll(l.t, ref.t) ||
			!sameAll(l.lne, ref.lne) || !sameAll(l.lt, ref.lt) || !sameAll(l.xPerNM, ref.xPerNM) {
			t.Errorf("n=%d: grid differs from the JSON's", u)
		}
		for j := range ref.ne {
			for kind := range numKinds {
				if !sameAll(l.lw[kind][0][j], ref.lw[kind][0][j]) {
					t.Errorf("n=%d %v: table widths at n_e index %d differ from the JSON's", u, kind, j)
				}
			}
			for k := range ref.t {
				a, r := got[j][k], mustNodes(t, ref)[j][k]
				if (a == nil) != (r == nil) || l.tab[j][k] != ref.tab[j][k] {
					t.Fatalf("n=%d node (%d,%d): tabulated %v, JSON %v", u, j, k, a != nil, r != nil)
				}
				if r == nil {
					continue
				}
				nodes++
				if !sameAll(a.x, r.x) || !sameAll(a.p, r.p) || !sameAll(a.u, r.u) || !sameAll(a.lp, r.lp) ||
					!sameAll(a.d, r.d) || !sameAll(a.cum, r.cum) || !same(a.xc, r.xc) ||
					!same(a.tailSlope, r.tailSlope) || !same(a.half, r.half) || a.dip != r.dip {
					t.Errorf("n=%d node (%d,%d): unpacked profile differs from the JSON's", u, j, k)
				}
			}
		}
	}
	if nodes < 1000 {
		t.Fatalf("only %d node profiles compared", nodes)
	}
}
