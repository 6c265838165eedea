package diag

import (
	"math"
	"math/big"
	"testing"
)

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

// TestReducedRydberg is physics.md check 1: R_H = R∞/(1 + m_e/m_p) from the
// CODATA 2018 constants (computed value, rel 1e-10).
func TestReducedRydberg(t *testing.T) {
	if got, want := ReducedRydbergPerM(Hydrogen), 10967758.3403; relErr(got, want) > 1e-10 {
		t.Errorf("R_H = %.6f, want %.4f", got, want)
	}
}

// TestBohrWavelengths covers physics.md checks 2, 3 and 6: the
// nonrelativistic reduced-mass Hα wavelength, its IAU/Morton air value, and
// the Balmer limit 4/R_H (values computed from CODATA 2018 in physics.md).
func TestBohrWavelengths(t *testing.T) {
	ha, err := Balmer(3, Hydrogen)
	if err != nil {
		t.Fatal(err)
	}
	if d := math.Abs(ha.BohrWavelengthVacNM - 656.46961); d > 1e-5 {
		t.Errorf("Bohr λ_vac(Hα) = %.6f nm, want 656.46961 (check 2)", ha.BohrWavelengthVacNM)
	}
	if got := VacToAirNM(656.46961); math.Abs(got-656.28830) > 2e-5 {
		t.Errorf("VacToAir(656.46961) = %.6f, want 656.28830 (check 3)", got)
	}
	limit := 4 / ReducedRydbergPerM(Hydrogen) * 1e9
	if math.Abs(limit-364.70534) > 1e-5 || math.Abs(VacToAirNM(limit)-364.60144) > 1e-5 {
		t.Errorf("Balmer limit %.6f vac / %.6f air, want 364.70534 / 364.60144 (check 6)", limit, VacToAirNM(limit))
	}
}

// TestBalmerAgainstNIST compares computed Balmer lines with NIST ASD
// observed air wavelengths, level centroids and Wiese & Fuhr (2009) A
// values (physics.md §1.2 table and checks 4, 5, 11, 14).
func TestBalmerAgainstNIST(t *testing.T) {
	// hc = 1.239841984e-4 eV cm converts the NIST level centroids.
	const hcEVcm = 1.239841984e-4
	cases := []struct {
		n          int
		airNM      float64 // NIST ASD observed air wavelength
		airTol     float64
		levelPerCM float64 // NIST ASD level centroid, cm⁻¹ (0 = not checked)
		a          float64 // NIST ASD / Wiese & Fuhr 2009, s⁻¹ (0 = not checked)
	}{
		{3, 656.279, 0.001, 97492.304, 4.4101e7}, // check 4, 11, 14
		{4, 486.135, 0.004, 102823.904, 8.4193e6},
		{5, 434.0472, 0.003, 105291.657, 2.5304e6},
		{6, 410.1734, 0.003, 106632.168, 9.7320e5},
		{7, 397.0075, 0.003, 0, 0},
		{8, 388.9064, 0.003, 0, 0},
		{9, 383.5397, 0.003, 0, 0},
		{10, 379.7909, 0.003, 0, 0},
		{11, 377.0633, 0.003, 0, 0},
		{12, 375.0151, 0.003, 0, 0},
	}
	for _, c := range cases {
		tr, err := Balmer(c.n, Hydrogen)
		if err != nil {
			t.Fatal(err)
		}
		if d := math.Abs(tr.WavelengthAirNM - c.airNM); d > c.airTol {
			t.Errorf("n=%d: λ_air = %.5f nm, NIST %.4f (|Δ| %.5f > %.3f)", c.n, tr.WavelengthAirNM, c.airNM, d, c.airTol)
		}
		if c.levelPerCM != 0 {
			got := LevelCentroidPerM(c.n, Hydrogen) / 100
			if math.Abs(got-c.levelPerCM) > 0.006 {
				t.Errorf("n=%d: level %.4f cm⁻¹, NIST %.3f", c.n, got, c.levelPerCM)
			}
			if math.Abs(tr.UpperEnergyEV-c.levelPerCM*hcEVcm) > 1e-5 {
				t.Errorf("n=%d: E_k = %.6f eV, NIST %.6f eV", c.n, tr.UpperEnergyEV, c.levelPerCM*hcEVcm)
			}
		}
		if c.a != 0 && relErr(tr.EinsteinA, c.a) > 3e-5 {
			t.Errorf("n=%d: A = %.6g, NIST %.5g (rel %.2g)", c.n, tr.EinsteinA, c.a, relErr(tr.EinsteinA, c.a))
		}
		if tr.GUpper != 2*c.n*c.n || tr.GLower != 8 {
			t.Errorf("n=%d: g = %d/%d", c.n, tr.GUpper, tr.GLower)
		}
	}
}

