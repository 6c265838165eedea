package spectrum

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"glowlog/diag"
	"glowlog/diag/sh99"
)

// TestSynthesizeStarkAreas: each line of SynthesizeStark integrates to
// the area SynthLines gives it (the Boltzmann ratios of Synthesize): one
// line at a time on a ±150 nm axis, whose pixels must hold all but the
// far Stark wing (up to 8e-4 of the area, Hδ at 5×10²² m⁻³: (FWHM/2 / 150 nm)^1.5). Lines the
// tables cover are SH99-shaped; H8 at 3×10²² m⁻³ (beyond the tables, which
// end at 10²² for H8) and H13 (a member the tables do not hold) fall back
// to a Voigt profile, whose Lorentzian wings beyond the axis are accounted
// for.
func TestSynthesizeStarkAreas(t *testing.T) {
	for _, c := range []struct {
		up    int
		ne    float64
		shape string
	}{
		{3, 1e22, SynthShapeSH99}, {4, 3e21, SynthShapeSH99}, {4, 1e23, SynthShapeSH99},
		{6, 5e22, SynthShapeSH99}, {8, 3e22, SynthShapeVoigt}, {13, 1e21, SynthShapeVoigt},
	} {
		tr, _ := diag.Balmer(c.up, diag.Hydrogen)
		x := linspace(tr.WavelengthAirNM-150, tr.WavelengthAirNM+150, 30001)
		cfg := SynthConfig{WavelengthNM: x, Uppers: []int{c.up}, ExcitationTemperatureK: 8000, ElectronDensityM3: c.ne,
			GasTemperatureK: 1500, InstrumentFWHMNM: 0.1, Perturber: mustPerturber(t, "Ar"), PressurePa: 101325, HalphaArea: 1e5,
			BaselinePerNM: 0}
		y, lines, err := SynthesizeStark(cfg)
		if err != nil {
			t.Fatal(err)
		}
		if len(lines) != 1 || lines[0].Shape != c.shape {
			t.Fatalf("H%d at %.3g: lines %+v, want shape %s", c.up, c.ne, lines, c.shape)
		}
		ref, _ := SynthLines(cfg)
		var sum float64
		for _, v := range y {
			sum += v
		}
		want := ref[0].Area
		if c.shape == SynthShapeVoigt {
			// A Voigt's Lorentzian wings beyond ±150 nm hold
			// 1 − (2/π)·atan(150/γ) of the area (for γ ≫ σ).
			want *= 2 / math.Pi * math.Atan(150/(ref[0].LorentzFWHMNM/2))
		}
		if d := sum/want - 1; math.Abs(d) > 1e-3 || d > 1e-5 {
			t.Errorf("H%d at %.3g m⁻³: pixel sum %.6g, area %.6g (rel %.2g)", c.up, c.ne, sum, ref[0].Area, d)
		}
	}
	// The Boltzmann ratios are those of SynthLines.
	x := linspace(376, 700, 2048)
	cfg := SynthConfig{WavelengthNM: x, Uppers: []int{3, 4, 5}, ExcitationTemperatureK: 6000, ElectronDensityM3: 5e21,
		GasTemperatureK: 1000, InstrumentFWHMNM: 0.2, HalphaArea: 1}
	_, lines, err := SynthesizeStark(cfg)
	if err != nil {
		t.Fatal(err)
	}
	ref, _ := SynthLines(cfg)
	for k := range lines {
		if lines[k].Area != ref[k].Area || lines[k].Shape != SynthShapeSH99 {
			t.Errorf("line %d: %+v, SynthLines %+v", k, lines[k], ref[k])
		}
	}
}

