package diag

import (
	"fmt"
	"math"
	"sync"
)

// Isotope selects the hydrogen isotope whose nuclear mass enters the
// reduced mass.
type Isotope int

const (
	// Hydrogen is protium, ¹H.
	Hydrogen Isotope = iota
	// Deuterium is ²H.
	Deuterium
)

// String returns "H" or "D".
func (iso Isotope) String() string {
	switch iso {
	case Hydrogen:
		return "H"
	case Deuterium:
		return "D"
	}
	return fmt.Sprintf("Isotope(%d)", int(iso))
}

// ParseIsotope accepts "H", "D" (and "", meaning H).
func ParseIsotope(s string) (Isotope, error) {
	switch s {
	case "", "H", "h", "H1", "1H":
		return Hydrogen, nil
	case "D", "d", "H2", "2H":
		return Deuterium, nil
	}
	return 0, fmt.Errorf("diag: unknown isotope %q (want \"H\" or \"D\")", s)
}

// electronNucleusMassRatio returns m_e/M_nucleus.
func electronNucleusMassRatio(iso Isotope) float64 {
	switch iso {
	case Hydrogen:
		return ElectronProtonMassRatio
	case Deuterium:
		return ElectronDeuteronMassRatio
	}
	panic("diag: unknown isotope")
}

// EmitterMassAMU returns the atomic mass of the emitting atom in u, for
// Doppler widths.
func EmitterMassAMU(iso Isotope) float64 {
	switch iso {
	case Hydrogen:
		return ProtiumMassAMU
	case Deuterium:
		return DeuteriumMassAMU
	}
	panic("diag: unknown isotope")
}

// ReducedRydbergPerM returns R_M = R∞/(1 + m_e/M) in m⁻¹.
func ReducedRydbergPerM(iso Isotope) float64 {
	return RydbergPerM / (1 + electronNucleusMassRatio(iso))
}

// MaxLevel is the highest principal quantum number glowlog computes line
// data for. Higher Balmer members are unresolved in any discharge a
// grating spectrometer can observe (Inglis–Teller merging), and the exact
// rational line strengths grow costly beyond it.
const MaxLevel = 40

// LevelCentroidPerM returns the fine-structure-averaged energy of level n,
// measured from the ground level 1s, as a wavenumber in m⁻¹.
//
// Each (l, j) substate gets the Dirac energy with the reduced mass μ,
//
//	E_nj = μc² [ (1 + (α/(n − k + √(k² − α²)))²)^(−1/2) − 1 ],  k = j + ½,
//
// and the centroid of level n is the average over all substates weighted
// by 2j+1 (total weight 2n²). The ground level is raised by its Lamb shift
// (Lamb1sPerM); the much smaller Lamb shifts of the excited levels are
// neglected. This reproduces the NIST level centroids of n = 3–6 to
// ≤ 0.006 cm⁻¹ (physics.md §1.2).
//
// References:
//
//	Bethe, H. A. & Salpeter, E. E. 1957, Quantum Mechanics of One- and
//	Two-Electron Atoms, §14 (Dirac energy levels).
func LevelCentroidPerM(n int, iso Isotope) float64 {
	if n < 1 || n > MaxLevel {
		panic(fmt.Sprintf("diag: level n=%d outside 1…%d", n, MaxLevel))
	}
	if n == 1 {
		return 0
	}
	return centroidDirac(n, iso) - (centroidDirac(1, iso) + Lamb1sPerM)
}

