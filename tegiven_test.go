package main

import (
	"hash/fnv"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
)

// teGivenJitter is the relative 1σ (ln units) by which the accuracy
// harnesses' T_e is off: the analysis carries a given T_e as known to
// 20 % (diag/spectrum wholeTeRelGiven), so a check set that handed it the
// exact T_e of its generator would never exercise that part of σ_sys (and
// hid that a T_e between the tables' temperature nodes could cost a line
// its tabulated shape).
const teGivenJitter = 0.2

// givenElectronK returns the electron temperature the accuracy harnesses
// hand to the analysis for a check-set spectrum whose true T_e is truth:
// the truth times a log-normal factor exp(s·z), z a standard normal drawn
// from the spectrum's name (the same every run), s = teGivenJitter, or
// GLOWLOG_TE_JITTER when set (0: the truth itself).
func givenElectronK(name string, truth float64) float64 {
	s := teGivenJitter
	if v, err := strconv.ParseFloat(os.Getenv("GLOWLOG_TE_JITTER"), 64); err == nil && v >= 0 {
		s = v
	}
	if s == 0 {
		return truth
	}
	h := fnv.New64a()
	h.Write([]byte(name))
	r := rand.New(rand.NewPCG(h.Sum64(), 0x7e))
	return truth * math.Exp(s*r.NormFloat64())
}
