// Package grating implements the first-order optics of a plane reflection
// grating spectrometer, for planning Balmer-line measurements: the grating
// equation, the Littrow angle, angular and reciprocal linear dispersion,
// resolving power, slit- and pixel-limited resolution, the wavelength
// coverage of a detector, free spectral range, higher-order overlap of
// ultraviolet emitters with the Balmer lines, and whether a Stark width is
// measurable with a given instrument.
//
// Sign convention: the grating equation for reflection is
//
//	m λ = d (sin α + sin β),
//
// with α the angle of incidence and β the angle of diffraction, both from
// the grating normal and positive on the same side of it, d = 1/G the
// groove spacing for groove density G, and λ the wavelength in the medium
// the instrument operates in (standard air; glowlog's line data give air
// wavelengths, diag.Transition.WavelengthAirNM). Angles are in degrees
// (…Deg), wavelengths in nm (…NM), lengths at the focal plane in mm (…MM)
// and slit and pixel sizes in µm (…UM).
//
// The package is pure: plain values in, plain structs out; no I/O.
// Caller misuse (a non-positive groove density passed to a scalar function,
// a zero order) panics with a "grating: " prefix. Problems with the data come
// back as errors: *OrderError (no diffraction order at this wavelength and
// angle, errors.Is ErrNoOrder) and *ParamError (an invalid Spectrometer
// field, named).
//
// The thresholds for "near a Balmer line" and "measurable Stark width" are
// common practice without a published source and are labelled so.
//
// References:
//
//	C. Palmer, Diffraction Grating Handbook, 8th ed., MKS Instruments (2020):
//	the grating equation, Littrow configuration, dispersion, resolving
//	power, free spectral range and overlapping orders (chapter numbers
//	from memory, unverified).
//	M. Born and E. Wolf, Principles of Optics, 7th ed., Cambridge
//	University Press (1999), §8.6.1 (the diffraction grating; section
//	number from memory, unverified).
//	glowlog physics reference sheet (shared/physics.md) §8, for the
//	formulas and the check values used in the tests.
package grating
