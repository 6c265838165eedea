package calib

import (
	"errors"
	"math"
	"os"
	"strings"
	"testing"

	"glowlog/diag"
)

// trueResponse is an invented smooth response shape (grating blaze times
// detector QE, roughly), used to synthesise lamp spectra.
func trueResponse(l float64) float64 {
	u := (l - 520) / 150
	return 3e5 * math.Exp(-u*u) * (1 + 0.1*math.Sin(l/17))
}

func grid(lo, hi, step float64) []float64 {
	n := int(math.Round((hi-lo)/step)) + 1
	s := make([]float64, n)
	for i := range s {
		s[i] = lo + float64(i)*step
	}
	return s
}

func loadCertificate(t testing.TB) *Irradiance {
	t.Helper()
	f, err := os.Open("testdata/irradiance_fh-q-0412.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	irr, err := ReadIrradiance("irradiance_fh-q-0412.txt", f)
	if err != nil {
		t.Fatal(err)
	}
	return irr
}

// TestStandardLampRoundTrip builds a lamp spectrum C = E·R (energy units)
// from the certificate interpolated exactly as FromStandardLamp does on the
// certificate's own grid points, and checks that R is recovered. On the
// certificate nodes no interpolation is involved, so the agreement is to
// rounding.
func TestStandardLampRoundTrip(t *testing.T) {
	t.Parallel()
	irr := loadCertificate(t)
	// Lamp grid: the certificate nodes from 380 to 700 nm plus points in
	// between.
	wl := grid(380, 700, 0.5)
	c := make([]float64, len(wl))
	for i, l := range wl {
		c[i] = logLinear(irr.WavelengthNM, irr.WPerM2NM, l) * trueResponse(l)
	}
	for _, unit := range []diag.IntensityUnit{diag.EnergyUnits, diag.PhotonUnits} {
		r, err := FromStandardLamp(wl, c, irr.WavelengthNM, irr.WPerM2NM, unit)
		if err != nil {
			t.Fatal(err)
		}
		if len(r.Warnings) != 0 {
			t.Errorf("%v: unexpected warnings %q", unit, r.Warnings)
		}
		if !strings.Contains(r.Source, "standard lamp") || !strings.Contains(r.Source, unit.String()) {
			t.Errorf("Source %q does not describe the calibration", r.Source)
		}
		for i, l := range wl {
			want := trueResponse(l)
			if unit == diag.PhotonUnits {
				want /= photonPerJoule(l) // R_p = C/E_p = R_E hc/λ
			}
			if d := relDiff(r.Value[i], want); d > 1e-13 {
				t.Fatalf("%v: R(%g) = %g, want %g (rel %g)", unit, l, r.Value[i], want, d)
			}
		}
	}
}

// TestStandardLampInterpolation checks the log-linear interpolation
// against a certificate that is exactly exponential in λ, where it is
// exact, and against Planck's law at 10 nm spacing, where the error in
// ln E is bounded by the linear-interpolation remainder
// t(h − t)/2 · |d² ln B/dλ²| (analytic: d² ln B/dλ² = 5/λ² − 2c₂/(λ³T)
// in the Wien regime, largest at the blue end of each interval).
func TestStandardLampInterpolation(t *testing.T) {
	t.Parallel()
	cw := grid(350, 750, 25)
	ce := make([]float64, len(cw))
	for i, l := range cw {
		ce[i] = 2 * math.Exp(-l/120)
	}
	wl := grid(360, 740, 0.37)
	ones := make([]float64, len(wl))
	for i := range ones {
		ones[i] = 1
	}
	r, err := FromStandardLamp(wl, ones, cw, ce, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	for i, l := range wl {
		if d := relDiff(r.Value[i], 1/(2*math.Exp(-l/120))); d > 1e-12 {
			t.Fatalf("exponential certificate: R(%g) rel err %g", l, d)
		}
	}
	cw2 := grid(350, 750, 10)
	ce2 := make([]float64, len(cw2))
	for i, l := range cw2 {
		ce2[i] = PlanckRadianceNM(l, 3000)
	}
	r, err = FromStandardLamp(wl, ones, cw2, ce2, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	for i, l := range wl {
		j := int((l - 350) / 10) // interval [λ_j, λ_j + 10 nm]
		lj, h, u := cw2[j]*1e-9, 10e-9, (l-cw2[j])*1e-9
		curv := math.Abs(5/(lj*lj) - 2*PlanckC2/(lj*lj*lj*3000))
		bound := u*(h-u)/2*curv*1.01 + 1e-13
		if d := math.Abs(math.Log(1 / r.Value[i] / PlanckRadianceNM(l, 3000))); d > bound {
			t.Fatalf("Planck certificate at 10 nm spacing: ln E(%g) error %g > bound %g", l, d, bound)
		}
	}
}

// TestPhotonEnergyConsistency: the photon and energy responses from the
// same data differ exactly by the factor λ/(hc) (physics.md §7).
func TestPhotonEnergyConsistency(t *testing.T) {
	t.Parallel()
	irr := loadCertificate(t)
	wl := grid(400, 690, 0.13)
	c := make([]float64, len(wl))
	for i, l := range wl {
		c[i] = 1000 + 50*math.Sin(l)
	}
	check := func(name string, re, rp *Response) {
		for i, l := range wl {
			ratio := re.Value[i] / rp.Value[i]
			want := l * 1e-9 / (diag.Planck * diag.SpeedOfLight)
			if d := relDiff(ratio, want); d > 4e-16*4 {
				t.Fatalf("%s: R_E/R_p at %g nm = %g, want λ/(hc) = %g (rel %g)", name, l, ratio, want, d)
			}
		}
	}
	re, err := FromStandardLamp(wl, c, irr.WavelengthNM, irr.WPerM2NM, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	rp, err := FromStandardLamp(wl, c, irr.WavelengthNM, irr.WPerM2NM, diag.PhotonUnits)
	if err != nil {
		t.Fatal(err)
	}
	check("standard lamp", re, rp)
	ge, err := FromGreyBody(wl, c, 2856, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	gp, err := FromGreyBody(wl, c, 2856, diag.PhotonUnits)
	if err != nil {
		t.Fatal(err)
	}
	check("grey body", ge, gp)

	// Corrected intensities then differ by hc/λ: I_p/I_E = λ/(hc).
	ie := make([]float64, len(wl))
	ip := make([]float64, len(wl))
	if err := re.Correct(wl, c, ie); err != nil {
		t.Fatal(err)
	}
	if err := rp.Correct(wl, c, ip); err != nil {
		t.Fatal(err)
	}
	for i, l := range wl {
		if d := relDiff(ip[i]/ie[i], photonPerJoule(l)); d > 1e-15*4 {
			t.Fatalf("I_p/I_E at %g nm rel err %g", l, d)
		}
	}
}

// TestGreyBodyRecovers: a lamp that really is a grey body at the assumed
// temperature gives back the response, and the loud warning is present.
func TestGreyBodyRecovers(t *testing.T) {
	t.Parallel()
	wl := grid(380, 700, 1)
	c := make([]float64, len(wl))
	for i, l := range wl {
		c[i] = 0.37 * PlanckRadianceNM(l, 2900) * trueResponse(l)
	}
	r, err := FromGreyBody(wl, c, 2900, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	for i, l := range wl {
		if d := relDiff(r.Value[i], 0.37*trueResponse(l)); d > 1e-14 {
			t.Fatalf("R(%g) rel err %g", l, d)
		}
	}
	if len(r.Warnings) == 0 || !strings.Contains(r.Warnings[0], "tungsten is not grey") || !strings.Contains(r.Warnings[0], "300 nm") {
		t.Errorf("grey-body warning missing or not loud enough: %q", r.Warnings)
	}
	for _, T := range []float64{0, -5, math.NaN(), math.Inf(1)} {
		if _, err := FromGreyBody(wl, c, T, diag.EnergyUnits); err == nil {
			t.Errorf("FromGreyBody(T=%g) returned no error", T)
		}
	}
}

func TestResponseAt(t *testing.T) {
	t.Parallel()
	r, err := FromCurve("resp.csv", []float64{400, 500, 600, 700}, []float64{1, 3, 2, 2}, diag.PhotonUnits)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		l, want float64 // analytic: linear interpolation of the table
	}{
		{400, 1}, {450, 2}, {500, 3}, {525, 2.75}, {600, 2}, {650, 2}, {700, 2}, {400.1, 1.002},
	} {
		got, err := r.At(tc.l)
		if err != nil {
			t.Errorf("At(%g): %v", tc.l, err)
			continue
		}
		if math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("At(%g) = %.15g, want %g", tc.l, got, tc.want)
		}
	}
	for _, l := range []float64{399.999, 700.001, math.NaN(), math.Inf(-1)} {
		_, err := r.At(l)
		if !errors.Is(err, ErrOutOfRange) {
			t.Errorf("At(%g) error = %v, want ErrOutOfRange", l, err)
		}
	}
	_, err = r.At(399.5)
	if err == nil || !strings.Contains(err.Error(), "399.5000 nm") || !strings.Contains(err.Error(), "400.0000–700.0000") {
		t.Errorf("At(399.5) error %q does not name the wavelength and range", err)
	}
}

func TestCoverage(t *testing.T) {
	t.Parallel()
	// A lamp with no signal below 395 nm: counts ≤ 0 there.
	irr := loadCertificate(t)
	wl := grid(380, 700, 1)
	c := make([]float64, len(wl))
	for i, l := range wl {
		c[i] = l - 395 // ≤ 0 up to 395 nm
	}
	r, err := FromStandardLamp(wl, c, irr.WavelengthNM, irr.WPerM2NM, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Warnings) != 1 || !strings.Contains(r.Warnings[0], "16 of 321") {
		t.Errorf("warnings %q, want one about 16 of 321 pixels", r.Warnings)
	}
	for _, tc := range []struct {
		lo, hi float64
		want   error
	}{
		{396, 700, nil},
		{395.5, 500, ErrNonPositive}, // uses the node at 395 nm (counts 0)
		{390, 500, ErrNonPositive},
		{370, 500, ErrOutOfRange},
		{500, 701, ErrOutOfRange},
		{450, 450, nil},
	} {
		err := r.Covers(tc.lo, tc.hi)
		if !errors.Is(err, tc.want) || (tc.want == nil) != (err == nil) {
			t.Errorf("Covers(%g, %g) = %v, want %v", tc.lo, tc.hi, err, tc.want)
		}
	}
	if _, err := r.At(395.5); !errors.Is(err, ErrNonPositive) {
		t.Errorf("At(395.5) = %v, want ErrNonPositive", err)
	}
	// Correct reports the first bad pixel and leaves dst alone.
	px := []float64{500, 600, 390, 650}
	counts := []float64{1, 2, 3, 4}
	dst := []float64{-1, -1, -1, -1}
	err = r.Correct(px, counts, dst)
	if !errors.Is(err, ErrNonPositive) || !strings.Contains(err.Error(), "pixel 2") {
		t.Errorf("Correct error = %v, want ErrNonPositive at pixel 2", err)
	}
	for _, v := range dst {
		if v != -1 {
			t.Fatalf("Correct modified dst on error: %v", dst)
		}
	}
	// Certificate that does not cover the lamp range.
	_, err = FromStandardLamp(grid(300, 700, 1), make([]float64, 401), irr.WavelengthNM, irr.WPerM2NM, diag.EnergyUnits)
	if !errors.Is(err, ErrOutOfRange) || !strings.Contains(err.Error(), "300.000–700.000") || !strings.Contains(err.Error(), "350.000–800.000") {
		t.Errorf("uncovered lamp range: error %v", err)
	}
}

func TestCorrectAlias(t *testing.T) {
	t.Parallel()
	r, err := FromCurve("flat", []float64{400, 700}, []float64{2, 4}, diag.EnergyUnits)
	if err != nil {
		t.Fatal(err)
	}
	wl := []float64{700, 400, 550}
	y := []float64{8, 8, 9}
	if err := r.Correct(wl, y, y); err != nil {
		t.Fatal(err)
	}
	want := []float64{2, 4, 3} // 8/4, 8/2, 9/3 (R(550) = 3 by linear interpolation)
	for i := range y {
		if math.Abs(y[i]-want[i]) > 1e-15 {
			t.Errorf("aliased Correct: y[%d] = %g, want %g", i, y[i], want[i])
		}
	}
}

func TestFromCurveErrors(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		wl, v []float64
		want  string // must appear in the message
	}{
		{[]float64{400, 500, 450}, []float64{1, 1, 1}, "450 nm"},
		{[]float64{400, 500, 600}, []float64{1, 0, 1}, "at 500 nm"},
		{[]float64{400, 500, 600}, []float64{1, 1, math.NaN()}, "at 600 nm"},
		{[]float64{400, math.Inf(1)}, []float64{1, 1}, "+Inf nm"},
		{[]float64{400}, []float64{1}, "need at least 2"},
		{[]float64{400, 400}, []float64{1, 1}, "does not increase"},
	} {
		_, err := FromCurve("qe_fhpl.csv", tc.wl, tc.v, diag.PhotonUnits)
		if !errors.Is(err, ErrBadTable) || !strings.Contains(err.Error(), "qe_fhpl.csv") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("FromCurve(%v, %v) error %q, want ErrBadTable naming the file and %q", tc.wl, tc.v, err, tc.want)
		}
	}
}

func TestMisusePanics(t *testing.T) {
	t.Parallel()
	r, _ := FromCurve("x", []float64{400, 700}, []float64{1, 1}, diag.EnergyUnits)
	for name, f := range map[string]func(){
		"FromCurve lengths":        func() { FromCurve("x", []float64{1, 2}, []float64{1}, diag.EnergyUnits) },
		"FromStandardLamp lengths": func() { FromStandardLamp([]float64{1}, nil, []float64{1}, []float64{1}, diag.EnergyUnits) },
		"FromGreyBody lengths":     func() { FromGreyBody([]float64{1}, nil, 3000, diag.EnergyUnits) },
		"Correct lengths":          func() { r.Correct([]float64{500}, []float64{1}, nil) },
		"Covers reversed":          func() { r.Covers(600, 500) },
		"empty Response":           func() { (&Response{}).At(500) },
	} {
		func() {
			defer func() {
				p := recover()
				if p == nil {
					t.Errorf("%s: no panic", name)
				} else if s, ok := p.(string); !ok || !strings.HasPrefix(s, "calib: ") {
					t.Errorf("%s: panic %v without the calib: prefix", name, p)
				}
			}()
			f()
		}()
	}
}

// FuzzResponseAt checks invariants of At on random curves: inside the
// range the value lies between the two neighbouring grid values; outside
// it is an ErrOutOfRange error.
func FuzzResponseAt(f *testing.F) {
	f.Add(400.0, 10.0, 1.0, 2.0, 3.0, 455.0)
	f.Add(380.0, 0.01, 5.0, 0.5, 7.0, 380.015)
	f.Fuzz(func(t *testing.T, lo, step, a, b, c, x float64) {
		if !(lo > 0 && lo < 1e6) || !(step > 1e-9 && step < 1e4) || !(a > 0 && b > 0 && c > 0) || math.IsInf(a+b+c, 0) {
			t.Skip()
		}
		wl := []float64{lo, lo + step, lo + 2*step}
		if !(wl[1] > wl[0] && wl[2] > wl[1]) {
			t.Skip()
		}
		r, err := FromCurve("fuzz", wl, []float64{a, b, c}, diag.EnergyUnits)
		if err != nil {
			t.Fatal(err)
		}
		v, err := r.At(x)
		if !(x >= wl[0] && x <= wl[2]) {
			if !errors.Is(err, ErrOutOfRange) {
				t.Fatalf("At(%g) outside %v: err %v", x, wl, err)
			}
			return
		}
		if err != nil {
			t.Fatalf("At(%g) inside %v: %v", x, wl, err)
		}
		p, q := a, b
		if x > wl[1] {
			p, q = b, c
		}
		if v < min(p, q)*(1-1e-15) || v > max(p, q)*(1+1e-15) || math.IsNaN(v) {
			t.Fatalf("At(%g) = %g not between %g and %g", x, v, p, q)
		}
	})
}