// TestLineStrengthHalpha is check 10: S(3→2) with reduced mass 110.8417 a.u.
// (NIST ASD 110.84), infinite-mass 110.7211 (computed, physics.md §1.4).
func TestLineStrengthHalpha(t *testing.T) {
	inf, _ := infiniteMassLineStrength(3, 2).Float64()
	if relErr(inf, 110.7211) > 1e-6 {
		t.Errorf("infinite-mass S = %.6f, want 110.7211", inf)
	}
	ha, _ := Balmer(3, Hydrogen)
	if relErr(ha.LineStrengthAU, 110.84) > 1e-4 || relErr(ha.LineStrengthAU, 110.8417) > 1e-6 {
		t.Errorf("S(Hα) = %.5f, want 110.8417 (NIST 110.84)", ha.LineStrengthAU)
	}
}

// TestOscillatorStrengths is check 12 (NIST f(2→3) = 0.64108) and the
// Menzel & Pekeris (1935) infinite-mass values quoted in physics.md §1.4.
func TestOscillatorStrengths(t *testing.T) {
	ha, _ := Balmer(3, Hydrogen)
	if relErr(ha.OscillatorF, 0.64108) > 5e-5 {
		t.Errorf("f(2→3) = %.6f, NIST 0.64108", ha.OscillatorF)
	}
	// Infinite mass: divide out the reduced-mass factor (1 + m_e/m_p).
	for _, c := range []struct {
		n int
		f float64
	}{{3, 0.640747}, {4, 0.119321}, {5, 0.044670}, {6, 0.022093}} {
		tr, _ := Balmer(c.n, Hydrogen)
		got := tr.OscillatorF / (1 + ElectronProtonMassRatio)
		if relErr(got, c.f) > 3e-5 {
			t.Errorf("infinite-mass f(2→%d) = %.6f, Menzel–Pekeris %.6f", c.n, got, c.f)
		}
	}
}

// TestKramersGaunt is check 13: Kramers' semiclassical f(2→3) = 0.846841 and
// the exact Gaunt factor g = f/f_K = 0.75663 (computed, physics.md §1.4).
func TestKramersGaunt(t *testing.T) {
	kramers := func(n, np float64) float64 {
		return 32 / (3 * math.Sqrt(3) * math.Pi) / (math.Pow(n, 5) * math.Pow(np, 3)) / math.Pow(1/(n*n)-1/(np*np), 3)
	}
	fk := kramers(2, 3)
	ha, _ := Balmer(3, Hydrogen)
	g := ha.OscillatorF / (1 + ElectronProtonMassRatio) / fk
	if relErr(fk, 0.846841) > 1e-5 || relErr(g, 0.75663) > 1e-5 {
		t.Errorf("f_K = %.6f (want 0.846841), g = %.5f (want 0.75663)", fk, g)
	}
}

// TestLymanPaschenAgainstNIST: physics.md §1.2 quotes NIST A(2→1) =
// 4.6986e8 and A(4→3) = 8.9860e6 s⁻¹ (Wiese & Fuhr 2009).
func TestLymanPaschenAgainstNIST(t *testing.T) {
	for _, c := range []struct {
		u, l int
		a    float64
	}{{2, 1, 4.6986e8}, {4, 3, 8.9860e6}} {
		tr, _ := NewTransition(c.u, c.l, Hydrogen)
		if relErr(tr.EinsteinA, c.a) > 3e-5 {
			t.Errorf("A(%d→%d) = %.6g, NIST %.5g", c.u, c.l, tr.EinsteinA, c.a)
		}
	}
}

