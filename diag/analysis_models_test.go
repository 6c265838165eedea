package diag

import (
	"encoding/json"
	"glowlog/diag/sh99"
	"math"
	"strings"
	"testing"
)

// modelSet is a measurement set whose Hβ, Hγ and Hδ widths are the SH99
// Stark widths at n_e, T_e = 1e4 K with a Gaussian instrument of FWHM
// instG (no gas temperature: Doppler left out), given as Voigt FWHMs.
func modelSet(t *testing.T, ne, instG float64) Measurement {
	t.Helper()
	m := Measurement{Unit: PhotonUnits, ResponseCorrected: true, InstrumentGaussFWHMNM: instG}
	for _, n := range []int{4, 5, 6} {
		r, err := LookupStarkRelation(map[int]string{4: "sh99-hbeta-fwhm", 5: "sh99-hgamma-fwhm", 6: "sh99-hdelta-fwhm"}[n])
		if err != nil {
			t.Fatal(err)
		}
		w, err := r.WidthAt(ne, 1e4)
		if err != nil {
			t.Fatal(err)
		}
		tr, _ := Balmer(n, Hydrogen)
		b, err := NewBudget(BudgetInput{Transition: tr, InstrumentGaussNM: instG, GasTempK: 300})
		if err != nil {
			t.Fatal(err)
		}
		v := VoigtFWHM(instG, w+b.LorentzOtherNM)
		m.Lines = append(m.Lines, MeasuredLine{Upper: n, Intensity: 1e4 * math.Exp(-float64(n)), IntensityUnc: 100 * math.Exp(-float64(n)),
			FWHMNM: v, FWHMUncNM: 0.01 * v})
	}
	return m
}

