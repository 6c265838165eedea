// Package spectrum turns a raw Balmer emission spectrum into a full
// glowlog analysis in one step: it subtracts a dark spectrum, converts
// counts to counts per nm, applies a relative spectral-response
// calibration, flags saturated lines, finds the Balmer lines that stand
// above the noise, fits each window with Voigt profiles on a polynomial
// baseline (package linefit), optionally corrects a wavelength offset, and
// hands the fitted intensities and Lorentzian widths to diag.Analyze.
//
// It is pure: arrays in, structs out; no file, HTTP or SQL access. A
// Pipeline holds the reusable fitting workspace; use one per goroutine.
package spectrum