// TestRadialIntegralKnown checks the Gordon formula against the textbook
// closed form R(2p,1s)² = 2^15·3^-9·... : |R(2,1;1,0)| = 2^7·√6/3^5 a₀
// (Bethe & Salpeter 1957, table 13).
func TestRadialIntegralKnown(t *testing.T) {
	got := radialSquared(2, 1, 1)
	// (2^7 √6 / 3^5)² = 2^14·6/3^10
	want := new(big.Rat).SetFrac(big.NewInt(16384*6), big.NewInt(59049))
	if got.Cmp(want) != 0 {
		t.Errorf("R²(2p,1s) = %s, want %s", got.RatString(), want.RatString())
	}
}

// TestDeuteriumShift: the D–H isotope shift of Hα is about 0.179 nm
// (computed from the reduced masses; the observed Dα air wavelength is
// 656.1 nm). Here we check the reduced-mass scaling exactly.
func TestDeuteriumShift(t *testing.T) {
	h, _ := Balmer(3, Hydrogen)
	d, _ := Balmer(3, Deuterium)
	ratio := d.BohrWavelengthVacNM / h.BohrWavelengthVacNM
	want := (1 + ElectronDeuteronMassRatio) / (1 + ElectronProtonMassRatio)
	if relErr(ratio, want) > 1e-12 {
		t.Errorf("λ_D/λ_H = %.12f, want %.12f", ratio, want)
	}
	if shift := h.WavelengthVacNM - d.WavelengthVacNM; math.Abs(shift-0.1786) > 0.001 {
		t.Errorf("Hα–Dα shift %.4f nm, want ≈ 0.1786", shift)
	}
}

// TestIonizationEnergy compares with the NIST Handbook value 109 678.7717
// cm⁻¹ = 13.598 434 eV (physics.md §1.1).
func TestIonizationEnergy(t *testing.T) {
	if got := IonizationEnergyEV(Hydrogen); math.Abs(got-13.598434) > 2e-6 {
		t.Errorf("ionization energy %.7f eV, NIST 13.598434", got)
	}
}

func TestNewTransitionErrors(t *testing.T) {
	for _, c := range [][2]int{{2, 2}, {1, 2}, {3, 0}, {MaxLevel + 1, 2}} {
		if _, err := NewTransition(c[0], c[1], Hydrogen); err == nil {
			t.Errorf("NewTransition(%d,%d) accepted", c[0], c[1])
		}
	}
}

// TestAirVacuum covers checks 7, 8 and 9 (formulas from Morton 2000,
// Ciddor 1996, Edlén 1966, Piskunov's inverse; values computed in
// physics.md, check 8 from the IDL Astronomy Library documentation).
func TestAirVacuum(t *testing.T) {
	if got := VacToAirNM(530) * 10; math.Abs(got-5298.525676) > 2e-6 {
		t.Errorf("Morton 5300 Å → %.6f", got)
	}
	if got := CiddorVacToAirNM(530) * 10; math.Abs(got-5298.525675) > 2e-6 {
		t.Errorf("Ciddor 5300 Å → %.6f", got)
	}
	if got := EdlenVacToAirNM(530) * 10; math.Abs(got-5298.525748) > 2e-6 {
		t.Errorf("Edlén 5300 Å → %.6f", got)
	}
	if got := CiddorAirToVacNM(605.6125, 2) * 10; math.Abs(got-6057.8019) > 1e-4 {
		t.Errorf("Ciddor Kr 6056.125 Å → %.4f, want 6057.8019", got)
	}
	vac := AirToVacNM(656.279)
	if math.Abs(vac-656.460298) > 1e-6 {
		t.Errorf("AirToVac(656.279) = %.6f, want 656.460298", vac)
	}
	if back := VacToAirNM(vac); math.Abs(back-656.279) > 1e-9 {
		t.Errorf("round trip → %.9f", back)
	}
}
