package grating

import (
	"errors"
	"math"
	"testing"

	"glowlog/diag"
)

func balmerAir(t *testing.T, n int) float64 {
	t.Helper()
	tr, err := diag.Balmer(n, diag.Hydrogen)
	if err != nil {
		t.Fatal(err)
	}
	return tr.WavelengthAirNM
}

// TestCheckValues compares with the planning check values of physics.md §8
// (computed there with Python from the same formulas; tolerances are half
// a unit of the last digit given there).
func TestCheckValues(t *testing.T) {
	t.Parallel()
	ha, hb := balmerAir(t, 3), balmerAir(t, 4)
	s := Spectrometer{GroovesPerMM: 1200, Order: 1, FocalLengthMM: 500, SlitWidthUM: 10, PixelSizeUM: 10, Pixels: 1024, IlluminatedWidthMM: 50}
	p, err := s.Littrow(ha)
	if err != nil {
		t.Fatal(err)
	}
	beta, err := DiffractionAngleDeg(hb, 600, 1, 10)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want float64
		tol       float64
	}{
		// physics.md §8, computed: 1200 l/mm, m = 1, Hα Littrow θ = 23.189°.
		{"Littrow θ (°)", p.DiffractionDeg, 23.189, 5e-4},
		{"Littrow α = β (°)", p.IncidenceDeg, p.DiffractionDeg, 1e-12},
		// physics.md §8, computed: dβ/dλ = 1.3055e-3 rad/nm.
		{"dβ/dλ (rad/nm)", p.AngularDispersionRadPerNM, 1.3055e-3, 5e-8},
		// physics.md §8, computed: f = 0.5 m → dλ/dx = 1.532 nm/mm.
		{"dλ/dx (nm/mm)", p.DispersionNMPerMM, 1.532, 5e-4},
		// physics.md §8, computed: 50 mm illuminated → N = 60 000.
		{"R = mN", p.ResolvingPower, 60000, 1e-9},
		// physics.md §8, computed: δλ_min = 0.0109 nm.
		{"δλ_min (nm)", p.TheoreticalNM, 0.0109, 5e-5},
		// Analytic: 10 µm slit × 1.532 nm/mm.
		{"slit-limited (nm)", p.SlitLimitedNM, 0.01 * p.DispersionNMPerMM, 1e-15},
		// Analytic: FSR = λ/m in first order.
		{"FSR (nm)", p.FreeSpectralRangeNM, ha, 0},
		// physics.md §8, computed: 600 l/mm, α = 10°, Hβ → β = 6.779°.
		// Our Hβ (486.1320 nm) gives 6.77848°, which sits on the rounding
		// edge of the three decimals quoted, hence one unit of the last
		// digit as tolerance.
		{"β Hβ 600 l/mm (°)", beta, 6.779, 1e-3},
	} {
		if d := math.Abs(c.got - c.want); d > c.tol {
			t.Errorf("%s = %.7g, want %.7g (|Δ| %.2g > %.2g)", c.name, c.got, c.want, d, c.tol)
		}
	}
}

// TestRoundTrip: β(α) from DiffractionAngleDeg, then WavelengthNM(α, β)
// gives back λ (invariant of the grating equation).
func TestRoundTrip(t *testing.T) {
	t.Parallel()
	for _, g := range []float64{300, 600, 1200, 1800, 2400} {
		for _, m := range []int{-2, -1, 1, 2, 3} {
			for _, alpha := range []float64{-30, 0, 10, 23.189, 45} {
				for _, lam := range []float64{253.652, 364.6, 434.0, 486.13, 656.28, 900} {
					beta, err := DiffractionAngleDeg(lam, g, m, alpha)
					if errors.Is(err, ErrNoOrder) {
						continue
					}
					if err != nil {
						t.Fatal(err)
					}
					if back := WavelengthNM(g, m, alpha, beta); math.Abs(back-lam) > 1e-9*lam {
						t.Errorf("G=%g m=%d α=%g: λ %g → β %g → λ %g", g, m, alpha, lam, beta, back)
					}
				}
			}
		}
	}
}

func TestNoOrder(t *testing.T) {
	t.Parallel()
	// 2400 l/mm: d = 416.7 nm, so m λ/d = 1.575 for Hα in first order.
	_, err := DiffractionAngleDeg(656.28, 2400, 1, 0)
	var oe *OrderError
	if !errors.As(err, &oe) || !errors.Is(err, ErrNoOrder) {
		t.Fatalf("err = %v, want *OrderError matching ErrNoOrder", err)
	}
	if oe.Order != 1 || math.Abs(oe.SinBeta-656.28/416.6666666) > 1e-6 {
		t.Errorf("OrderError = %+v", oe)
	}
	if _, err := LittrowAngleDeg(900, 2400, 1); !errors.Is(err, ErrNoOrder) {
		t.Errorf("Littrow 900 nm at 2400 l/mm: err = %v, want ErrNoOrder", err)
	}
}