// TestSynthesizeStarkShape compares the pixels with an independent
// evaluation: the tables' profile (sh99 Line.Profile) convolved in the
// test by direct quadrature with the Gaussian √(G² − D_table²), at pixel
// centres of a fine axis (pixel 0.002 nm, where the pixel mean and the
// centre value differ by < 1e-4 of the peak). No perturber: the non-Stark
// Lorentzian is the natural width alone (~1e-5 nm), left out of the
// reference. Agreement within 2e-3 of the peak, in the Stark-dominated
// and in the instrument-dominated regime (Hγ under a 0.2 nm instrument).
func TestSynthesizeStarkShape(t *testing.T) {
	for _, c := range []struct {
		up       int
		ne, inst float64
	}{{3, 1e22, 0.08}, {4, 2e22, 0.05}, {4, 1e21, 0.06}, {5, 8e21, 0.2}} {
		tr, _ := diag.Balmer(c.up, diag.Hydrogen)
		c0 := tr.WavelengthAirNM
		x := linspace(c0-3, c0+3, 3001)
		gasT, te := 2000.0, 1e4
		y, lines, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{c.up}, ExcitationTemperatureK: 8000,
			ElectronDensityM3: c.ne, GasTemperatureK: gasT, InstrumentFWHMNM: c.inst, HalphaArea: 1, ElectronTemperatureK: te})
		if err != nil {
			t.Fatal(err)
		}
		l, _ := sh99.Balmer(c.up)
		g := lines[0].GaussFWHMNM
		gx := math.Sqrt(g*g - math.Pow(l.DopplerFWHMNM(te), 2))
		sig := gx / (2 * math.Sqrt(2*math.Ln2))
		var peak, worst float64
		ref := make([]float64, len(x))
		for i := range x {
			// ∫ P(d − u) N(u; σ) du over ±7σ, 1401 points (Simpson).
			const k = 1400
			hh := 14 * sig / k
			var s float64
			for j := 0; j <= k; j++ {
				u := -7*sig + float64(j)*hh
				p, err := l.Profile(x[i]-c0-u, c.ne, te)
				if err != nil {
					t.Fatal(err)
				}
				w := 2.0
				switch {
				case j == 0 || j == k:
					w = 1
				case j%2 == 1:
					w = 4
				}
				s += w * p * math.Exp(-u*u/(2*sig*sig))
			}
			ref[i] = lines[0].Area * s * hh / 3 / (sig * math.Sqrt(2*math.Pi))
			peak = math.Max(peak, ref[i])
		}
		for i := range x {
			got := y[i] / pixelWidth(x, i)
			worst = math.Max(worst, math.Abs(got-ref[i])/peak)
		}
		t.Logf("H%d n_e %.3g inst %.3g: worst |Δ| %.2g of the peak", c.up, c.ne, c.inst, worst)
		if worst > 2e-3 {
			t.Errorf("H%d n_e %.3g: worst difference %.3g of the peak", c.up, c.ne, worst)
		}
	}
}

