package diag

import (
	"fmt"
	"sort"
	"strings"
)

// Perturber is a neutral collision partner of the emitting hydrogen atom,
// for van der Waals broadening (VanDerWaalsFWHMNM).
//
// The zero Perturber (Name "none", PolarizabilityCM3 0) means "no van der
// Waals broadening": every width computed with it is 0.
type Perturber struct {
	// Name is the short name used for lookup: "Ar", "He", "N2", "air" ….
	Name string
	// PolarizabilityCM3 is the static mean dipole polarizability ᾱ of the
	// ground state in cgs volume units, cm³ (values are ~1e-24 cm³ = 1 Å³).
	// Multiply by 4πε₀·1e-6 for SI (C m² V⁻¹).
	PolarizabilityCM3 float64
	// MassAMU is the atomic or molecular mass in u (standard atomic
	// weights), used for the emitter–perturber reduced mass.
	MassAMU float64
	// Source says where PolarizabilityCM3 comes from.
	Source string
	// Verified is true when the polarizability was seen in a published
	// table (possibly a reproduction of it); false for values from
	// memory or derived here.
	Verified bool
	// Status is StatusSourced, StatusCrossChecked or StatusOpen
	// (physics.md §10 items 4–5).
	Status string
}

// NoPerturber is the zero perturber: no van der Waals width.
var NoPerturber = Perturber{Name: "none", Source: "no neutral perturber: van der Waals width is zero", Verified: true, Status: StatusSourced}

// crcReproduction names the secondary source of most polarizabilities.
const crcReproduction = "CRC Handbook of Chemistry and Physics, 100th ed., table " +
	"\"Atomic and molecular polarizabilities\", as reproduced on a public web page " +
	"(not checked against the printed Handbook)"