func TestValidate(t *testing.T) {
	t.Parallel()
	ok := Spectrometer{GroovesPerMM: 1200, Order: 1, FocalLengthMM: 500, SlitWidthUM: 10, PixelSizeUM: 13.5, Pixels: 2048, IlluminatedWidthMM: 50}
	if err := ok.Validate(); err != nil {
		t.Fatalf("valid spectrometer: %v", err)
	}
	for _, c := range []struct {
		field string
		mod   func(*Spectrometer)
	}{
		{"GroovesPerMM", func(s *Spectrometer) { s.GroovesPerMM = 0 }},
		{"Order", func(s *Spectrometer) { s.Order = 0 }},
		{"FocalLengthMM", func(s *Spectrometer) { s.FocalLengthMM = math.NaN() }},
		{"SlitWidthUM", func(s *Spectrometer) { s.SlitWidthUM = -5 }},
		{"PixelSizeUM", func(s *Spectrometer) { s.PixelSizeUM = 0 }},
		{"Pixels", func(s *Spectrometer) { s.Pixels = 0 }},
		{"IlluminatedWidthMM", func(s *Spectrometer) { s.IlluminatedWidthMM = math.Inf(1) }},
	} {
		s := ok
		c.mod(&s)
		var pe *ParamError
		if err := s.Validate(); !errors.As(err, &pe) || pe.Field != c.field {
			t.Errorf("%s: err = %v", c.field, err)
		}
	}
}

// TestCoverage: the exact edges agree with λ_c ± (L/2) dλ/dx to first
// order (analytic), and the centre is inside.
func TestCoverage(t *testing.T) {
	t.Parallel()
	s := Spectrometer{GroovesPerMM: 1200, Order: 1, FocalLengthMM: 500, SlitWidthUM: 20, PixelSizeUM: 13.5, Pixels: 1024, IlluminatedWidthMM: 50}
	alpha, _ := LittrowAngleDeg(656.28, 1200, 1)
	cov, err := s.Coverage(656.28, alpha)
	if err != nil {
		t.Fatal(err)
	}
	p, _ := s.At(656.28, alpha)
	lin := cov.DetectorWidthMM * p.DispersionNMPerMM
	// The second-order term in x/f (x/f ≤ 0.014 here) changes the span by
	// well under 0.1 %.
	if math.Abs(cov.SpanNM-lin) > 1e-3*lin {
		t.Errorf("span %g nm, linear estimate %g nm", cov.SpanNM, lin)
	}
	if !cov.Contains(656.28) || cov.Contains(486.13) {
		t.Errorf("coverage %+v", cov)
	}
}

// TestOverlaps: physics.md §8 (computed, exact doubling): the
// second-order image of Cu I 327.396 nm is at 654.792 nm, near Hα; Ag I
// 328.068 nm at 656.136 nm; N₂ 337.13 nm at 674.26 nm is far from Hα.
func TestOverlaps(t *testing.T) {
	t.Parallel()
	got := FindOverlaps(1, 2, CommonUVEmitters, BalmerTargets(7), 3, nil)
	find := func(name string, lam float64, n int) *Overlap {
		for i := range got {
			if got[i].Emitter.Name == name && got[i].Emitter.LowNM == lam && got[i].ImageOrder == n {
				return &got[i]
			}
		}
		return nil
	}
	cu := find("Cu I", 327.396, 2)
	if cu == nil || cu.Near == nil || cu.Near.Name != "Hα" {
		t.Fatalf("Cu I 327.396 nm second order not reported near Hα: %+v", got)
	}
	if math.Abs(cu.ApparentLowNM-654.792) > 1e-9 {
		t.Errorf("Cu I image at %g nm, want 654.792", cu.ApparentLowNM)
	}
	ha := balmerAir(t, 3)
	if math.Abs(cu.DistanceNM-(ha-654.792)) > 1e-9 {
		t.Errorf("distance %g, want %g", cu.DistanceNM, ha-654.792)
	}
	if ag := find("Ag I", 328.068, 2); ag == nil || math.Abs(ag.ApparentLowNM-656.136) > 1e-9 {
		t.Errorf("Ag I: %+v", ag)
	}
	if n2 := find("N₂ second positive (0,0) band head", 337.13, 2); n2 != nil {
		t.Errorf("N₂ 674.26 nm is 18 nm from Hα, not within 3 nm: %+v", n2)
	}
	// With the detector covering 600–700 nm the N₂ image (674.26 nm) and
	// the OH band (612–624 nm) are on it.
	cov := &Coverage{LowNM: 600, HighNM: 700}
	got = FindOverlaps(1, 2, CommonUVEmitters, BalmerTargets(7), 3, cov)
	if n2 := find("N₂ second positive (0,0) band head", 337.13, 2); n2 == nil || !n2.OnDetector || n2.Near != nil {
		t.Errorf("N₂ on detector: %+v", n2)
	}
	if oh := find("OH A–X (0,0) band", 306, 2); oh == nil || !oh.OnDetector || oh.ApparentHighNM != 624 {
		t.Errorf("OH on detector: %+v", oh)
	}
}