// TestSynthesizeStarkRoundTrip: noise-free SH99 spectra on a survey axis
// (every member in range, as a discharge emits them: Hα–Hε over 393–700
// nm, Hα–H8 over 386–700 nm, members the tables cover at that n_e, so
// that the generator's shapes are the tables' throughout; 2048 pixels,
// instrument 0.2–0.3 nm, Ar at 1 atm or none)
// and on a one-line Hβ window, analysed with the whole-spectrum model:
// n_e and T_exc come back within 1 % (the model is the generator's, up
// to the fit's own grid and the fitted baseline). The whole fit's flags
// are not checked here: without noise every 1e-4-level difference between
// two numerical models is "significant"; the demo check (server) does that
// on noisy spectra.
func TestSynthesizeStarkRoundTrip(t *testing.T) {
	p := NewPipeline(8192)
	for _, c := range []struct {
		lo, hi     float64
		npx        int
		uppers     []int
		ne, texc   float64
		inst, gasT float64
		wantTexc   bool
		pert       string
		pressure   float64
	}{
		{393, 700, 2048, []int{3, 4, 5, 6, 7}, 9e21, 6500, 0.2, 1500, true, "Ar", 101325},
		{393, 700, 2048, []int{3, 4, 5, 6, 7}, 3e22, 9000, 0.3, 3000, true, "Ar", 101325},
		{386, 700, 2048, []int{3, 4, 5, 6, 7, 8}, 2e21, 7500, 0.2, 2500, true, "", 0},
		{477, 495, 2048, []int{4}, 1.5e20, 4000, 0.02, 500, false, "H2", 600},
	} {
		x := linspace(c.lo, c.hi, c.npx)
		y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: c.uppers, ExcitationTemperatureK: c.texc,
			ElectronDensityM3: c.ne, GasTemperatureK: c.gasT, InstrumentFWHMNM: c.inst, Perturber: mustPerturber(t, c.pert),
			PressurePa: c.pressure, HalphaArea: 2e6, BaselinePerNM: 100})
		if err != nil {
			t.Fatal(err)
		}
		opt := Options{Model: ModelWhole, Conditions: diag.Measurement{InstrumentGaussFWHMNM: c.inst,
			GasTemperatureK: c.gasT, Perturber: c.pert, PressurePa: c.pressure}}
		res, err := p.Analyze(&Spectrum{Name: "stark", WavelengthNM: x, Counts: y}, opt)
		if err != nil {
			t.Fatalf("n_e %.3g: %v", c.ne, err)
		}
		if res.Model != ModelWhole || res.ElectronDensityM3 == nil {
			for _, f := range res.Flags {
				t.Log(f.Code, f.Message)
			}
			t.Fatalf("n_e %.3g: route %q, n_e %v", c.ne, res.Model, res.ElectronDensityM3)
		}
		ne := *res.ElectronDensityM3
		t.Logf("n_e %.3g: got %.4g (%+.2g %%)", c.ne, ne, 100*(ne/c.ne-1))
		if math.Abs(ne/c.ne-1) > 0.01 {
			t.Errorf("n_e %.3g: got %.4g", c.ne, ne)
		}
		if c.wantTexc {
			if res.ExcitationTemperatureK == nil {
				t.Fatalf("n_e %.3g: no T_exc", c.ne)
			}
			te := *res.ExcitationTemperatureK
			t.Logf("T_exc %.0f: got %.1f (%+.2g %%)", c.texc, te, 100*(te/c.texc-1))
			if math.Abs(te/c.texc-1) > 0.01 {
				t.Errorf("T_exc %.0f: got %.1f", c.texc, te)
			}
		}
	}
}

// mustPerturber looks a perturber up by name ("": none).
func mustPerturber(t testing.TB, name string) diag.Perturber {
	t.Helper()
	if name == "" {
		return diag.NoPerturber
	}
	p, err := diag.LookupPerturber(name)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// TestSynthesizeStarkFWHMScipy compares the total FWHM of SynthesizeStark's
// lines with the FWHM that testdata/sh99synth/gen.py (scipy, independent of
// our Go code; the same SH99 table, the same "table ⊗ remaining Gaussian"
// physics) measured on its fine model and wrote into its truth files
// (lines[].total_fwhm_nm), for every line of the t1 spectra of all three
// spectrometer types and densities. The Go line is made alone on a
// 0.0005 nm axis (no perturber: the natural width, 4e-5–1.3e-4 nm, is the
// only extra Lorentzian; gen.py has convolved its lines with the same
// natural width since 2026-12-03, +0.06 % on the narrowest FWHM); its
// FWHM is read off by linear interpolation at half maximum. Agreement
// within 0.5 % (the two interpolations of the table in detuning differ;
// measured worst 0.23 % over the 48 lines, before and after gen.py took
// the natural width).
func TestSynthesizeStarkFWHMScipy(t *testing.T) {
	files, err := filepath.Glob("../../testdata/sh99synth/*_t1.truth.json")
	if err != nil || len(files) == 0 {
		t.Fatalf("no truth files (%v)", err)
	}
	var worst float64
	n := 0
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		var tr struct {
			Inst  float64 `json:"instrument_fwhm_nm"`
			GasT  float64 `json:"gas_temperature_K"`
			Te    float64 `json:"electron_temperature_K"`
			Ne    float64 `json:"electron_density_m3"`
			Lines []struct {
				Upper int     `json:"upper_level"`
				FWHM  float64 `json:"total_fwhm_nm"`
			} `json:"lines"`
		}
		if err := json.Unmarshal(b, &tr); err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		for _, l := range tr.Lines {
			c, _ := diag.Balmer(l.Upper, diag.Hydrogen)
			half := 2.5 * l.FWHM
			x := linspace(c.WavelengthAirNM-half, c.WavelengthAirNM+half, int(2*half/0.0005)+1)
			y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{l.Upper}, ExcitationTemperatureK: 5000,
				ElectronDensityM3: tr.Ne, ElectronTemperatureK: tr.Te, GasTemperatureK: tr.GasT, InstrumentFWHMNM: tr.Inst, HalphaArea: 1})
			if err != nil {
				t.Fatal(err)
			}
			got := fwhmOf(x, y)
			d := got/l.FWHM - 1
			worst = math.Max(worst, math.Abs(d))
			n++
			if math.Abs(d) > 5e-3 {
				t.Errorf("%s H%d: FWHM %.5g nm, scipy %.5g nm (%+.2g %%)", filepath.Base(f), l.Upper, got, l.FWHM, 100*d)
			}
		}
	}
	t.Logf("%d lines: worst |ΔFWHM|/FWHM %.2g", n, worst)
}