// centroidDirac returns the weighted Dirac energy of level n as a
// (negative) wavenumber in m⁻¹, relative to the rest energy μc².
func centroidDirac(n int, iso Isotope) float64 {
	// μc²/(hc) = (m_e c/h)/(1 + m_e/M) = (2R∞/α²)/(1 + m_e/M).
	scale := 2 * RydbergPerM / (FineStructure * FineStructure) / (1 + electronNucleusMassRatio(iso))
	var sum, weight float64
	for l := 0; l < n; l++ {
		for _, twoJ := range []int{2*l - 1, 2*l + 1} {
			if twoJ < 1 {
				continue
			}
			k := float64(twoJ+1) / 2
			d := float64(n) - k + math.Sqrt(k*k-FineStructure*FineStructure)
			u := (FineStructure / d) * (FineStructure / d)
			// (1+u)^(-1/2) − 1 without cancellation.
			sq := math.Sqrt(1 + u)
			e := -u / (sq * (1 + sq))
			w := float64(twoJ + 1)
			sum += w * e
			weight += w
		}
	}
	return scale * sum / weight
}

// Transition holds the computed data of one hydrogen line n_u → n_l,
// averaged over the fine structure (the "n-averaged" line of atomic
// tables, e.g. "2–3", not "2p–3d").
type Transition struct {
	Isotope Isotope
	// Upper and Lower are the principal quantum numbers n_u > n_l.
	Upper, Lower int
	// WavenumberVacPerM is the vacuum wavenumber between the
	// fine-structure centroids, m⁻¹.
	WavenumberVacPerM float64
	// WavelengthVacNM is 1/WavenumberVacPerM in nm.
	WavelengthVacNM float64
	// WavelengthAirNM is WavelengthVacNM in standard air (VacToAirNM); equal
	// to the vacuum value below 200 nm.
	WavelengthAirNM float64
	// BohrWavelengthVacNM is the nonrelativistic reduced-mass wavelength
	// 1/(R_M (1/n_l² − 1/n_u²)), nm. It is the wavelength consistent with
	// the nonrelativistic line strength and is used for A and f.
	BohrWavelengthVacNM float64
	// UpperEnergyEV and LowerEnergyEV are the level centroids above the
	// ground level, eV.
	UpperEnergyEV, LowerEnergyEV float64
	// GUpper and GLower are the statistical weights 2n².
	GUpper, GLower int
	// LineStrengthAU is S in atomic units (e a₀)², with the reduced-mass
	// factor (1 + m_e/M)² applied.
	LineStrengthAU float64
	// EinsteinA is the spontaneous emission rate A_ul in s⁻¹.
	EinsteinA float64
	// OscillatorF is the absorption oscillator strength f_lu.
	OscillatorF float64
}

// Name returns the spectroscopic name: Hα, Hβ … for Balmer lines of H
// (Dα … for D), H10, H11 … above n = 9, and "H 3→1" style otherwise.
func (t Transition) Name() string {
	sym := t.Isotope.String()
	if t.Lower == 2 {
		greek := []string{"α", "β", "γ", "δ", "ε", "ζ", "η"}
		if i := t.Upper - 3; i >= 0 && i < len(greek) {
			return sym + greek[i]
		}
		return fmt.Sprintf("%s%d", sym, t.Upper)
	}
	return fmt.Sprintf("%s %d→%d", sym, t.Upper, t.Lower)
}

// ErrLevel reports a transition that does not exist or is outside the
// computed range.
type ErrLevel struct {
	Upper, Lower int
}

func (e *ErrLevel) Error() string {
	return fmt.Sprintf("diag: no hydrogen transition %d→%d (need %d ≥ upper > lower ≥ 1)", e.Upper, e.Lower, MaxLevel)
}

