package grating

import (
	"fmt"
	"math"

	"glowlog/diag"
)

// Emitter is an ultraviolet emission (a line, or a band given by its
// wavelength range) whose higher-order images can fall on the visible
// Balmer lines.
type Emitter struct {
	// Name is the species and feature, e.g. "Cu I".
	Name string
	// LowNM and HighNM bound the emission in air, nm (equal for a line).
	LowNM, HighNM float64
	// Verified is false for values not checked against a primary source.
	Verified bool
	// Provenance says where the wavelength comes from.
	Provenance string
}

// IsBand reports whether the emitter is a band (a wavelength range).
func (e Emitter) IsBand() bool { return e.HighNM > e.LowNM }

// CommonUVEmitters lists ultraviolet emitters common in hydrogen
// discharges (molecular impurities, mercury from gauges and pumps, electrode
// metals), after physics.md §8. None is verified against a primary source:
// the atomic wavelengths are from memory, and the band ranges are listed
// there without a citation.
var CommonUVEmitters = []Emitter{
	{Name: "OH A–X (0,0) band", LowNM: 306, HighNM: 312, Provenance: "glowlog physics notes §8, band range without a primary source; unverified"},
	{Name: "N₂ second positive (0,0) band head", LowNM: 337.13, HighNM: 337.13, Provenance: "glowlog physics notes §8, without a primary source; unverified"},
	{Name: "Hg I", LowNM: 253.652, HighNM: 253.652, Provenance: "glowlog physics notes §8, from memory, unverified"},
	{Name: "Hg I", LowNM: 313.155, HighNM: 313.155, Provenance: "glowlog physics notes §8, from memory, unverified"},
	{Name: "Cu I", LowNM: 324.754, HighNM: 324.754, Provenance: "glowlog physics notes §8, from memory, unverified"},
	{Name: "Cu I", LowNM: 327.396, HighNM: 327.396, Provenance: "glowlog physics notes §8, from memory, unverified"},
	{Name: "Ag I", LowNM: 328.068, HighNM: 328.068, Provenance: "glowlog physics notes §8, from memory, unverified"},
}

// Target is a line that ghost images may disturb.
type Target struct {
	Name         string
	WavelengthNM float64
}

// BalmerTargets returns the hydrogen Balmer lines with upper levels
// 3 … maxUpper (Hα, Hβ, …) at their computed air wavelengths
// (diag.Balmer). It panics if maxUpper < 3 or beyond diag's level range.
func BalmerTargets(maxUpper int) []Target {
	if maxUpper < 3 {
		panic("grating: BalmerTargets needs maxUpper ≥ 3")
	}
	var out []Target
	for n := 3; n <= maxUpper; n++ {
		t, err := diag.Balmer(n, diag.Hydrogen)
		if err != nil {
			panic(fmt.Sprintf("grating: %v", err))
		}
		out = append(out, Target{Name: t.Name(), WavelengthNM: t.WavelengthAirNM})
	}
	return out
}

// Overlap is one higher-order image of an emitter that lands near a target
// line or on the detector.
type Overlap struct {
	Emitter Emitter
	// ImageOrder is the order n in which the emitter is diffracted; the
	// instrument is set for order m, so the image appears at the apparent
	// wavelength λ_app = n λ / m.
	ImageOrder int
	// ApparentLowNM and ApparentHighNM are the apparent wavelengths
	// (equal for a line).
	ApparentLowNM, ApparentHighNM float64
	// Near is the nearest target within the tolerance, or nil.
	Near *Target
	// DistanceNM is the distance from the apparent wavelength (range) to
	// Near, 0 when a band covers it; NaN without Near.
	DistanceNM float64
	// OnDetector reports whether the apparent range meets the detector
	// coverage (false when no coverage was given).
	OnDetector bool
}