// fwhmOf returns the full width at half maximum of a single peak sampled
// on x (linear interpolation at the half-maximum crossings).
func fwhmOf(x, y []float64) float64 {
	im := 0
	for i := range y {
		if y[i] > y[im] {
			im = i
		}
	}
	h := y[im] / 2
	lo, hi := im, im
	for lo > 0 && y[lo] > h {
		lo--
	}
	for hi < len(y)-1 && y[hi] > h {
		hi++
	}
	xl := x[lo] + (h-y[lo])/(y[lo+1]-y[lo])*(x[lo+1]-x[lo])
	xr := x[hi-1] + (h-y[hi-1])/(y[hi]-y[hi-1])*(x[hi]-x[hi-1])
	return xr - xl
}

// TestSynthesizeStarkScipyProfile compares SynthesizeStark's profile, core
// and wings, with testdata/sh99synth/profile_check.json: scipy values from
// gen.py's own interpolation of the SH99 table (independent of our Go
// code) for Hα, Hβ, Hγ at the node 10²² m⁻³, 10⁴ K, under a 0.2 nm
// instrument and 1500 K Doppler, at detunings 0–10 nm (mean of both
// sides). The Go line is made on a 0.0005 nm axis over ±30 nm and
// normalised by its pixel sum there. Agreement within 0.5 % at every
// detuning (measured: within 0.23 %, Hγ at 2 nm; Hα at 20 nm, not
// checked, differs by a factor 2 where both are 1e-5 of the peak: the two
// interpolations of the table's last points differ). Since 2026-12-03 the
// reference carries the natural Lorentzian too, as SynthesizeStark does:
// Hα's wing went from +0.11 … +0.14 % against it to −0.09 … +0.07 %.
func TestSynthesizeStarkScipyProfile(t *testing.T) {
	b, err := os.ReadFile("../../testdata/sh99synth/profile_check.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Ne    float64   `json:"electron_density_m3"`
		Te    float64   `json:"electron_temperature_K"`
		Inst  float64   `json:"instrument_fwhm_nm"`
		GasT  float64   `json:"gas_temperature_K"`
		D     []float64 `json:"detunings_nm"`
		Lines []struct {
			Upper int       `json:"upper_level"`
			P     []float64 `json:"profile_per_nm"`
		} `json:"lines"`
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Lines) != 3 {
		t.Fatalf("%d reference lines", len(ref.Lines))
	}
	const step, half = 0.0005, 30.0
	for _, l := range ref.Lines {
		c, _ := diag.Balmer(l.Upper, diag.Hydrogen)
		n := int(2*half/step) + 1
		x := linspace(c.WavelengthAirNM-half, c.WavelengthAirNM+half, n)
		y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{l.Upper}, ExcitationTemperatureK: 8000,
			ElectronDensityM3: ref.Ne, ElectronTemperatureK: ref.Te, GasTemperatureK: ref.GasT, InstrumentFWHMNM: ref.Inst, HalphaArea: 1})
		if err != nil {
			t.Fatal(err)
		}
		var sum float64
		for _, v := range y {
			sum += v
		}
		for k, d := range ref.D {
			i1, i2 := int((half+d)/step+0.5), int((half-d)/step+0.5)
			got := 0.5 * (y[i1] + y[i2]) / step / sum
			if r := got/l.P[k] - 1; math.Abs(r) > 5e-3 {
				t.Errorf("H%d at %g nm: %.6g per nm, scipy %.6g (%+.2g %%)", l.Upper, d, got, l.P[k], 100*r)
			}
		}
	}
}

