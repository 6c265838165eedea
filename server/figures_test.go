package server

import (
	"encoding/xml"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"glowlog/diag"
	"glowlog/diag/spectrum"
)

// figureResult is a small analysis result: four Balmer lines on an
// 11 600 K Boltzmann line (slope −1/(k_B·T) = −1.0 eV⁻¹), Hα excluded.
func figureResult(t *testing.T) *diag.Result {
	t.Helper()
	var m diag.Measurement
	const slope, icpt = -1.0, 14.0
	for _, n := range []int{3, 4, 5, 6} {
		tr, err := diag.Balmer(n, diag.Hydrogen)
		if err != nil {
			t.Fatal(err)
		}
		// I = g A exp(slope·E + c), with a 3 % σ.
		i := float64(tr.GUpper) * tr.EinsteinA * math.Exp(slope*tr.UpperEnergyEV+icpt-14)
		m.Lines = append(m.Lines, diag.MeasuredLine{Upper: n, Intensity: i, IntensityUnc: 0.03 * i, ExcludeFromBoltzmann: n == 3})
	}
	m.ResponseCorrected = true
	r, err := diag.Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	return &r
}

// saveFigure writes a figure to $GLOWLOG_FIGURES (when set) for looking
// at by eye.
func saveFigure(t *testing.T, name string, svg []byte) {
	if dir := os.Getenv("GLOWLOG_FIGURES"); dir != "" {
		if err := os.WriteFile(filepath.Join(dir, name), svg, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// wellFormed checks that b parses as XML.
func wellFormed(t *testing.T, b []byte) {
	t.Helper()
	d := xml.NewDecoder(strings.NewReader(string(b)))
	for {
		_, err := d.Token()
		if err != nil {
			if err.Error() == "EOF" {
				return
			}
			t.Fatalf("SVG is not well-formed XML: %v", err)
		}
	}
}

func TestBoltzmannSVG(t *testing.T) {
	r := figureResult(t)
	svg, err := BoltzmannSVG(r)
	if err != nil {
		t.Fatal(err)
	}
	saveFigure(t, "boltzmann.svg", svg)
	wellFormed(t, svg)
	s := string(svg)
	for _, want := range []string{`role="img"`, "<title>Boltzmann plot: T_exc = ", "<desc>", "Hα (excluded)", "Hβ", "Hδ",
		"upper-level energy E_k (eV)", "ln(I / (g_k A_ki))", "weighted fit: T_exc", "excluded from the fit", "lines in the fit (±1σ)"} {
		if !strings.Contains(s, want) {
			t.Errorf("Boltzmann SVG lacks %q", want)
		}
	}
	if r.ExcitationTemperatureK == nil || math.Abs(*r.ExcitationTemperatureK-11604.5) > 1 {
		t.Fatalf("fixture T_exc = %v, want 11604.5 K (1 eV)", r.ExcitationTemperatureK)
	}
	in := inlineSVG(svg)
	if !strings.HasPrefix(in, `<svg width="100%" viewBox=`) {
		t.Errorf("inline SVG starts %q", in[:min(60, len(in))])
	}

	r.IntensityUnit = diag.EnergyUnits.String()
	svg, _ = BoltzmannSVG(r)
	if !strings.Contains(string(svg), "ln(I λ / (g_k A_ki))") {
		t.Errorf("energy-unit Boltzmann plot lacks the ln(Iλ/(gA)) label")
	}
	if _, err := BoltzmannSVG(&diag.Result{}); err != errNoFigure {
		t.Errorf("empty result: err = %v, want errNoFigure", err)
	}
}

func TestWindowSVG(t *testing.T) {
	// A Lorentzian on a flat background, 5000 pixels: decimated to at most
	// 2000 plotted points per series.
	const n = 5000
	w := spectrum.Window{Uppers: []int{4}}
	for i := range n {
		x := 484.0 + 4*float64(i)/(n-1)
		model := 100 + 5000/(1+math.Pow((x-486.13)/0.1, 2))
		noise := 10 * math.Sin(float64(i)*1.7)
		w.WavelengthNM = append(w.WavelengthNM, x)
		w.Model = append(w.Model, model)
		w.Data = append(w.Data, model+noise)
		w.Residual = append(w.Residual, noise)
	}
	svg, err := WindowSVG(w, "Hβ", "intensity (counts/nm)")
	if err != nil {
		t.Fatal(err)
	}
	saveFigure(t, "window.svg", svg)
	wellFormed(t, svg)
	s := string(svg)
	for _, want := range []string{`role="img"`, "<title>Fitted window: Hβ</title>", "wavelength (nm, air)", "residual", "intensity (counts/nm)", "Voigt model"} {
		if !strings.Contains(s, want) {
			t.Errorf("window SVG lacks %q", want)
		}
	}
	d := decimate(w.WavelengthNM, w.Data, maxPlotPoints/2)
	if len(d) > maxPlotPoints {
		t.Errorf("decimated to %d points, want ≤ %d", len(d), maxPlotPoints)
	}
	// The peak survives decimation.
	var peak float64
	for _, p := range d {
		peak = math.Max(peak, p.Y)
	}
	var truePeak float64
	for _, v := range w.Data {
		truePeak = math.Max(truePeak, v)
	}
	if peak != truePeak {
		t.Errorf("decimated peak %g, want %g", peak, truePeak)
	}
	if _, err := WindowSVG(spectrum.Window{}, "", ""); err != errNoFigure {
		t.Errorf("empty window: err = %v, want errNoFigure", err)
	}
}

// TestSpectrumSVG: the whole spectrum is drawn over its full range with
// every fitted line labelled at its centre and a line searched for but
// not fitted marked with "?"; the description says the same in words.
func TestSpectrumSVG(t *testing.T) {
	n := 1024
	wl, counts := make([]float64, n), make([]float64, n)
	for i := range n {
		wl[i] = 380 + 320*float64(i)/float64(n-1)
		counts[i] = 100 + 5000*math.Exp(-math.Pow((wl[i]-656.28)/0.3, 2)) + 900*math.Exp(-math.Pow((wl[i]-486.13)/0.3, 2))
	}
	d := &diag.Result{Lines: []diag.LineResult{
		{UpperLevel: 3, Name: "Hα", ProfileFit: &diag.ProfileFit{CenterNM: 656.28}},
		{UpperLevel: 4, Name: "Hβ", ProfileFit: &diag.ProfileFit{CenterNM: 486.13}},
	}}
	search := []spectrum.LineSearch{
		{UpperLevel: 3, Name: "Hα", ExpectedNM: 656.28, Status: "fitted"},
		{UpperLevel: 4, Name: "Hβ", ExpectedNM: 486.13, Status: "fitted"},
		{UpperLevel: 5, Name: "Hγ", ExpectedNM: 434.05, Status: "not-detected"},
	}
	svg, err := SpectrumSVG(wl, counts, d, search, "lamp.csv")
	if err != nil {
		t.Fatal(err)
	}
	wellFormed(t, svg)
	saveFigure(t, "spectrum.svg", svg)
	s := string(svg)
	for _, want := range []string{`role="img"`, "<title>Whole spectrum: lamp.csv</title>", "from 380.000 to 700.000 nm with 1024 pixels",
		"Fitted lines: Hβ at 486.130 nm, Hα at 656.280 nm.", "Searched for but not fitted: Hγ.", ">Hα<", ">Hβ<", ">Hγ?<"} {
		if !strings.Contains(s, want) {
			t.Errorf("spectrum figure lacks %q", want)
		}
	}
	if _, err := SpectrumSVG(wl[:1], counts[:1], d, nil, "x"); err != errNoFigure {
		t.Errorf("one point: err %v, want errNoFigure", err)
	}
}