// TestDensitiesEveryModel (issue 8 item 3): Hβ gives one density per model
// (GGC 2003 and SH99), Hγ and Hδ give SH99 densities that recover the
// n_e their widths were made at; the best estimate is the inverse-variance
// mean of the lines and lies within the lines' spread; the electron
// temperature is reported (default 1e4 K) and changes the SH99 values.
func TestDensitiesEveryModel(t *testing.T) {
	const ne = 3e21
	res, err := Analyze(modelSet(t, ne, 0.02))
	if err != nil {
		t.Fatal(err)
	}
	if res.ElectronTemperatureK != 1e4 || res.ElectronTemperatureSource != "default" {
		t.Errorf("electron temperature %v (%s), want 1e4 K default", res.ElectronTemperatureK, res.ElectronTemperatureSource)
	}
	byUpper := map[int]LineResult{}
	for _, lr := range res.Lines {
		byUpper[lr.UpperLevel] = lr
	}
	hb := byUpper[4]
	if len(hb.Densities) != 2 {
		t.Fatalf("Hβ densities %+v, want GGC and SH99", hb.Densities)
	}
	sh, ok1 := hb.DensityBy("sh99-hbeta-fwhm")
	gg, ok2 := hb.DensityBy("ggc2003-hbeta-fwhm")
	if !ok1 || !ok2 {
		t.Fatalf("Hβ densities %+v", hb.Densities)
	}
	// SH99 recovers the density its width was made from (round trip
	// through the Olivero–Longbothum formula, whose inversion is exact).
	if math.Abs(sh.ElectronDensityM3/ne-1) > 1e-6 {
		t.Errorf("Hβ SH99 n_e = %g, want %g", sh.ElectronDensityM3, ne)
	}
	// GGC vs SH99 for Hβ: 9–13 % in n_e (diag/sh99 TestAgainstGGC2003:
	// width ratio 1.06–1.09; physics.md §10 item 10 reads 3–4 % in width).
	if r := sh.ElectronDensityM3 / gg.ElectronDensityM3; r < 1.05 || r > 1.16 {
		t.Errorf("Hβ SH99/GGC n_e = %.3f, want 1.05–1.16", r)
	}
	// GGC is preferred inside its range (3e21 is inside 1e21–1e24).
	if hb.StarkRelation != "ggc2003-hbeta-fwhm" || *hb.ElectronDensityM3 != gg.ElectronDensityM3 || !hb.Densities[0].Preferred {
		t.Errorf("Hβ preferred %s %v", hb.StarkRelation, *hb.ElectronDensityM3)
	}
	for _, n := range []int{5, 6} {
		lr := byUpper[n]
		if lr.ElectronDensityM3 == nil || len(lr.Densities) != 1 || !strings.HasPrefix(lr.StarkRelation, "sh99-") {
			t.Fatalf("n=%d: densities %+v", n, lr.Densities)
		}
		if math.Abs(*lr.ElectronDensityM3/ne-1) > 1e-6 {
			t.Errorf("n=%d: n_e = %g, want %g", n, *lr.ElectronDensityM3, ne)
		}
	}
	// Best estimate: the inverse-variance mean of the lines' preferred values.
	var sw, swx float64
	for _, lr := range res.Lines {
		w := 1 / (*lr.ElectronDensityUncM3 * *lr.ElectronDensityUncM3)
		sw += w
		swx += w * *lr.ElectronDensityM3
	}
	if got := *res.ElectronDensityM3; math.Abs(got-swx/sw) > 1e-9*got || !strings.HasPrefix(res.ElectronDensitySource, "weighted mean of") {
		t.Errorf("best n_e %g (%s), want the weighted mean %g", got, res.ElectronDensitySource, swx/sw)
	}
	// Every relation used is listed with status and source.
	if len(res.Relations) != 4 {
		t.Errorf("relations used: %+v", res.Relations)
	}
	for _, r := range res.Relations {
		if r.Status == "" || r.Source == "" {
			t.Errorf("relation %s lacks status or source", r.ID)
		}
	}
	// A hotter electron temperature changes the SH99 densities.
	m := modelSet(t, ne, 0.02)
	m.ElectronTemperatureK = 2e4
	hot, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	if hot.ElectronTemperatureSource != "given" || hot.ElectronTemperatureK != 2e4 {
		t.Errorf("T_e %v %s", hot.ElectronTemperatureK, hot.ElectronTemperatureSource)
	}
	if d, _ := hot.Lines[1].DensityBy("sh99-hgamma-fwhm"); math.Abs(d.ElectronDensityM3/ne-1) < 1e-3 {
		t.Errorf("Hγ at T_e = 2e4 K: n_e %g unchanged from 1e4 K", d.ElectronDensityM3)
	}
}