// TestWholeDensityLimit: Hα and Hβ at 10²⁰ m⁻³ seen through a 0.8 nm
// instrument — Stark FWHMs of a few hundredths of a nm, widening the
// lines by well under 1 % — give no measured n_e from the whole fit: no
// value, an upper limit at or above the truth, and the caution
// FlagWholeDensityLimit naming the line that widens most. With a 0.02 nm
// instrument the same density is measured (no limit, no flag).
func TestWholeDensityLimit(t *testing.T) {
	p := NewPipeline(8192)
	for _, c := range []struct {
		lo, hi, inst float64
		limit        bool
	}{{470, 670, 0.8, true}, {480, 492, 0.02, false}} {
		uppers := []int{3, 4}
		if !c.limit {
			uppers = []int{4}
		}
		x := linspace(c.lo, c.hi, 2048)
		const ne = 1e20
		y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: uppers, ExcitationTemperatureK: 5000,
			ElectronDensityM3: ne, GasTemperatureK: 600, InstrumentFWHMNM: c.inst, HalphaArea: 2e6, BaselinePerNM: 100})
		if err != nil {
			t.Fatal(err)
		}
		opt := Options{Model: ModelWhole, Conditions: diag.Measurement{InstrumentGaussFWHMNM: c.inst, GasTemperatureK: 600}}
		res, err := p.Analyze(&Spectrum{Name: "weak", WavelengthNM: x, Counts: y}, opt)
		if err != nil {
			t.Fatal(err)
		}
		if res.Whole == nil {
			t.Fatalf("instrument %g nm: no whole fit (flags %v)", c.inst, res.Flags)
		}
		var flag *diag.Flag
		for i := range res.Flags {
			if res.Flags[i].Code == FlagWholeDensityLimit {
				flag = &res.Flags[i]
			}
		}
		if !c.limit {
			if flag != nil || res.ElectronDensityM3 == nil || res.Whole.ElectronDensityUpperLimitM3 != nil {
				t.Errorf("instrument %g nm: want a measured n_e, got %v, limit %v, flag %v", c.inst, res.ElectronDensityM3, res.Whole.ElectronDensityUpperLimitM3, flag)
			}
			continue
		}
		if res.ElectronDensityM3 != nil || res.Whole.ElectronDensityM3 != nil {
			t.Errorf("instrument %g nm: n_e %v reported as a value", c.inst, *res.Whole.ElectronDensityM3)
		}
		lim := res.Whole.ElectronDensityUpperLimitM3
		if lim == nil || !(*lim >= ne) {
			t.Errorf("instrument %g nm: upper limit %v, want ≥ the true %g", c.inst, lim, ne)
		}
		if flag == nil || !strings.Contains(flag.Message, "upper limit") || !strings.Contains(flag.Message, "Hβ") {
			t.Errorf("instrument %g nm: flag %v, want %s naming the upper limit and Hβ", c.inst, flag, FlagWholeDensityLimit)
		} else if diag.SeverityOf(flag.Code) != diag.SeverityCaution {
			t.Errorf("%s has severity %v, want caution", flag.Code, diag.SeverityOf(flag.Code))
		}
		// The line-by-line route's own density flags (its n_e is not
		// the reported one) are notes.
		demoted := 0
		for _, f := range res.Flags {
			if slices.Contains(linesRouteDensityFlags, f.Code) {
				demoted++
				if f.Severity != diag.SeverityNote {
					t.Errorf("line-by-line density flag %s has severity %v, want note", f.Code, f.Severity)
				}
			}
		}
		if demoted == 0 {
			t.Errorf("no line-by-line density flag at a Stark width far below the Gaussian: %v", res.Flags)
		}
	}
}

