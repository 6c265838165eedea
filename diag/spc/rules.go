package spc

import "math"

// Rule is a test for a special cause of variation.
type Rule int

// The run rules. Zone tests count points beyond 1σ, 2σ or 3σ on one side
// of the centre line; "beyond" is strict (a point exactly on a zone
// boundary is not beyond it), and a point exactly on the centre line
// belongs to neither side and breaks a run.
const (
	// Beyond3Sigma: one point beyond 3σ (Western Electric test 1, Nelson test 1).
	Beyond3Sigma Rule = iota + 1
	// TwoOfThreeBeyond2Sigma: two of three consecutive points beyond 2σ on
	// the same side (Western Electric test 2, Nelson test 5).
	TwoOfThreeBeyond2Sigma
	// FourOfFiveBeyond1Sigma: four of five consecutive points beyond 1σ on
	// the same side (Western Electric test 3, Nelson test 6).
	FourOfFiveBeyond1Sigma
	// EightSameSide: eight consecutive points on one side of the centre
	// line (Western Electric test 4).
	EightSameSide
	// NineSameSide: nine consecutive points on one side of the centre line
	// (Nelson test 2).
	NineSameSide
	// SixTrending: six consecutive points steadily increasing or steadily
	// decreasing (Nelson test 3).
	SixTrending
	// FourteenAlternating: fourteen consecutive points alternating up and
	// down (Nelson test 4).
	FourteenAlternating
	// FifteenWithin1Sigma: fifteen consecutive points within 1σ of the
	// centre line, on either side (Nelson test 7; stratification).
	FifteenWithin1Sigma
	// EightBeyond1Sigma: eight consecutive points beyond 1σ, on either
	// side, none within 1σ (Nelson test 8; mixture).
	EightBeyond1Sigma
)

// WesternElectric are the four zone tests of the Western Electric
// handbook (1956) plus Nelson's six-point trend, which the handbook
// discusses as a trend pattern but does not state as a numbered test.
var WesternElectric = []Rule{Beyond3Sigma, TwoOfThreeBeyond2Sigma, FourOfFiveBeyond1Sigma, EightSameSide, SixTrending}

// Nelson are Nelson's (1984) eight tests.
var Nelson = []Rule{Beyond3Sigma, NineSameSide, SixTrending, FourteenAlternating, TwoOfThreeBeyond2Sigma,
	FourOfFiveBeyond1Sigma, FifteenWithin1Sigma, EightBeyond1Sigma}

// String returns a short description of the rule.
func (r Rule) String() string {
	switch r {
	case Beyond3Sigma:
		return "1 point beyond 3σ"
	case TwoOfThreeBeyond2Sigma:
		return "2 of 3 beyond 2σ, same side"
	case FourOfFiveBeyond1Sigma:
		return "4 of 5 beyond 1σ, same side"
	case EightSameSide:
		return "8 in a row on one side"
	case NineSameSide:
		return "9 in a row on one side"
	case SixTrending:
		return "6 in a row steadily rising or falling"
	case FourteenAlternating:
		return "14 in a row alternating up and down"
	case FifteenWithin1Sigma:
		return "15 in a row within 1σ"
	case EightBeyond1Sigma:
		return "8 in a row beyond 1σ, either side"
	}
	return "unknown rule"
}

// Source names where the rule is stated.
func (r Rule) Source() string {
	switch r {
	case Beyond3Sigma:
		return "WE 1 / Nelson 1"
	case TwoOfThreeBeyond2Sigma:
		return "WE 2 / Nelson 5"
	case FourOfFiveBeyond1Sigma:
		return "WE 3 / Nelson 6"
	case EightSameSide:
		return "WE 4"
	case NineSameSide:
		return "Nelson 2"
	case SixTrending:
		return "Nelson 3"
	case FourteenAlternating:
		return "Nelson 4"
	case FifteenWithin1Sigma:
		return "Nelson 7"
	case EightBeyond1Sigma:
		return "Nelson 8"
	}
	return ""
}

