package diag

import "testing"

func TestSci(t *testing.T) {
	for _, c := range []struct {
		v    float64
		sig  int
		want string
	}{{950.4, 2, "950"}, {9.51, 2, "9.5"}, {0.04213, 3, "0.0421"}, {4.951e21, 3, "4.95 × 10²¹"}, {9.996e21, 3, "1.00 × 10²²"}, {1.6e-6, 2, "1.6 × 10⁻⁶"}, {-3.64e-4, 3, "-3.64 × 10⁻⁴"}} {
		if got := sci(c.v, c.sig); got != c.want {
			t.Errorf("sci(%g, %d) = %q, want %q", c.v, c.sig, got, c.want)
		}
	}
}