// TestWholeTableTemperatureStandIn: SH99-shaped Hβ at 2.5e22 m⁻³ made at
// T_e = 10⁴ K and analysed with T_e given as 8000 K (within the 20 % a
// user's T_e may be off). The tables give that density only from 10⁴ K
// up (physics.md §4.5), so at 8000 K Hβ has no tabulated shape. Before
// the stand-in the line fell back to the Voigt of its relation: on the
// independent check set (testdata/wholesynth, hires_hb_01 at 8000 K) n_e
// came out 27 % low with a 1.5 % σ and reduced χ² ~10³. Now the line
// reads its tables at the 10⁴ K node, says so, and the temperature step
// is in σ_sys: n_e within 3 % and within its total σ.
func TestWholeTableTemperatureStandIn(t *testing.T) {
	p := NewPipeline(8192)
	x := linspace(474, 498, 1024)
	const ne = 2.5e22
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{4}, ExcitationTemperatureK: 8000,
		ElectronDensityM3: ne, ElectronTemperatureK: 10000, GasTemperatureK: 2000, InstrumentFWHMNM: 0.06,
		HalphaArea: 5e7, BaselinePerNM: 200})
	if err != nil {
		t.Fatal(err)
	}
	opt := Options{Model: ModelWhole, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.06, GasTemperatureK: 2000, ElectronTemperatureK: 8000}}
	res, err := p.Analyze(&Spectrum{Name: "standin", WavelengthNM: x, Counts: y}, opt)
	if err != nil {
		t.Fatal(err)
	}
	w := res.Whole
	if w == nil || len(w.Lines) != 1 || w.ElectronDensityM3 == nil || w.ElectronDensityUncM3 == nil {
		t.Fatalf("no whole-fit n_e for Hβ (flags %v)", res.Flags)
	}
	if l := w.Lines[0]; l.Shape != "SH99" || l.TableTemperatureK != 10000 {
		t.Errorf("Hβ shape %q at %g K, want SH99 at the 10000 K node", l.Shape, l.TableTemperatureK)
	}
	if !strings.Contains(w.DopplerNote, "at T_e = 8000 K; its shape is read at the nearest temperature that does, 10000 K") {
		t.Errorf("the stand-in temperature is not explained: %q", w.DopplerNote)
	}
	got, unc := *w.ElectronDensityM3, *w.ElectronDensityUncM3
	if d := math.Abs(got/ne - 1); d > 0.03 || math.Abs(got-ne) > unc {
		t.Errorf("n_e %.4g ± %.2g m⁻³, truth %g (%.1f %% off)", got, unc, ne, 100*d)
	}
	var te float64
	for _, part := range w.ElectronDensityUncParts {
		if strings.HasPrefix(part.Name, "electron temperature") {
			te = part.Sigma
		}
	}
	if !(te > 0) {
		t.Errorf("no electron-temperature part in σ_sys: %v", w.ElectronDensityUncParts)
	}
	t.Logf("n_e %.4g ± %.2g m⁻³ (truth %g), T_e part %.2g", got, unc, ne, te)
}