// perturberTable holds the perturbers known to LookupPerturber. The
// masses are IUPAC standard atomic weights (conventional values), from
// memory, unverified; they enter only through (T/μ)^(3/10), where an error
// of 0.01 u is invisible.
//
// Cross-check for the noble gases: Dalgarno & Kingston (1960), Proc. R. Soc.
// Lond. A 259, 424 (abstract) give He 1.384, Ne 2.663, Ar 11.080, Kr
// 16.734, Xe 27.292 a₀³, i.e. 0.2051, 0.3946, 1.6419, 2.4798 and 4.0443
// ×10⁻²⁴ cm³ with a₀³ = 0.148185×10⁻²⁴ cm³; the table values below agree
// with these to ≤ 0.2 %.
var perturberTable = []Perturber{
	{
		Name: "Ar", PolarizabilityCM3: 1.6411e-24, MassAMU: 39.948,
		Source:   "CRC Handbook (\"Atomic and molecular polarizabilities\"); " + crcReproduction + " gives the same 1.6411",
		Verified: true, Status: StatusSourced,
	},
	{
		Name: "He", PolarizabilityCM3: 0.2050522e-24, MassAMU: 4.002602,
		Source:   crcReproduction + "; agrees with Dalgarno & Kingston 1960 (1.384 a₀³ = 0.2051e-24 cm³)",
		Verified: true, Status: StatusSourced,
	},
	{
		Name: "Ne", PolarizabilityCM3: 0.39432e-24, MassAMU: 20.1797,
		Source:   crcReproduction + "; agrees with Dalgarno & Kingston 1960 (2.663 a₀³ = 0.3946e-24 cm³)",
		Verified: true, Status: StatusSourced,
	},
	{
		Name: "Kr", PolarizabilityCM3: 2.4844e-24, MassAMU: 83.798,
		Source:   crcReproduction + "; Dalgarno & Kingston 1960 give 16.734 a₀³ = 2.4798e-24 cm³ (0.2 % lower)",
		Verified: true, Status: StatusSourced,
	},
	{
		Name: "Xe", PolarizabilityCM3: 4.044e-24, MassAMU: 131.293,
		Source:   crcReproduction + "; agrees with Dalgarno & Kingston 1960 (27.292 a₀³ = 4.0443e-24 cm³)",
		Verified: true, Status: StatusSourced,
	},
	{
		Name: "N2", PolarizabilityCM3: 1.7403e-24, MassAMU: 28.0134,
		Source:   crcReproduction,
		Verified: true, Status: StatusSourced,
	},
	{
		// Sourced (physics.md §10 item 5, settled 2026-12-02): Schmidt,
		// Moldover & May 2009, "Reference measurements of hydrogen's
		// dielectric permittivity", Mol. Phys. 107, 1577–1585 (NIST),
		// abstract: α_ε,H₂ = (8.9568 ± 0.0008)×10⁻⁴¹ F m² at 273 K,
		// agreeing with Rychlewski's ab initio value (8.9566 ± 0.0026)×
		// 10⁻⁴¹ F m². As a polarizability volume α/(4πε₀) that is
		// 0.80500e-24 cm³ (computed), 0.06 % above the CRC table's 0.8045;
		// it rules out the 0.842 of a web reproduction of the CRC table
		// (5 % off, a misreading). Its temperature dependence (1.1e-5 K⁻¹,
		// same abstract) moves it < 1 % up to 1000 K.
		Name: "H2", PolarizabilityCM3: 0.80500e-24, MassAMU: 2.01588,
		Source: "Schmidt, Moldover & May 2009, Mol. Phys. 107, 1577 (NIST): α = (8.9568 ± 0.0008)e-41 F m² at 273 K " +
			"(measured; ab initio 8.9566e-41), computed as α/(4πε₀) = 0.80500e-24 cm³; CRC table 0.8045e-24 (0.06 % lower)",
		Verified: true, Status: StatusSourced,
	},
	{
		// Derived here. (1) Mole-fraction average of N₂ 1.7403, O₂ 1.5689
		// (same reproduction), Ar 1.6411 and CO₂ ≈ 2.91 (from memory) with
		// the dry-air composition 0.78084/0.20946/0.00934/0.0004 (from
		// memory): 1.7040e-24 cm³. (2) Static limit (s → 0) of the IAU
		// standard-air refractivity (Morton 2000; Birch & Downs 1994),
		// n − 1 = 2.7263e-4 at 15 °C and 101 325 Pa, with ᾱ = (n − 1)/(2πN):
		// 1.7036e-24 cm³. The two agree to 0.03 %.
		Name: "air", PolarizabilityCM3: 1.7040e-24, MassAMU: 28.9647,
		Source:   "derived: mole-fraction average of N2, O2, Ar, CO2 polarizabilities (composition from memory), checked against the static limit of the IAU standard-air refractivity (1.7036e-24, 0.03 %); mean molar mass 28.9647 from memory",
		Verified: false, Status: StatusCrossChecked,
	},
}

// Perturbers returns a copy of the perturber table, sorted by name, without
// the "none" entry.
func Perturbers() []Perturber {
	out := append([]Perturber(nil), perturberTable...)
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out
}

// LookupPerturber returns the perturber with the given name, compared
// case-insensitively after trimming spaces ("ar", "AR" and "Ar" all give
// argon; "n2" gives N₂). The names "none" and "" give NoPerturber, meaning
// no van der Waals width. Any other name returns an error that lists the
// known names.
func LookupPerturber(name string) (Perturber, error) {
	key := strings.TrimSpace(name)
	if key == "" || strings.EqualFold(key, NoPerturber.Name) {
		return NoPerturber, nil
	}
	for _, p := range perturberTable {
		if strings.EqualFold(key, p.Name) {
			return p, nil
		}
	}
	names := make([]string, 0, len(perturberTable)+1)
	for _, p := range Perturbers() {
		names = append(names, p.Name)
	}
	names = append(names, NoPerturber.Name)
	return Perturber{}, fmt.Errorf("diag: unknown perturber %q (known: %s)", name, strings.Join(names, ", "))
}
