package diag

import (
	"strings"
	"testing"
)

// TestMcWhirter covers physics.md check 28 and the §3.1 values. The
// constant 1.6e12 is sourced via Cristoforetti et al. 2010 (physics.md §10
// item 3); the expected values are physics.md's [C] numbers from it.
func TestMcWhirter(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		tempK, gapEV float64
		wantCM3, tol float64
		src          string
	}{
		{1e4, 10.199, 1.6975e17, 1e-3, "check 28 (regression only)"},
		{5000, 10.199, 1.20e17, 3e-3, "§3.1 text, 3 digits"},
		{1e4, 1.889, 1.08e15, 3e-3, "§3.1 text, n = 2→3 gap, 3 digits"},
	} {
		if got := McWhirterMinDensityM3(tc.tempK, tc.gapEV) * 1e-6; broadRel(got, tc.wantCM3) > tc.tol {
			t.Errorf("McWhirterMinDensityM3(%g, %g) = %.5g cm⁻³, want %.5g (%s)", tc.tempK, tc.gapEV, got, tc.wantCM3, tc.src)
		}
	}
	// The 1s–2 gap from the level energies: 10.199 eV (physics.md §3.1);
	// E(n=2) = 82 259.158 cm⁻¹ × hc = 10.19881 eV [S: NIST level, C].
	if got := HydrogenLargestGapEV(Hydrogen); broadRel(got, 10.19881) > 2e-6 {
		t.Errorf("HydrogenLargestGapEV = %.6f eV, want 10.19881", got)
	}
	if got := McWhirterMinDensityM3(1e4, HydrogenLargestGapEV(Hydrogen)); broadRel(got, 1.70e23) > 3e-3 {
		t.Errorf("McWhirter bound for H at 1e4 K = %.4g m⁻³, want 1.70e23 (§3.1)", got)
	}
}

// TestGriemNRLCheck is the NRL Plasma Formulary check of Griem's
// partial-LTE criterion (physics.md §10 item 1: NRL Plasma Formulary 2019,
// eq. (20)): n = 4, kT = 2 eV → 2.05e13 cm⁻³ (3 digits, tolerance 3e-3).
func TestGriemNRLCheck(t *testing.T) {
	t.Parallel()
	tempK := 2 / BoltzmannEVPerK
	if got := GriemPLTEMinDensityM3(4, tempK) * 1e-6; broadRel(got, 2.05e13) > 3e-3 {
		t.Errorf("Griem bound n = 4, kT = 2 eV = %.4g cm⁻³, want 2.05e13 (NRL Plasma Formulary)", got)
	}
}

// TestGriemPLTE covers the §3.2 values (physics.md [C] from the sourced
// constants, §10 item 1; the values are rounded to 3 digits, so the
// tolerance is half a unit of the last digit, ≤ 5e-3; 9.5e12 has 2
// digits, 6e-3).
func TestGriemPLTE(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		n            int
		tempK        float64
		wantCM3, tol float64
	}{
		{2, 1e4, 4.87e15, 4e-3},
		{3, 1e4, 1.55e14, 4e-3},
		{4, 1e4, 1.34e13, 4e-3},
		{5, 1e4, 2.02e12, 4e-3},
		{6, 1e4, 4.28e11, 4e-3},
		{3, 5000, 1.10e14, 5e-3},
		{4, 5000, 9.5e12, 6e-3},
	} {
		if got := GriemPLTEMinDensityM3(tc.n, tc.tempK) * 1e-6; broadRel(got, tc.wantCM3) > tc.tol {
			t.Errorf("GriemPLTEMinDensityM3(%d, %g) = %.4g cm⁻³, want %.3g (§3.2)", tc.n, tc.tempK, got, tc.wantCM3)
		}
	}
}

// TestAssessLTE checks the §3.4 messages for the typical cases.
func TestAssessLTE(t *testing.T) {
	t.Parallel()
	// n_e = 1e20 m⁻³ at T_exc = 1e4 K fails McWhirter (1.7e23 m⁻³) and
	// Griem's criterion for n = 3 (1.55e20 m⁻³), but passes it for n = 4
	// (1.34e19 m⁻³) and above.
	a := AssessLTE(LTECheck{ExcitationTempK: 1e4, ElectronDensityM3: 1e20,
		DensityFromSameSpectrum: true, Levels: []int{5, 3, 4, 6}})
	if !a.Checked || a.CompleteLTE {
		t.Fatalf("assessment = %+v, want checked and not complete LTE", a)
	}
	if len(a.FailedLevels) != 1 || a.FailedLevels[0] != 3 {
		t.Errorf("FailedLevels = %v, want [3]", a.FailedLevels)
	}
	if len(a.Warnings) != 3 {
		t.Fatalf("warnings = %q, want 3", a.Warnings)
	}
	for i, want := range []string{
		"Complete LTE is not satisfied",
		"Level n = 3 may be depopulated or overpopulated relative to Saha–Boltzmann",
		"derived from the Stark width in this same spectrum",
	} {
		if !strings.Contains(a.Warnings[i], want) {
			t.Errorf("warning %d = %q, want it to contain %q", i, a.Warnings[i], want)
		}
	}
	if !strings.Contains(a.Warnings[0], "excitation temperature") || strings.Contains(a.Warnings[0], "electron temperature") {
		t.Errorf("McWhirter warning wording: %q", a.Warnings[0])
	}
	// Two failing levels use the plural.
	b := AssessLTE(LTECheck{ExcitationTempK: 1e4, ElectronDensityM3: 1e19, Levels: []int{3, 4, 5}})
	if len(b.FailedLevels) != 2 || !strings.Contains(b.Warnings[1], "Levels n = 3, 4 may be") {
		t.Errorf("FailedLevels = %v, warnings = %q", b.FailedLevels, b.Warnings)
	}
	// Dense plasma: everything passes, no warnings.
	c := AssessLTE(LTECheck{ExcitationTempK: 1e4, ElectronDensityM3: 1e24, Levels: []int{3, 4}})
	if !c.CompleteLTE || len(c.Warnings) != 0 {
		t.Errorf("dense plasma: %+v", c)
	}
	// Unknown n_e: no check, one warning.
	d := AssessLTE(LTECheck{ExcitationTempK: 8000, Levels: []int{3, 4}})
	if d.Checked || len(d.Warnings) != 1 || !strings.Contains(d.Warnings[0], "could not be checked") {
		t.Errorf("unknown n_e: %+v", d)
	}
}