// FindOverlaps returns the images of the emitters in orders m+1 … m+extra
// (for m = 1 and extra = 2: the second and third orders, apparent
// wavelengths 2λ and 3λ) that land within tolNM of a target line, or on
// the detector when cov is non-nil. An emitter at λ diffracted in order n
// lands where λ n/m does in order m, since the grating equation depends
// only on the product m λ.
//
// The tolerance is the caller's: a few nm around a Stark-broadened Balmer
// line is common practice, no source. It panics if order = 0, extra < 1 or
// tolNM < 0.
func FindOverlaps(order, extra int, emitters []Emitter, targets []Target, tolNM float64, cov *Coverage) []Overlap {
	if order == 0 || extra < 1 || tolNM < 0 {
		panic("grating: FindOverlaps needs order ≠ 0, extra ≥ 1 and tolerance ≥ 0")
	}
	m := math.Abs(float64(order))
	var out []Overlap
	for _, e := range emitters {
		for k := 1; k <= extra; k++ {
			n := math.Abs(float64(order)) + float64(k)
			lo, hi := e.LowNM*n/m, e.HighNM*n/m
			o := Overlap{Emitter: e, ImageOrder: int(n) * sign(order), ApparentLowNM: lo, ApparentHighNM: hi, DistanceNM: math.NaN()}
			for i := range targets {
				d := 0.0
				switch w := targets[i].WavelengthNM; {
				case w < lo:
					d = lo - w
				case w > hi:
					d = w - hi
				}
				if d <= tolNM && (o.Near == nil || d < o.DistanceNM) {
					t := targets[i]
					o.Near, o.DistanceNM = &t, d
				}
			}
			if cov != nil {
				o.OnDetector = hi >= cov.LowNM && lo <= cov.HighNM
			}
			if o.Near != nil || o.OnDetector {
				out = append(out, o)
			}
		}
	}
	return out
}

func sign(n int) int {
	if n < 0 {
		return -1
	}
	return 1
}

// Measurability grades a Stark width against the instrument width.
type Measurability int

const (
	// NotMeasurable: Stark FWHM < 0.5 × instrument FWHM.
	NotMeasurable Measurability = iota
	// Marginal: 0.5 ≤ ratio < 1; separable in a Voigt fit only with a
	// measured, fixed instrument function.
	Marginal
	// Measurable: the Stark FWHM is at least the instrument FWHM.
	Measurable
)

// Thresholds of StarkMeasurability on the ratio Stark FWHM / instrument
// FWHM: common practice for a Voigt separation with a measured instrument
// function, no source.
const (
	MarginalRatio   = 0.5
	MeasurableRatio = 1.0
)

// StarkCheck is the verdict of StarkMeasurability.
type StarkCheck struct {
	StarkFWHMNM, InstrumentFWHMNM float64
	// Ratio is StarkFWHMNM / InstrumentFWHMNM.
	Ratio float64
	Grade Measurability
}

// StarkMeasurability compares a Stark FWHM with the instrument's practical
// FWHM (both nm, > 0):
//
//	ratio = w_Stark / w_instr;  < 0.5 not measurable, 0.5–1 marginal, ≥ 1 measurable,
//
// thresholds common practice, no source. It returns a *ParamError for a
// non-positive width.
func StarkMeasurability(starkFWHMNM, instrumentFWHMNM float64) (StarkCheck, error) {
	if !(starkFWHMNM > 0) || math.IsInf(starkFWHMNM, 0) {
		return StarkCheck{}, &ParamError{Field: "StarkFWHMNM", Value: starkFWHMNM, Reason: "must be a positive number"}
	}
	if !(instrumentFWHMNM > 0) || math.IsInf(instrumentFWHMNM, 0) {
		return StarkCheck{}, &ParamError{Field: "InstrumentFWHMNM", Value: instrumentFWHMNM, Reason: "must be a positive number"}
	}
	c := StarkCheck{StarkFWHMNM: starkFWHMNM, InstrumentFWHMNM: instrumentFWHMNM, Ratio: starkFWHMNM / instrumentFWHMNM}
	switch {
	case c.Ratio >= MeasurableRatio:
		c.Grade = Measurable
	case c.Ratio >= MarginalRatio:
		c.Grade = Marginal
	}
	return c, nil
}