// TestWholeVoigtStandInSigma: an SH99-shaped Hβ line (SynthesizeStark,
// 3e22 m⁻³ at 10⁴ K) analysed with T_e given as 3000 K, where no tables
// within a factor 2 cover the density, gets the Voigt of its relation;
// its n_e comes out ~14 % low (a measured bias of that stand-in), so σ_sys
// must carry the stand-in's part and the total σ must reach the truth
// within 2σ. Declared Voigt-shaped spectra (TestWholeVoigtFallback) carry
// no such part.
func TestWholeVoigtStandInSigma(t *testing.T) {
	p := NewPipeline(8192)
	x := linspace(470, 505, 2048)
	const ne = 3e22
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{4}, ExcitationTemperatureK: 8000,
		ElectronDensityM3: ne, ElectronTemperatureK: 10000, GasTemperatureK: 2000, InstrumentFWHMNM: 0.05,
		HalphaArea: 5e8, BaselinePerNM: 200})
	if err != nil {
		t.Fatal(err)
	}
	opt := Options{Model: ModelWhole, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.05, GasTemperatureK: 2000, ElectronTemperatureK: 3000}}
	res, err := p.Analyze(&Spectrum{Name: "standin-voigt", WavelengthNM: x, Counts: y}, opt)
	if err != nil {
		t.Fatal(err)
	}
	w := res.Whole
	if w == nil || w.ElectronDensityM3 == nil || w.ElectronDensityUncM3 == nil || len(w.Lines) != 1 || w.Lines[0].Shape != "Voigt" {
		t.Fatalf("want a whole-fit n_e from a Voigt Hβ, got %+v", w)
	}
	var part float64
	for _, q := range w.ElectronDensityUncParts {
		if strings.HasPrefix(q.Name, "Voigt standing in") {
			part = q.Sigma
		}
	}
	got, unc := *w.ElectronDensityM3, *w.ElectronDensityUncM3
	t.Logf("n_e %.4g ± %.2g m⁻³ (truth %g), stand-in part %.2g", got, unc, ne, part)
	if !(part > 0.1*got) {
		t.Errorf("stand-in part %.3g, want about 15 %% of n_e %.3g", part, got)
	}
	if math.Abs(got-ne) > 2*unc {
		t.Errorf("n_e %.4g ± %.2g misses the truth %g by more than 2σ", got, unc, ne)
	}
}

// TestWholePressureParts: at atmospheric pressure in argon the
// non-Stark Lorentzians are not small (van der Waals ≈ 0.1 nm on Hβ at
// 1500 K), so the whole fit's σ_sys carries the van der Waals constant's
// convention (physics.md §10 item 7) as the line-by-line route does; at
// 1 Pa that part is nil or negligible (a line whose strong signal keeps
// the kernel's Lorentzian, chooseGrids, carries the ~10⁻⁸ change the
// 1 Pa van der Waals width makes).
func TestWholePressureParts(t *testing.T) {
	p := NewPipeline(8192)
	x := linspace(470, 505, 2048)
	const ne = 2e21
	argon, err := diag.LookupPerturber("Ar")
	if err != nil {
		t.Fatal(err)
	}
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{4}, ExcitationTemperatureK: 8000,
		ElectronDensityM3: ne, GasTemperatureK: 1500, InstrumentFWHMNM: 0.05, PressurePa: 101325, Perturber: argon,
		HalphaArea: 5e8, BaselinePerNM: 200})
	if err != nil {
		t.Fatal(err)
	}
	for _, pa := range []float64{101325, 1} {
		opt := Options{Model: ModelWhole, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.05, GasTemperatureK: 1500, PressurePa: pa, Perturber: "Ar"}}
		res, err := p.Analyze(&Spectrum{Name: "atm", WavelengthNM: x, Counts: y}, opt)
		if err != nil {
			t.Fatal(err)
		}
		w := res.Whole
		if w == nil || w.ElectronDensityM3 == nil {
			t.Fatalf("%g Pa: no whole-fit n_e", pa)
		}
		var vdw float64
		for _, q := range w.ElectronDensityUncParts {
			if q.Name == "van der Waals constant convention" {
				vdw = q.Sigma
			}
		}
		t.Logf("%g Pa: n_e %.4g ± %.2g m⁻³ (truth %g), van der Waals part %.2g", pa, *w.ElectronDensityM3, *w.ElectronDensityUncM3, ne, vdw)
		if pa > 1000 {
			if !(vdw > 0.01**w.ElectronDensityM3) {
				t.Errorf("%g Pa: van der Waals convention part %.3g, want above 1 %% of n_e; parts %v", pa, vdw, w.ElectronDensityUncParts)
			}
			if d := math.Abs(*w.ElectronDensityM3/ne - 1); d > 0.05 {
				t.Errorf("%g Pa: n_e %.4g, truth %g (%.1f %%)", pa, *w.ElectronDensityM3, ne, 100*d)
			}
		} else if vdw > 1e-6**w.ElectronDensityM3 {
			t.Errorf("%g Pa: van der Waals part %.3g, want none or below 1e-6 of n_e", pa, vdw)
		}
	}
}