// Violation is one point at which a rule fires.
type Violation struct {
	// Index is the position in the checked sequence of the point that
	// completes the pattern.
	Index int
	Rule  Rule
	// Side is +1 (above the centre or rising), −1 (below or falling), or
	// 0 for rules without a side (alternation, stratification, mixture).
	Side int
}

// Check applies rules to x (in time order) against limits l and returns
// the violations ordered by index, then by the order of rules.
//
// A rule fires at the point that completes its pattern, and for the
// counting tests ("2 of 3", "4 of 5") only when that point is itself one
// of the points beyond the zone, so that one cluster is not reported
// again at a following ordinary point. Runs (same side, trend,
// alternation, within/beyond 1σ) fire at every point while the run goes
// on past its required length. Non-finite values break every pattern and
// never fire.
func Check(x []float64, l Limits, rules []Rule) []Violation {
	z := make([]float64, len(x))
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			z[i] = math.NaN()
			continue
		}
		z[i] = l.Zone(v)
	}
	var out []Violation
	// Running lengths, updated point by point.
	var above, below, up, down, alt, within, beyond int
	for i := range z {
		zi := z[i]
		finite := !math.IsNaN(zi)
		// Same side of the centre line.
		switch {
		case !finite || zi == 0:
			above, below = 0, 0
		case zi > 0:
			above, below = above+1, 0
		default:
			above, below = 0, below+1
		}
		// Trend: run length in points, counting the first point of the run.
		switch {
		case !finite:
			up, down = 0, 0
		case i > 0 && !math.IsNaN(z[i-1]) && x[i] > x[i-1]:
			up, down = max(up, 1)+1, 1
		case i > 0 && !math.IsNaN(z[i-1]) && x[i] < x[i-1]:
			up, down = 1, max(down, 1)+1
		default:
			up, down = 1, 1
		}
		// Alternation: points in a run whose successive differences change sign.
		switch {
		case !finite:
			alt = 0
		case i >= 2 && !math.IsNaN(z[i-1]) && !math.IsNaN(z[i-2]) &&
			(x[i]-x[i-1])*(x[i-1]-x[i-2]) < 0:
			alt++
		case i >= 1 && !math.IsNaN(z[i-1]) && x[i] != x[i-1]:
			alt = 2
		default:
			alt = 1
		}
		switch {
		case !finite:
			within, beyond = 0, 0
		case math.Abs(zi) < 1:
			within, beyond = within+1, 0
		case math.Abs(zi) > 1:
			within, beyond = 0, beyond+1
		default: // exactly at 1σ: neither within nor beyond
			within, beyond = 0, 0
		}
		if !finite {
			continue
		}
		side := 1
		if zi < 0 {
			side = -1
		}
		for _, r := range rules {
			fired, s := false, side
			switch r {
			case Beyond3Sigma:
				fired = math.Abs(zi) > 3
			case TwoOfThreeBeyond2Sigma:
				fired = zi*float64(side) > 2 && countBeyond(z, i, 3, 2, side) >= 2
			case FourOfFiveBeyond1Sigma:
				fired = zi*float64(side) > 1 && countBeyond(z, i, 5, 1, side) >= 4
			case EightSameSide:
				fired = above >= 8 || below >= 8
			case NineSameSide:
				fired = above >= 9 || below >= 9
			case SixTrending:
				fired = up >= 6 || down >= 6
				if down >= 6 {
					s = -1
				} else {
					s = 1
				}
			case FourteenAlternating:
				fired, s = alt >= 14, 0
			case FifteenWithin1Sigma:
				fired, s = within >= 15, 0
			case EightBeyond1Sigma:
				fired, s = beyond >= 8, 0
			}
			if fired {
				out = append(out, Violation{Index: i, Rule: r, Side: s})
			}
		}
	}
	return out
}

// countBeyond counts the points among the n ending at i that lie beyond k
// σ on side; a non-finite point ends the window.
func countBeyond(z []float64, i, n int, k float64, side int) int {
	c := 0
	for j := i; j > i-n && j >= 0; j-- {
		if math.IsNaN(z[j]) {
			break
		}
		if z[j]*float64(side) > k {
			c++
		}
	}
	return c
}