// TestUncertaintySplit (issue 8 item 4): σ_stat, σ_sys and the total are
// reported for n_e and T_exc; total = stat ⊕ sys; an instrument-width σ
// and a gas-temperature σ raise σ_sys; a response σ gives T_exc a
// systematic part; without it a flag says the σ excludes calibration.
func TestUncertaintySplit(t *testing.T) {
	m := modelSet(t, 3e21, 0.02)
	base, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	for name, p := range map[string]*float64{"stat": base.ElectronDensityUncStatM3, "sys": base.ElectronDensityUncSysM3, "total": base.ElectronDensityUncM3} {
		if p == nil || !(*p > 0) {
			t.Fatalf("n_e σ %s = %v", name, p)
		}
	}
	if got, want := *base.ElectronDensityUncM3, math.Hypot(*base.ElectronDensityUncStatM3, *base.ElectronDensityUncSysM3); math.Abs(got-want) > 1e-12*want {
		t.Errorf("total σ %g, want stat ⊕ sys %g", got, want)
	}
	if !anyFlag(base.Flags, FlagTexNoCalibrationUnc) {
		t.Error("no flag saying that the T_exc σ excludes calibration")
	}
	if base.ExcitationTemperatureUncSysK == nil || *base.ExcitationTemperatureUncSysK != 0 {
		t.Errorf("T_exc σ_sys without a response σ = %v, want 0", base.ExcitationTemperatureUncSysK)
	}
	// Parts of the systematic σ: model spread and line shape at least.
	parts := map[string]bool{}
	for _, p := range base.ElectronDensityUncParts {
		parts[p.Name] = true
	}
	for _, want := range []string{"Stark model spread", "line shape (Voigt approximation of the Stark profile)", "SH99 table Doppler removal"} {
		if !parts[want] {
			t.Errorf("σ_sys parts %v lack %q", base.ElectronDensityUncParts, want)
		}
	}

	// Each σ input alone raises σ_sys (everything else equal).
	m.InstrumentFWHMUncNM = 0.01
	withInst, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	if !(*withInst.ElectronDensityUncSysM3 > *base.ElectronDensityUncSysM3) {
		t.Errorf("σ_sys with an instrument σ %g, without %g: want larger", *withInst.ElectronDensityUncSysM3, *base.ElectronDensityUncSysM3)
	}
	m.GasTemperatureK = 600
	noTUnc, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	m.GasTemperatureUncK = 200
	m.ResponseUncRel = 0.05
	more, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	if !(*more.ElectronDensityUncSysM3 > *noTUnc.ElectronDensityUncSysM3) {
		t.Errorf("σ_sys with a gas-temperature σ %g, without %g: want larger", *more.ElectronDensityUncSysM3, *noTUnc.ElectronDensityUncSysM3)
	}
	parts = map[string]bool{}
	for _, p := range more.Lines[0].DensityUncParts {
		parts[p.Name] = true
	}
	if !parts["instrument width"] || !parts["gas temperature"] {
		t.Errorf("Hβ σ_sys parts %v lack instrument width or gas temperature", more.Lines[0].DensityUncParts)
	}
	if anyFlag(more.Flags, FlagTexNoCalibrationUnc) {
		t.Error("calibration flag despite response_unc_rel")
	}
	st, sy, tot := more.ExcitationTemperatureUncStatK, more.ExcitationTemperatureUncSysK, more.ExcitationTemperatureUncK
	if st == nil || sy == nil || tot == nil || !(*sy > 0) || math.Abs(*tot-math.Hypot(*st, *sy)) > 1e-9**tot {
		t.Fatalf("T_exc σ stat %v sys %v total %v", st, sy, tot)
	}
	// A 5 % tilt between Hβ and Hδ: ΔT/T ≈ T k_B ln(1.05)/ΔE (ΔE = E₄ − E₆
	// ≈ 0.371 eV), i.e. the same slope change the refit finds, 10 %.
	tr4, _ := Balmer(4, Hydrogen)
	tr6, _ := Balmer(6, Hydrogen)
	T := *more.ExcitationTemperatureK
	want := T * T * BoltzmannEVPerK * math.Log(1.05) / (tr6.UpperEnergyEV - tr4.UpperEnergyEV)
	if math.Abs(*sy/want-1) > 0.1 {
		t.Errorf("T_exc σ_sys %g K, want ≈ %g K (first-order slope change)", *sy, want)
	}
	// The JSON carries the contract's fields.
	b, _ := json.Marshal(more)
	for _, f := range []string{`"electron_density_unc_stat_m3"`, `"electron_density_unc_sys_m3"`, `"electron_density_unc_m3"`,
		`"excitation_temperature_unc_stat_K"`, `"excitation_temperature_unc_sys_K"`, `"excitation_temperature_unc_K"`,
		`"densities"`, `"electron_temperature_K"`, `"status"`, `"source"`} {
		if !strings.Contains(string(b), f) {
			t.Errorf("result JSON lacks %s", f)
		}
	}
	if strings.Contains(strings.ToLower(string(b)), "from memory") && !strings.Contains(string(b), "Ali–Griem") {
		t.Errorf("result says \"from memory\" outside the open constants")
	}
}

// TestShapeLowerLimit: a Stark width far below the Gaussian width gives a
// lower limit, flagged, and kept out of the weighted mean.
func TestShapeLowerLimit(t *testing.T) {
	m := modelSet(t, 3e21, 3)
	res, err := Analyze(m)
	if err != nil {
		t.Fatal(err)
	}
	if !res.Lines[0].DensityLowerLimit || !anyFlag(res.Flags, FlagShapeBound) {
		t.Errorf("Hβ with a 3 nm instrument: lower limit %v, flags %v", res.Lines[0].DensityLowerLimit, res.Flags)
	}
}