func TestStarkMeasurability(t *testing.T) {
	t.Parallel()
	// Thresholds are common practice, no source: 0.5 and 1.
	for _, c := range []struct {
		stark, instr float64
		want         Measurability
	}{
		{0.01, 0.05, NotMeasurable},
		{0.025, 0.05, Marginal},
		{0.05, 0.05, Measurable},
		{1, 0.05, Measurable},
	} {
		got, err := StarkMeasurability(c.stark, c.instr)
		if err != nil || got.Grade != c.want {
			t.Errorf("StarkMeasurability(%g, %g) = %+v, %v; want grade %d", c.stark, c.instr, got, err, c.want)
		}
	}
	if _, err := StarkMeasurability(0, 0.05); err == nil {
		t.Error("zero Stark width accepted")
	}
}

// TestUndersampled: FWHMPixels is the practical FWHM over the dispersion
// per pixel, and Undersampled fires below MinFWHMPixels.
func TestUndersampled(t *testing.T) {
	s := Spectrometer{GroovesPerMM: 1200, Order: 1, FocalLengthMM: 500, SlitWidthUM: 20, PixelSizeUM: 13.5, Pixels: 1024, IlluminatedWidthMM: 50}
	p, err := s.Littrow(656.279)
	if err != nil {
		t.Fatal(err)
	}
	// Slit-limited: 20/13.5 pixels (computed).
	if got := p.FWHMPixels(); math.Abs(got-20/13.5) > 1e-9 {
		t.Errorf("FWHM %.6g pixels, want %.6g", got, 20/13.5)
	}
	if !p.Undersampled() {
		t.Errorf("1.48 pixels not undersampled")
	}
	s.SlitWidthUM = 40
	if p, _ = s.Littrow(656.279); p.Undersampled() {
		t.Errorf("%.2f pixels undersampled", p.FWHMPixels())
	}
}

// TestPixelWavelengths: the pixel centres fill the detector's coverage
// (the outer half pixels reach its edges), ascend, and are spaced by the
// centre dispersion per pixel near the centre.
func TestPixelWavelengths(t *testing.T) {
	t.Parallel()
	s := Spectrometer{GroovesPerMM: 1800, Order: 1, FocalLengthMM: 750, SlitWidthUM: 40, PixelSizeUM: 13.5, Pixels: 2048, IlluminatedWidthMM: 60}
	alpha, _ := LittrowAngleDeg(486.13, 1800, 1)
	x, err := s.PixelWavelengths(486.13, alpha)
	if err != nil {
		t.Fatal(err)
	}
	cov, _ := s.Coverage(486.13, alpha)
	p, _ := s.At(486.13, alpha)
	if len(x) != 2048 {
		t.Fatalf("%d pixels", len(x))
	}
	for i := 1; i < len(x); i++ {
		if !(x[i] > x[i-1]) {
			t.Fatalf("pixel %d: %g after %g", i, x[i], x[i-1])
		}
	}
	half := p.DispersionNMPerPixel / 2
	if math.Abs(x[0]-half-cov.LowNM) > 0.02*half || math.Abs(x[len(x)-1]+half-cov.HighNM) > 0.02*half {
		t.Errorf("pixels %g…%g nm, coverage %g…%g nm", x[0], x[len(x)-1], cov.LowNM, cov.HighNM)
	}
	if d := x[1024] - x[1023]; math.Abs(d-p.DispersionNMPerPixel) > 1e-4*d {
		t.Errorf("centre spacing %g nm, dispersion %g nm/pixel", d, p.DispersionNMPerPixel)
	}
	if _, err := (Spectrometer{}).PixelWavelengths(486.13, alpha); err == nil {
		t.Error("invalid spectrometer accepted")
	}
}