// NewTransition computes the line data of n_u → n_l for the given isotope.
//
// Wavelengths come from the Dirac fine-structure centroids
// (LevelCentroidPerM) and the IAU air conversion (VacToAirNM). The line
// strength is the exact nonrelativistic value (Gordon formula, see
// radialSquared) multiplied by the reduced-mass factor (1 + m_e/M)²,
// and
//
//	A_ul = 16π³ e² a₀² S / (3 h ε₀ λ³ g_u)          [SI]
//	f_lu = ε₀ m_e c λ² (g_u/g_l) A_ul / (2π e²)
//
// with λ the nonrelativistic reduced-mass vacuum wavelength
// (BohrWavelengthVacNM), which is consistent with S. These reproduce the
// NIST (Wiese & Fuhr 2009) n-averaged values to ≤ 3e-5.
//
// References:
//
//	Wiese, W. L. & Fuhr, J. R. 2009, J. Phys. Chem. Ref. Data 38, 565.
//	Bethe, H. A. & Salpeter, E. E. 1957, §59 and §63.
func NewTransition(upper, lower int, iso Isotope) (Transition, error) {
	if lower < 1 || upper <= lower || upper > MaxLevel {
		return Transition{}, &ErrLevel{upper, lower}
	}
	if iso != Hydrogen && iso != Deuterium {
		return Transition{}, fmt.Errorf("diag: unknown isotope %d", int(iso))
	}
	key := transitionKey{upper, lower, iso}
	if v, ok := transitionCache.Load(key); ok {
		return v.(Transition), nil
	}
	t := computeTransition(upper, lower, iso)
	transitionCache.Store(key, t)
	return t, nil
}

type transitionKey struct {
	upper, lower int
	iso          Isotope
}

// transitionCache holds computed transitions: they depend only on their
// key, and the exact line strengths are costly.
var transitionCache sync.Map

func computeTransition(upper, lower int, iso Isotope) Transition {
	t := Transition{Isotope: iso, Upper: upper, Lower: lower,
		GUpper: 2 * upper * upper, GLower: 2 * lower * lower}
	eu, el := LevelCentroidPerM(upper, iso), LevelCentroidPerM(lower, iso)
	t.WavenumberVacPerM = eu - el
	t.WavelengthVacNM = 1e9 / t.WavenumberVacPerM
	t.WavelengthAirNM = VacToAirNM(t.WavelengthVacNM)
	t.UpperEnergyEV = eu * HCEVM
	t.LowerEnergyEV = el * HCEVM

	rm := ReducedRydbergPerM(iso)
	fu, fl := float64(upper), float64(lower)
	bohr := 1 / (rm * (1/(fl*fl) - 1/(fu*fu))) // m
	t.BohrWavelengthVacNM = bohr * 1e9
	mf := 1 + electronNucleusMassRatio(iso)
	t.LineStrengthAU = lineStrengthReducedUnits(upper, lower) * mf * mf

	ea := ElementaryCharge * BohrRadiusM
	t.EinsteinA = 16 * math.Pi * math.Pi * math.Pi * ea * ea * t.LineStrengthAU /
		(3 * Planck * EpsilonZero * bohr * bohr * bohr * float64(t.GUpper))
	t.OscillatorF = EpsilonZero * ElectronMassKG * SpeedOfLight * bohr * bohr *
		float64(t.GUpper) / float64(t.GLower) * t.EinsteinA /
		(2 * math.Pi * ElementaryCharge * ElementaryCharge)
	return t
}

// Balmer returns NewTransition(upper, 2, iso).
func Balmer(upper int, iso Isotope) (Transition, error) {
	return NewTransition(upper, 2, iso)
}

// TotalDecayRate returns Γ_n = Σ_{m<n} A(n→m), the total radiative decay
// rate of level n (statistically populated l-substates) in s⁻¹.
func TotalDecayRate(n int, iso Isotope) float64 {
	key := transitionKey{n, 0, iso}
	if v, ok := transitionCache.Load(key); ok {
		return v.(float64)
	}
	var g float64
	for m := 1; m < n; m++ {
		t, err := NewTransition(n, m, iso)
		if err != nil {
			panic(err)
		}
		g += t.EinsteinA
	}
	transitionCache.Store(key, g)
	return g
}

// IonizationEnergyEV returns the ionization energy of the ground level in
// eV: the n → ∞ limit of the Dirac centroid model, R_M hc (with the
// relativistic and 1s Lamb corrections of LevelCentroidPerM).
func IonizationEnergyEV(iso Isotope) float64 {
	return -(centroidDirac(1, iso) + Lamb1sPerM) * HCEVM
}