// TestSH99AgainstPhysicsNotes checks the SH99 relations at 1e4 K against
// the widths physics.md reads from the same tables (§10 items 10–11,
// §4.5), and explains the Hβ gap the diag/sh99 tests found: at 1e21 m⁻³
// the notes' 0.200 nm is the tables' own width including their 1e4 K
// Doppler part (0.2010 nm here, tolerance 1 %); at the tabulated nodes
// 1e22 and 1e23 m⁻³ (no interpolation in n_e) the notes are 3.7 % wider at
// both, a constant factor, while a half level relative to the central dip
// would make them 15 % wider: most likely the notes interpolated the
// sparse detuning grid linearly (convex wings → too wide). Tolerances: 5 %
// for Hβ (that gap), 3 % for Hα FWHA and Hγ.
func TestSH99AgainstPhysicsNotes(t *testing.T) {
	hb, _ := sh99.Balmer(4)
	if w, _ := hb.TableWidthNM(sh99.FWHM, 1e21, 1e4); math.Abs(w/0.200-1) > 0.01 {
		t.Errorf("Hβ table FWHM at 1e21 = %.4f nm, want 0.200 (physics.md §10 item 10) within 1 %%", w)
	}
	for _, c := range []struct {
		id        string
		ne, want  float64
		tol       float64
		reference string
	}{
		{"sh99-hbeta-fwhm", 1e22, 0.971, 0.05, "physics.md §10 item 10"},
		{"sh99-hbeta-fwhm", 1e23, 4.66, 0.05, "physics.md §10 item 10"},
		{"sh99-halpha-fwha", 1e22, 0.204, 0.03, "physics.md §10 item 11"},
		{"sh99-hgamma-fwhm", 1e22, 1.19, 0.03, "physics.md §4.5"},
	} {
		r, _ := LookupStarkRelation(c.id)
		w, err := r.WidthAt(c.ne, 1e4)
		if err != nil || math.Abs(w/c.want-1) > c.tol {
			t.Errorf("%s at %g m⁻³, 1e4 K = %.4f nm (%v), want %.3g within %.0f %% (%s)", c.id, c.ne, w, err, c.want, 100*c.tol, c.reference)
		}
		// Round trip through the relation.
		if ne, err := r.DensityAt(w, 1e4); err != nil || math.Abs(ne/c.ne-1) > 1e-8 {
			t.Errorf("%s: DensityAt(WidthAt(%g)) = %g (%v)", c.id, c.ne, ne, err)
		}
	}
	// GGC vs SH99 in n_e at the same width, 1e4 K, 1e21–1e23 m⁻³: Hβ
	// 1.09–1.13 and Hα 1.19–1.24 (widths 1.06–1.09 and 1.12–1.16, diag/sh99
	// TestAgainstGGC2003; physics.md §10 items 10–11 read 3–4 % and 11–16 %
	// in width). Asserted with the bounds of the width ratios to the power
	// 1/0.68: Hβ 1.0–1.2, Hα 1.1–1.35.
	for _, c := range []struct {
		ggc, sh string
		lo, hi  float64
	}{{"ggc2003-hbeta-fwhm", "sh99-hbeta-fwhm", 1.0, 1.2}, {"ggc2003-halpha-fwha", "sh99-halpha-fwha", 1.1, 1.35}} {
		g, _ := LookupStarkRelation(c.ggc)
		s, _ := LookupStarkRelation(c.sh)
		for _, ne := range []float64{1e22, 3e22, 1e23} {
			w, _ := s.WidthAt(ne, 1e4)
			if r := ne / g.DensityFromWidth(w); r < c.lo || r > c.hi {
				t.Errorf("%s vs %s at %g m⁻³: n_e(SH99)/n_e(GGC) = %.3f, want %.2f–%.2f", c.sh, c.ggc, ne, r, c.lo, c.hi)
			}
		}
	}
}