// TestWholeTexcWideUncertainty: the caution that T_exc is uncertain by
// more than 20 % speaks of the reported T_exc. With the whole fit
// reporting 10100 ± 1100 K, the line-by-line Boltzmann plot's 11000 ±
// 2300 K caution (testdata/wholesynth/survey_07) becomes that route's
// note, and none is raised for the reported value; a reported 10000 ±
// 2500 K raises it, with the whole fit's numbers.
func TestWholeTexcWideUncertainty(t *testing.T) {
	lines, ok := diag.WideUncertaintyFlag(11000, 2300)
	if !ok {
		t.Fatal("11000 ± 2300 K: no flag (test premise)")
	}
	lines.Severity = diag.SeverityOf(lines.Code)
	for _, c := range []struct {
		t, u float64
		want bool
	}{{10100, 1100, false}, {10000, 2500, true}} {
		res := Result{Model: ModelWhole}
		res.ExcitationTemperatureK, res.ExcitationTemperatureUncK = fptr(c.t), fptr(c.u)
		res.Flags = []diag.Flag{lines}
		demoteLinesRouteFlags(&res)
		var cautions []diag.Flag
		for _, f := range res.Flags {
			if f.Code == diag.FlagWideUncertainty && f.Severity == diag.SeverityCaution {
				cautions = append(cautions, f)
			}
		}
		if res.Flags[0].Severity != diag.SeverityNote || !strings.HasPrefix(res.Flags[0].Message, "line-by-line route") {
			t.Errorf("%g ± %g K: the lines route's flag is %+v, want its note", c.t, c.u, res.Flags[0])
		}
		if got := len(cautions) == 1 && strings.Contains(cautions[0].Message, "10000 ± 2500 K"); got != c.want || (!c.want && len(cautions) > 0) {
			t.Errorf("%g ± %g K: cautions %+v, want one for the reported value: %v", c.t, c.u, cautions, c.want)
		}
	}
}

// TestWholeSetupAgain checks that a second setup of the whole fitter (as
// a fit restarting past the end of the tables' density range does) builds
// the same fitted pixels as the first: before the fix they were appended,
// so the restarted fit counted every pixel twice and its σ shrank by √2.
func TestWholeSetupAgain(t *testing.T) {
	p := NewPipeline(8192)
	x := linspace(474, 498, 1024)
	y, _, err := SynthesizeStark(SynthConfig{WavelengthNM: x, Uppers: []int{4}, ExcitationTemperatureK: 8000,
		ElectronDensityM3: 2.5e22, ElectronTemperatureK: 10000, GasTemperatureK: 2000, InstrumentFWHMNM: 0.06,
		HalphaArea: 5e7, BaselinePerNM: 200})
	if err != nil {
		t.Fatal(err)
	}
	opt := Options{Model: ModelWhole, Conditions: diag.Measurement{InstrumentGaussFWHMNM: 0.06, GasTemperatureK: 2000, ElectronTemperatureK: 8000}}
	if _, err := p.Analyze(&Spectrum{Name: "again", WavelengthNM: x, Counts: y}, opt); err != nil {
		t.Fatal(err)
	}
	f := p.wfit
	in := p.lastWhole
	f.begin(in, opt)
	if err := f.setup(in, 2.5e22); err != nil {
		t.Fatal(err)
	}
	n1, m1 := len(f.x), len(f.masked)
	_, _, chi1, err := f.levmar()
	if err != nil {
		t.Fatal(err)
	}
	if err := f.setup(in, 2.5e22); err != nil {
		t.Fatal(err)
	}
	if len(f.x) != n1 || len(f.a) != n1 || len(f.y) != n1 || len(f.s) != n1 || len(f.masked) != m1 {
		t.Fatalf("second setup: %d pixels (%d masks), the first had %d (%d)", len(f.x), len(f.masked), n1, m1)
	}
	_, _, chi2, err := f.levmar()
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(chi2/chi1-1) > 1e-6 {
		t.Errorf("χ² after the second setup %.6g, after the first %.6g", chi2, chi1)
	}
}
