package diag

// Physical constants, CODATA 2018 recommended values (Tiesinga et al.,
// Rev. Mod. Phys. 93, 025010 (2021)). Since the 2019 SI redefinition the
// Planck constant, the elementary charge, the Boltzmann constant and the
// speed of light are exact.
const (
	// SpeedOfLight is c in m s⁻¹ (exact).
	SpeedOfLight = 299792458.0
	// Planck is h in J s (exact).
	Planck = 6.62607015e-34
	// ElementaryCharge is e in C (exact).
	ElementaryCharge = 1.602176634e-19
	// Boltzmann is k_B in J K⁻¹ (exact).
	Boltzmann = 1.380649e-23
	// BoltzmannEVPerK is k_B/e in eV K⁻¹ (exact value truncated to double).
	BoltzmannEVPerK = Boltzmann / ElementaryCharge
	// HCEVM is hc/e in eV m (exact value truncated to double).
	HCEVM = Planck * SpeedOfLight / ElementaryCharge

	// RydbergPerM is the Rydberg constant R∞ in m⁻¹ (CODATA 2018,
	// 10 973 731.568 160(21) m⁻¹).
	RydbergPerM = 10973731.568160
	// FineStructure is the fine-structure constant α (CODATA 2018,
	// 7.297 352 5693(11)e-3).
	FineStructure = 7.2973525693e-3
	// ElectronMassKG is m_e in kg (CODATA 2018).
	ElectronMassKG = 9.1093837015e-31
	// ElectronProtonMassRatio is m_e/m_p (CODATA 2018, 5.446 170 214 87(33)e-4).
	ElectronProtonMassRatio = 5.44617021487e-4
	// ElectronDeuteronMassRatio is m_e/m_d (CODATA 2018: m_d/m_e =
	// 3670.482 967 88(13)).
	ElectronDeuteronMassRatio = 1 / 3670.48296788
	// BohrRadiusM is a₀ in m (CODATA 2018).
	BohrRadiusM = 5.29177210903e-11
	// EpsilonZero is the vacuum permittivity ε₀ in F m⁻¹ (CODATA 2018).
	EpsilonZero = 8.8541878128e-12
	// AtomicMassUnitKG is the unified atomic mass unit in kg (CODATA 2018).
	AtomicMassUnitKG = 1.66053906660e-27

	// ProtiumMassAMU is the atomic mass of ¹H in u (AME 2016 / CODATA 2018,
	// 1.007 825 032 23).
	ProtiumMassAMU = 1.00782503223
	// DeuteriumMassAMU is the atomic mass of ²H in u (AME 2016 / CODATA 2018,
	// 2.014 101 778 12).
	DeuteriumMassAMU = 2.01410177812

	// Lamb1sPerM is the Lamb shift of the hydrogen 1s level, about
	// 8.17 GHz, expressed as a wavenumber in m⁻¹ (0.2726 cm⁻¹). From
	// memory, unverified (physics.md §10 item 10); it changes only the
	// fifth decimal of level energies in eV.
	Lamb1sPerM = 8.17e9 / SpeedOfLight
)

// ConstantsSet names the constants above; it is recorded with every result.
const ConstantsSet = "CODATA 2018"
