// Package spc implements statistical process control for sequences of
// single measurements (one value per run): the individuals control chart
// and the Western Electric and Nelson run rules.
//
// Plain values go in, plain structs come out; the package knows nothing of
// runs, databases or pages.
//
// References:
//
//	Western Electric Company, Statistical Quality Control Handbook
//	(Western Electric, Indianapolis, 1956), section 1B: zone tests for
//	unnatural patterns.
//
//	L. S. Nelson, "The Shewhart Control Chart—Tests for Special Causes",
//	Journal of Quality Technology 16 (1984) 237–239.
//
//	D. C. Montgomery, Introduction to Statistical Quality Control
//	(Wiley), chapter "Control charts for variables", section on the
//	individuals chart: σ̂ = MR̄/d₂ with d₂ = 1.128 for moving ranges of two.
package spc

import (
	"errors"
	"math"
)

// D2 is the bias-correction constant d₂ for ranges of subgroups of two
// (the moving range of consecutive points): E[R] = d₂σ for normal data.
const D2 = 1.128

// ErrTooFew is returned when a baseline has fewer than two finite values.
var ErrTooFew = errors.New("spc: a baseline needs at least two finite values")

// Limits are the centre line and control limits of an individuals chart.
type Limits struct {
	// Center is the mean of the baseline.
	Center float64
	// MRBar is the average moving range |xᵢ − xᵢ₋₁| of the baseline.
	MRBar float64
	// Sigma is the short-term standard deviation estimate MRBar/D2.
	Sigma float64
	// UCL and LCL are Center ± 3 Sigma.
	UCL, LCL float64
	// N is the number of baseline values used.
	N int
}

// IndividualsLimits computes the limits of an individuals (X) chart from
// baseline values in time order:
//
//	x̄   = Σxᵢ / n
//	MR̄  = Σ|xᵢ − xᵢ₋₁| / (n − 1)
//	σ̂   = MR̄ / d₂,  d₂ = 1.128
//	UCL = x̄ + 3σ̂,  LCL = x̄ − 3σ̂
//
// Non-finite values (NaN, ±Inf) are skipped; the moving range is taken
// between consecutive finite values. Fewer than two finite values give
// ErrTooFew. The moving-range estimate follows Montgomery; it is robust
// against slow drifts in the baseline, unlike the overall standard
// deviation.
func IndividualsLimits(baseline []float64) (Limits, error) {
	var sum, mrSum float64
	n := 0
	prev := math.NaN()
	for _, x := range baseline {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			continue
		}
		sum += x
		if n > 0 {
			mrSum += math.Abs(x - prev)
		}
		prev = x
		n++
	}
	if n < 2 {
		return Limits{}, ErrTooFew
	}
	l := Limits{N: n, Center: sum / float64(n), MRBar: mrSum / float64(n-1)}
	l.Sigma = l.MRBar / D2
	l.UCL, l.LCL = l.Center+3*l.Sigma, l.Center-3*l.Sigma
	return l, nil
}

// Zone returns x's distance from the centre line in units of σ̂ (signed:
// positive above the centre). With Sigma 0 it returns ±Inf for any value
// off the centre line and 0 on it.
func (l Limits) Zone(x float64) float64 {
	d := x - l.Center
	if l.Sigma == 0 {
		switch {
		case d > 0:
			return math.Inf(1)
		case d < 0:
			return math.Inf(-1)
		}
		return 0
	}
	return d / l.Sigma
}
