// Package mset reads and checks glowlog measurement sets: the JSON
// documents that list a discharge's Balmer line intensities and widths
// together with the conditions needed to analyse them (instrument width,
// gas temperature, pressure, perturber gas).
//
// Decode turns bytes into a diag.Measurement and reports the first problem
// it finds as an *Error that names the source, the line, the field path
// and the value at fault, for example
//
//	run12.json:9: lines[1].intensity: must be a positive finite number, got -3
//
// Nothing is defaulted silently: a missing required field, an unknown
// field, a duplicate line or an impossible value is an error.
package mset
