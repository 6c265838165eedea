package diag

import (
	"go/ast"
	"go/parser"
	"go/token"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// flagCodeConstants parses the non-test Go files of dir and returns the
// string values of every constant named Flag….
func flagCodeConstants(t *testing.T, dir string) map[string]string {
	t.Helper()
	files, err := filepath.Glob(filepath.Join(dir, "*.go"))
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	fset := token.NewFileSet()
	for _, fn := range files {
		if strings.HasSuffix(fn, "_test.go") {
			continue
		}
		f, err := parser.ParseFile(fset, fn, nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, d := range f.Decls {
			g, ok := d.(*ast.GenDecl)
			if !ok || g.Tok != token.CONST {
				continue
			}
			for _, sp := range g.Specs {
				vs := sp.(*ast.ValueSpec)
				for i, name := range vs.Names {
					if !strings.HasPrefix(name.Name, "Flag") || i >= len(vs.Values) {
						continue
					}
					lit, ok := vs.Values[i].(*ast.BasicLit)
					if !ok || lit.Kind != token.STRING {
						continue
					}
					v, err := strconv.Unquote(lit.Value)
					if err != nil {
						t.Fatal(err)
					}
					out[filepath.Base(dir)+"."+name.Name] = v
				}
			}
		}
	}
	return out
}

// TestFlagSeverityTable: every flag code constant of diag and of the
// spectrum pipeline has an entry in the one severity table, and every
// entry is one of the three severities.
func TestFlagSeverityTable(t *testing.T) {
	consts := flagCodeConstants(t, ".")
	for k, v := range flagCodeConstants(t, "spectrum") {
		consts[k] = v
	}
	if len(consts) < 25 {
		t.Fatalf("found only %d flag code constants: the parser missed some", len(consts))
	}
	for name, code := range consts {
		if _, ok := flagSeverity[code]; !ok {
			t.Errorf("%s = %q has no entry in flagSeverity (diag/severity.go)", name, code)
		}
	}
	for code, s := range flagSeverity {
		if severityRank(s) == 0 {
			t.Errorf("flagSeverity[%q] = %q is not problem, caution or note", code, s)
		}
	}
}

// TestSeverities: Analyze sets a severity on every flag; always-true
// method caveats are notes and are not counted; an unknown code is a
// caution; the count is of distinct problem and caution codes.
func TestSeverities(t *testing.T) {
	if got := SeverityOf("some_future_code"); got != SeverityCaution {
		t.Errorf("unknown code: %q, want caution", got)
	}
	fs := []Flag{{Code: FlagLTEComplete}, {Code: FlagLTEDensitySameSource}, {Code: FlagRelationRange},
		{Code: FlagRelationRange}, {Code: FlagUnverified}}
	SetSeverities(fs)
	if n, w := CountWarnings(fs); n != 1 || w != SeverityCaution {
		t.Errorf("count %d worst %q, want 1 caution", n, w)
	}
	fs = append(fs, Flag{Code: FlagDensityDisagree})
	if n, w := CountWarnings(fs); n != 2 || w != SeverityProblem {
		t.Errorf("count %d worst %q, want 2 problem", n, w)
	}
	// Unset severities (stored results) come from the table.
	if n, w := CountWarnings([]Flag{{Code: FlagLTEComplete}, {Code: FlagSlopeFlat}}); n != 1 || w != SeverityProblem {
		t.Errorf("unset severities: count %d worst %q, want 1 problem", n, w)
	}
	if n, w := CountWarnings(nil); n != 0 || w != "" {
		t.Errorf("no flags: %d %q", n, w)
	}
}

// TestAnalyzeSetsSeverities: every flag of an analysis carries the
// severity of its code, and the always-true LTE caveats are notes.
func TestAnalyzeSetsSeverities(t *testing.T) {
	m := Measurement{Unit: PhotonUnits, ResponseCorrected: true,
		InstrumentGaussFWHMNM: 0.05, GasTemperatureK: 1200, PressurePa: 101325, Perturber: "Ar",
		Lines: []MeasuredLine{
			{Upper: 3, Intensity: 1.0e5, IntensityUnc: 2e3},
			{Upper: 4, Intensity: 1.5e4, IntensityUnc: 4e2, FWHMNM: 0.55, FWHMUncNM: 0.01},
			{Upper: 5, Intensity: 3.9e3, IntensityUnc: 1.5e2},
		}}
	res, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Flags) == 0 {
		t.Fatal("no flags to check")
	}
	var sameSpectrum bool
	for _, f := range res.Flags {
		if f.Severity == "" || f.Severity != SeverityOf(f.Code) {
			t.Errorf("flag %s: severity %q, want %q", f.Code, f.Severity, SeverityOf(f.Code))
		}
		if f.Code == FlagLTEDensitySameSource {
			sameSpectrum = true
			if f.Severity != SeverityNote {
				t.Errorf("same-spectrum caveat is %q, want note", f.Severity)
			}
		}
	}
	if !sameSpectrum {
		t.Errorf("no %s flag among %v", FlagLTEDensitySameSource, res.Flags)
	}
}
