package calib

import "slices"

// LampLine is a catalogue line of a low-pressure calibration lamp.
type LampLine struct {
	// WavelengthAirNM is the wavelength in standard air, nm.
	WavelengthAirNM float64 `json:"wavelength_air_nm"`
	// Element is the emitting species in spectroscopic notation, e.g.
	// "Hg I".
	Element string `json:"element"`
	// Source says where the wavelength comes from.
	Source string `json:"source"`
	// Verified is true when the value was checked against the source
	// named; false marks a value from memory, unverified.
	Verified bool `json:"verified"`
}

// Sources of the built-in line lists.
const (
	srcASD = "NIST Atomic Spectra Database (Kramida, Ralchenko, Reader and NIST ASD Team), observed air wavelength; " +
		"confirmed against a public copy of ASD line output"
	srcHg = srcASD + "; equals the Hg pencil-lamp value of Sansonetti, Salit & Reader, Appl. Opt. 35 (1996) 74 " +
		"(journal pages from memory); the NIST Handbook of Basic Atomic Spectroscopic Data (after Burns, Adams & Longwell 1950) lists "
	srcUnverified = "from memory, unverified: helium singlet line, value as in several public line lists, not checked against NIST output"
)

// lamps holds the built-in lists; Lamps returns copies.
var lamps = map[string][]LampLine{
	// Mercury. Hg I lines are broadened by isotope and hyperfine structure
	// (several pm), which is negligible against grating instrument widths
	// of ≳ 0.02 nm. 576.96/579.07 nm are 2.1 nm apart: resolved for
	// instrument widths below about 0.5 nm.
	"hg": {
		{404.6565, "Hg I", srcHg + "404.6563 nm", true},
		{407.7837, "Hg I", srcHg + "407.7831 nm", true},
		{435.8335, "Hg I", srcHg + "435.8328 nm", true},
		{546.0750, "Hg I", srcHg + "546.0735 nm", true},
		{576.9610, "Hg I", srcHg + "576.9598 nm", true},
		{579.0670, "Hg I", srcHg + "579.0663 nm", true},
	},
	// Neon: the strong red Ne I lines, each at least 1.9 nm from the next
	// listed one.
	"ne": {
		{540.05616, "Ne I", srcASD, true},
		{585.24878, "Ne I", srcASD, true},
		{588.18950, "Ne I", srcASD, true},
		{594.48340, "Ne I", srcASD, true},
		{597.55343, "Ne I", srcASD, true},
		{602.99968, "Ne I", srcASD, true},
		{607.43376, "Ne I", srcASD, true},
		{609.61630, "Ne I", srcASD, true},
		{614.30627, "Ne I", srcASD, true},
		{616.35937, "Ne I", srcASD, true},
		{621.72812, "Ne I", srcASD, true},
		{626.64952, "Ne I", srcASD, true},
		{633.44276, "Ne I", srcASD, true},
		{638.29914, "Ne I", srcASD, true},
		{640.22480, "Ne I", srcASD, true},
		{650.65277, "Ne I", srcASD, true},
		{659.89528, "Ne I", srcASD, true},
		{667.82766, "Ne I", srcASD, true},
		{692.94672, "Ne I", srcASD, true},
	},
	// Argon: Ar I lines in 380–700 nm without a listed neighbour of
	// comparable strength within 0.5 nm. 415.859, 419.832/420.067 and
	// 433.356 nm are left out because they have close neighbours.
	"ar": {
		{425.9362, "Ar I", srcASD, true},
		{427.2169, "Ar I", srcASD, true},
		{430.0101, "Ar I", srcASD, true},
		{451.0733, "Ar I", srcASD, true},
		{696.5431, "Ar I", srcASD, true},
	},
	// Helium singlets (the triplet lines have unresolved fine structure).
	"he": {
		{492.1931, "He I", srcUnverified, false},
		{501.5678, "He I", srcUnverified, false},
		{667.8151, "He I", srcUnverified, false},
	},
}

// Lamps returns the built-in line lists of low-pressure calibration
// lamps, keyed by short name: "hg" (mercury), "ne" (neon), "ar" (argon)
// and "he" (helium). Each list holds strong, isolated lines between 380
// and 700 nm in ascending order. The map and slices are fresh copies on
// every call, so callers may modify them.
//
// Wavelengths are in standard air. Where a source is a line-list
// database, LampLine.Source names it; LampLine.Verified is false for
// values from memory, unverified (currently the helium list).
//
// Low-pressure lamp lines are far narrower than a grating instrument
// function (Doppler width about 1e-3 nm at room temperature), so a Voigt
// fitted to them measures the instrument; see FitInstrument.
func Lamps() map[string][]LampLine {
	m := make(map[string][]LampLine, len(lamps))
	for k, v := range lamps {
		m[k] = slices.Clone(v)
	}
	return m
}
