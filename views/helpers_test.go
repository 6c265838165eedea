package views

import "testing"

func TestValueUnc(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	cases := []struct {
		v, u *float64
		want string
	}{
		{f(11605), f(1028), "11600 ± 1000"},
		{f(9394.79), f(383.53), "9390 ± 380"},
		{f(5000), f(124.4), "5000 ± 120"},
		{f(3.7212e21), f(1.1e20), "(3.72 ± 0.11) × 10²¹"},
		{f(1e-5), f(2.3e-5), "(1.0 ± 2.3) × 10⁻⁵"},
		{f(0.3343), f(0.00013), "0.33430 ± 0.00013"},
		{f(12.5), nil, "12.50"},
		{f(-3.64e-4), f(3.8e-5), "(−3.64 ± 0.38) × 10⁻⁴"},
		{nil, nil, "—"},
	}
	for _, c := range cases {
		if got := ValueUnc(c.v, c.u); got != c.want {
			t.Errorf("ValueUnc(%v, %v) = %q, want %q", deref(c.v), deref(c.u), got, c.want)
		}
	}
}

func deref(p *float64) any {
	if p == nil {
		return nil
	}
	return *p
}
