package spc

import (
	"errors"
	"math"
	"reflect"
	"testing"
)

func TestIndividualsLimits(t *testing.T) {
	// Worked by hand, in the manner of the individuals-chart examples in
	// Montgomery's textbook:
	//   x        = 10, 12, 11, 13, 12           (n = 5)
	//   x̄        = 58 / 5                        = 11.6
	//   MR       = 2, 1, 2, 1                    → MR̄ = 6 / 4 = 1.5
	//   σ̂        = 1.5 / 1.128                   = 1.329787…
	//   UCL, LCL = 11.6 ± 3 × 1.329787…          = 15.589362…, 7.610638…
	l, err := IndividualsLimits([]float64{10, 12, 11, 13, 12})
	if err != nil {
		t.Fatal(err)
	}
	want := Limits{Center: 11.6, MRBar: 1.5, Sigma: 1.5 / 1.128, UCL: 11.6 + 4.5/1.128, LCL: 11.6 - 4.5/1.128, N: 5}
	const tol = 1e-12
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"Center", l.Center, want.Center}, {"MRBar", l.MRBar, want.MRBar}, {"Sigma", l.Sigma, want.Sigma},
		{"UCL", l.UCL, 15.589361702127660}, {"LCL", l.LCL, 7.610638297872340}} {
		if math.Abs(c.got-c.want) > tol {
			t.Errorf("%s = %.12g, want %.12g", c.name, c.got, c.want)
		}
	}
	if l.N != 5 {
		t.Errorf("N = %d, want 5", l.N)
	}

	// Non-finite values are skipped and the moving range bridges them:
	// 10, 12, 11 → x̄ = 11, MR = 2, 1 → MR̄ = 1.5.
	l, err = IndividualsLimits([]float64{10, math.NaN(), 12, math.Inf(1), 11})
	if err != nil || l.N != 3 || l.Center != 11 || l.MRBar != 1.5 {
		t.Errorf("with NaN/Inf: %+v, %v; want N 3, centre 11, MR̄ 1.5", l, err)
	}
	for _, x := range [][]float64{nil, {1}, {math.NaN(), 2}} {
		if _, err := IndividualsLimits(x); !errors.Is(err, ErrTooFew) {
			t.Errorf("IndividualsLimits(%v) error = %v, want ErrTooFew", x, err)
		}
	}
}

// unit is a chart with centre 0 and σ̂ 1, so that values are in σ units.
var unit = Limits{Center: 0, Sigma: 1, UCL: 3, LCL: -3}

func indices(vs []Violation) []int {
	out := []int{}
	for _, v := range vs {
		out = append(out, v.Index)
	}
	return out
}

func repeat(v float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}

func alternate(a, b float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = a
		if i%2 == 1 {
			out[i] = b
		}
	}
	return out
}

