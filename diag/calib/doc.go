// Package calib turns raw spectrometer counts into calibrated quantities:
// the relative spectral response that makes line intensities comparable
// across wavelength, and the instrument function whose widths must be
// removed from measured Balmer line widths.
//
// # Relative spectral response
//
// A [Response] R(λ) is built from a response curve ([FromCurve]), from a
// spectral-irradiance standard lamp and its certificate
// ([FromStandardLamp], certificate files read by [ReadIrradiance]) or,
// without a certificate and with a loud warning, from a grey-body
// approximation at the lamp's colour temperature ([FromGreyBody], using
// [PlanckRadianceNM]). Corrected intensities are counts divided by R:
//
//	r, err := calib.FromStandardLamp(lampWL, lampCounts, irr.WavelengthNM, irr.WPerM2NM, diag.PhotonUnits)
//	...
//	err = r.Correct(plasmaWL, plasmaCountsPerNM, corrected)
//
// Response.Unit records whether the result is proportional to photon
// rates or to powers, which decides the Boltzmann ordinate (physics.md §7):
// ln(I/(gA)) for photon units, ln(Iλ/(gA)) for energy units. The two
// responses differ by exactly λ/(hc).
//
// # Instrument function
//
// [FitInstrument] fits a Voigt with free Gaussian and Lorentzian widths to
// each line of a low-pressure lamp ([Lamps] holds built-in Hg, Ne, Ar and
// He lists) and returns an [Instrument] whose widths are interpolated
// linearly in wavelength by [Instrument.At] (physics.md §5.5). Instruments
// are saved as JSON ([Instrument.WriteJSON], [ReadInstrument]) and reused
// by name.
//
// # Errors
//
// Misuse (mismatched slice lengths, invalid options) panics with a
// "calib: " prefix. Problems with the data return errors wrapping
// [ErrOutOfRange], [ErrNonPositive], [ErrBadTable], [ErrNoUsableLine] or
// [ErrInvalidInstrument], with the offending wavelength or range in the
// message.
//
// The package is pure computation: plain values in, plain structs out; no
// I/O beyond the io.Reader/io.Writer given to it, no clock, no global
// state other than the built-in line lists.
//
// References:
//
//	H. W. Yoon and C. E. Gibson, Spectral Irradiance Calibrations, NIST
//	Special Publication 250-89 (2011).
//	M. Planck, Ueber das Gesetz der Energieverteilung im Normalspectrum,
//	Ann. Phys. 309 (1901) 553–563.
//	A. Kramida, Yu. Ralchenko, J. Reader and NIST ASD Team, NIST Atomic
//	Spectra Database, https://physics.nist.gov/asd (lamp wavelengths).
//	C. J. Sansonetti, M. L. Salit and J. Reader, Wavelengths of spectral
//	lines in mercury pencil lamps, Appl. Opt. 35 (1996) 74 (volume and
//	page from memory).
//	J. J. Olivero and R. L. Longbothum, Empirical fits to the Voigt line
//	width: a brief review, J. Quant. Spectrosc. Radiat. Transfer 17 (1977)
//	233–236.
package calib