func TestRules(t *testing.T) {
	tests := []struct {
		name string
		rule Rule
		x    []float64
		want []int
	}{
		{"beyond 3σ both sides", Beyond3Sigma, []float64{0.5, -0.5, 3.5, 0.2, -3.1}, []int{2, 4}},
		{"exactly 3σ is not beyond", Beyond3Sigma, []float64{3, -3}, []int{}},
		// Points 1 and 3 are beyond +2σ within the window 1…3.
		{"2 of 3 beyond 2σ", TwoOfThreeBeyond2Sigma, []float64{0.5, 2.5, -0.5, 2.2, 0.1}, []int{3}},
		{"2 of 3: too far apart", TwoOfThreeBeyond2Sigma, []float64{2.5, 0, 0, 2.5}, []int{}},
		{"2 of 3: opposite sides", TwoOfThreeBeyond2Sigma, []float64{2.5, -2.5, 0.5}, []int{}},
		{"2 of 3 below, consecutive", TwoOfThreeBeyond2Sigma, []float64{-2.1, -2.9, 0}, []int{1}},
		// Points 0, 1, 3, 4 beyond +1σ: the fourth arrives at index 4.
		{"4 of 5 beyond 1σ", FourOfFiveBeyond1Sigma, []float64{1.5, 1.2, 0.3, 1.1, 1.4}, []int{4}},
		{"4 of 5: only 3", FourOfFiveBeyond1Sigma, []float64{1.5, 1.2, 0.3, 1.1, 0.4}, []int{}},
		{"8 on one side", EightSameSide, repeat(0.1, 8), []int{7}},
		{"8 on one side, run goes on", EightSameSide, repeat(-0.1, 10), []int{7, 8, 9}},
		{"8 on one side: centre breaks", EightSameSide, append(append(repeat(0.1, 4), 0), repeat(0.1, 4)...), []int{}},
		{"9 on one side", NineSameSide, repeat(0.2, 9), []int{8}},
		{"9 on one side: 8 only", NineSameSide, repeat(0.2, 8), []int{}},
		{"6 rising", SixTrending, []float64{0, 0.1, 0.2, 0.3, 0.4, 0.5}, []int{5}},
		{"5 rising only", SixTrending, []float64{0, 0.1, 0.2, 0.3, 0.4}, []int{}},
		{"a tie breaks a trend", SixTrending, []float64{0, 0.1, 0.2, 0.2, 0.3, 0.4, 0.5}, []int{}},
		{"7 falling", SixTrending, []float64{1, 0.8, 0.6, 0.4, 0.2, 0, -0.2}, []int{5, 6}},
		{"14 alternating", FourteenAlternating, alternate(0.1, -0.1, 14), []int{13}},
		{"13 alternating", FourteenAlternating, alternate(0.1, -0.1, 13), []int{}},
		{"15 within 1σ", FifteenWithin1Sigma, alternate(0.3, -0.4, 15), []int{14}},
		{"8 beyond 1σ either side", EightBeyond1Sigma, alternate(1.5, -1.5, 8), []int{7}},
		{"7 beyond 1σ", EightBeyond1Sigma, alternate(1.5, -1.5, 7), []int{}},
		{"NaN breaks a run", EightSameSide, append(append(repeat(0.1, 4), math.NaN()), repeat(0.1, 4)...), []int{}},
	}
	for _, tt := range tests {
		got := indices(Check(tt.x, unit, []Rule{tt.rule}))
		if !reflect.DeepEqual(got, tt.want) {
			t.Errorf("%s: Check(%v, %v) fired at %v, want %v", tt.name, tt.x, tt.rule, got, tt.want)
		}
	}
}

func TestCheckWesternElectricSequence(t *testing.T) {
	// A sequence in σ units with one pattern of each zone test:
	//   0–3   ordinary
	//   4     3.4σ                          → test 1
	//   5–7   2.3, 0.2, 2.6                 → test 2 at 5 (3.4 and 2.3 are
	//                                          both beyond 2σ) and at 7
	//   8–9   −0.5, −0.2
	//  10–14  −1.2, −1.5, 0.0, −1.1, −1.3    → test 3 at 14 (0.0 at 12 keeps
	//                                          it from being a run of 8)
	//  15–22  −0.3 ×8 (after −1.3: still below) → test 4 at 17…22
	//         (the run below starts at 13)
	x := []float64{0.1, -0.2, 0.3, -0.1, 3.4, 2.3, 0.2, 2.6, -0.5, -0.2, -1.2, -1.5, 0.0, -1.1, -1.3,
		-0.3, -0.3, -0.3, -0.3, -0.3, -0.3, -0.3, -0.3}
	got := Check(x, unit, []Rule{Beyond3Sigma, TwoOfThreeBeyond2Sigma, FourOfFiveBeyond1Sigma, EightSameSide})
	var want []Violation
	want = append(want, Violation{4, Beyond3Sigma, 1}, Violation{5, TwoOfThreeBeyond2Sigma, 1}, Violation{7, TwoOfThreeBeyond2Sigma, 1})
	want = append(want, Violation{14, FourOfFiveBeyond1Sigma, -1})
	// Below from index 13: 13, 14, 15 … the 8th point below is index 20.
	for i := 20; i <= 22; i++ {
		want = append(want, Violation{i, EightSameSide, -1})
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Check = %v\nwant    %v", got, want)
	}
}

func TestZeroSigma(t *testing.T) {
	l, err := IndividualsLimits([]float64{5, 5, 5})
	if err != nil {
		t.Fatal(err)
	}
	got := indices(Check([]float64{5, 5, 5.1}, l, []Rule{Beyond3Sigma}))
	if !reflect.DeepEqual(got, []int{2}) {
		t.Errorf("constant baseline: fired at %v, want [2]", got)
	}
}

func TestRuleNames(t *testing.T) {
	for _, r := range append(append([]Rule{}, WesternElectric...), Nelson...) {
		if r.String() == "unknown rule" || r.Source() == "" {
			t.Errorf("rule %d has no name or source", int(r))
		}
	}
}
