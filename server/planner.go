package server

import (
	"errors"
	"fmt"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
	"glowlog/diag/grating"
	"glowlog/views"
)

// plannerForm is the spectrometer planner's GET form, as typed.
type plannerForm struct {
	Grooves, Order, Focal, Slit, Pixel, Pixels, Incidence, Width, Centre, Stark, Tol string
}

// plannerDefaults: a 0.5 m spectrometer with a 1200 lines/mm grating in
// first order, turned to Hα in Littrow, 20 µm slit and a 1024 × 13.5 µm
// detector.
func plannerDefaults() plannerForm {
	ha, _ := diag.Balmer(3, diag.Hydrogen)
	return plannerForm{Grooves: "1200", Order: "1", Focal: "500", Slit: "20", Pixel: "13.5", Pixels: "1024",
		Incidence: "Littrow", Width: "50", Centre: strconv.FormatFloat(math.Round(ha.WavelengthAirNM*1000)/1000, 'f', -1, 64),
		Stark: "0.1", Tol: "3"}
}

// plannerMaxUpper is the highest Balmer upper level shown (Hε).
const plannerMaxUpper = 7

// plannerInput is the checked form.
type plannerInput struct {
	spec      grating.Spectrometer
	littrow   bool
	alphaDeg  float64
	centreNM  float64
	starkNM   float64
	tolNM     float64
	formValue plannerForm
}

// fieldError is a planner input problem, shown with status 422.
func fieldError(format string, a ...any) error {
	return &userError{http.StatusUnprocessableEntity, sprintf(format, a...)}
}

func bindPlanner(c echo.Context) plannerForm {
	f := plannerDefaults()
	set := func(dst *string, key string) {
		if v := strings.TrimSpace(c.QueryParam(key)); v != "" {
			*dst = v
		}
	}
	set(&f.Grooves, "grooves")
	set(&f.Order, "order")
	set(&f.Focal, "focal")
	set(&f.Slit, "slit")
	set(&f.Pixel, "pixel")
	set(&f.Pixels, "pixels")
	set(&f.Incidence, "incidence")
	set(&f.Width, "width")
	set(&f.Centre, "centre")
	set(&f.Stark, "stark")
	set(&f.Tol, "tol")
	return f
}

func (f plannerForm) check() (plannerInput, error) {
	in := plannerInput{formValue: f}
	num := func(label, s string, min float64, allowZero bool) (float64, error) {
		v, err := strconv.ParseFloat(strings.ReplaceAll(s, ",", "."), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, fieldError("%s: %q is not a number", label, s)
		}
		if v < min || (!allowZero && v == min) {
			if allowZero {
				return 0, fieldError("%s must be at least %g (got %g)", label, min, v)
			}
			return 0, fieldError("%s must be greater than %g (got %g)", label, min, v)
		}
		return v, nil
	}
	var err error
	if in.spec.GroovesPerMM, err = num("Groove density (lines/mm)", f.Grooves, 0, false); err != nil {
		return in, err
	}
	if in.spec.GroovesPerMM > 10000 {
		return in, fieldError("Groove density (lines/mm) must be at most 10 000 (got %g)", in.spec.GroovesPerMM)
	}
	m, err := strconv.Atoi(f.Order)
	if err != nil || m == 0 || m < -20 || m > 20 {
		return in, fieldError("Diffraction order: %q must be a whole number from −20 to 20, not 0 (order 0 does not disperse)", f.Order)
	}
	in.spec.Order = m
	if in.spec.FocalLengthMM, err = num("Focal length (mm)", f.Focal, 0, false); err != nil {
		return in, err
	}
	if in.spec.SlitWidthUM, err = num("Slit width (µm)", f.Slit, 0, false); err != nil {
		return in, err
	}
	if in.spec.PixelSizeUM, err = num("Pixel size (µm)", f.Pixel, 0, false); err != nil {
		return in, err
	}
	px, err := strconv.Atoi(f.Pixels)
	if err != nil || px < 1 || px > 100000 {
		return in, fieldError("Number of pixels: %q must be a whole number from 1 to 100 000", f.Pixels)
	}
	in.spec.Pixels = px
	if strings.EqualFold(f.Incidence, "littrow") {
		in.littrow = true
	} else {
		a, err := strconv.ParseFloat(strings.ReplaceAll(f.Incidence, ",", "."), 64)
		if err != nil || math.IsNaN(a) || !(a > -90 && a < 90) {
			return in, fieldError("Incidence angle: %q must be \"Littrow\" or an angle in degrees between −90 and 90", f.Incidence)
		}
		in.alphaDeg = a
	}
	if in.spec.IlluminatedWidthMM, err = num("Illuminated grating width (mm)", f.Width, 0, false); err != nil {
		return in, err
	}
	if in.centreNM, err = num("Centre wavelength (nm)", f.Centre, 0, false); err != nil {
		return in, err
	}
	if in.starkNM, err = num("Stark FWHM to check (nm)", f.Stark, 0, false); err != nil {
		return in, err
	}
	if in.tolNM, err = num("Overlap tolerance (nm)", f.Tol, 0, true); err != nil {
		return in, err
	}
	return in, nil
}

func (s *Server) showPlanner(c echo.Context) error {
	f := bindPlanner(c)
	props := views.PlannerProps{Layout: s.layout(c, "Spectrometer planner", "planner"), Form: plannerFormView(f)}
	in, err := f.check()
	if err == nil {
		props.Result, err = planSpectrometer(in)
	}
	var ue *userError
	if errors.As(err, &ue) {
		props.Error = ue.msg
		return render(c, ue.code, views.Planner(props))
	}
	if err != nil {
		return err
	}
	return render(c, http.StatusOK, views.Planner(props))
}

func plannerFormView(f plannerForm) views.PlannerForm {
	return views.PlannerForm{Grooves: f.Grooves, Order: f.Order, Focal: f.Focal, Slit: f.Slit, Pixel: f.Pixel,
		Pixels: f.Pixels, Incidence: f.Incidence, Width: f.Width, Centre: f.Centre, Stark: f.Stark, Tol: f.Tol}
}

// planSpectrometer computes the planner's results. Problems caused by the
// input (no diffraction at the centre wavelength) come back as 422
// userErrors.
func planSpectrometer(in plannerInput) (*views.PlannerResult, error) {
	sp := in.spec
	alpha := in.alphaDeg
	if in.littrow {
		th, err := grating.LittrowAngleDeg(in.centreNM, sp.GroovesPerMM, sp.Order)
		if err != nil {
			return nil, fieldError("No diffraction order %d at the centre wavelength %g nm with %g lines/mm: "+
				"m λ/(2d) = %.3f exceeds 1, so there is no Littrow angle. Use a lower order or a coarser grating.",
				sp.Order, in.centreNM, sp.GroovesPerMM, float64(sp.Order)*in.centreNM*sp.GroovesPerMM/2e6)
		}
		alpha = th
	}
	centre, err := sp.At(in.centreNM, alpha)
	if err != nil {
		var oe *grating.OrderError
		if errors.As(err, &oe) {
			return nil, fieldError("No diffraction order %d at the centre wavelength %g nm for an incidence of %g° with %g lines/mm: "+
				"sin β would be %.3f. Change the incidence angle (or choose Littrow), the order or the grating.",
				sp.Order, in.centreNM, alpha, sp.GroovesPerMM, oe.SinBeta)
		}
		return nil, fieldError("%s", err.Error())
	}
	cov, err := sp.Coverage(in.centreNM, alpha)
	if err != nil {
		return nil, err
	}
	r := &views.PlannerResult{Littrow: in.littrow, IncidenceDeg: alpha, Centre: centre, Coverage: cov, Order: sp.Order,
		Grooves: sp.GroovesPerMM, ToleranceNM: in.tolNM}
	r.Limit = limitName(centre)
	targets := grating.BalmerTargets(plannerMaxUpper)
	for _, t := range targets {
		row := views.PlannerLine{Name: t.Name, WavelengthNM: t.WavelengthNM, OnDetector: cov.Contains(t.WavelengthNM)}
		var p grating.Point
		if in.littrow {
			p, err = sp.Littrow(t.WavelengthNM)
		} else {
			p, err = sp.At(t.WavelengthNM, alpha)
		}
		if errors.Is(err, grating.ErrNoOrder) {
			row.Problem = fmt.Sprintf("no diffraction order %d at this wavelength", sp.Order)
		} else if err != nil {
			return nil, err
		} else {
			row.OK, row.Point = true, p
		}
		r.Lines = append(r.Lines, row)
	}
	for _, o := range grating.FindOverlaps(sp.Order, 2, grating.CommonUVEmitters, targets, in.tolNM, &cov) {
		r.Overlaps = append(r.Overlaps, views.PlannerOverlap{Overlap: o})
	}
	chk, err := grating.StarkMeasurability(in.starkNM, centre.PracticalNM)
	if err != nil {
		return nil, fieldError("%s", err.Error())
	}
	r.Stark = chk
	r.StarkVerdict = starkVerdict(chk)
	if centre.Undersampled() {
		r.SamplingWarning = fmt.Sprintf("Undersampled: the instrument FWHM of %s nm spans only %s pixels (fewer than %s). "+
			"Line widths measured with this set-up are unreliable, and glowlog gives no electron density from a line narrower than %s pixels. "+
			"Widen the slit a little, or use a detector with smaller pixels or a longer focal length.",
			views.SigFig(centre.PracticalNM, 3), views.SigFig(centre.FWHMPixels(), 2), views.SigFig(grating.MinFWHMPixels, 2),
			views.SigFig(grating.MinFWHMPixels, 2))
	}
	return r, nil
}

func limitName(p grating.Point) string {
	switch p.PracticalNM {
	case p.SlitLimitedNM:
		return "slit width"
	case p.PixelLimitedNM:
		return "pixel size"
	default:
		return "grating resolving power"
	}
}

func starkVerdict(c grating.StarkCheck) string {
	base := fmt.Sprintf("The Stark FWHM of %s nm is %s × the instrument FWHM of %s nm.",
		views.SigFig(c.StarkFWHMNM, 3), views.SigFig(c.Ratio, 2), views.SigFig(c.InstrumentFWHMNM, 3))
	switch c.Grade {
	case grating.Measurable:
		return "Measurable. " + base + " A Voigt fit separates the Stark (Lorentzian) part from the instrument function; " +
			"measure the instrument function on a narrow lamp line all the same."
	case grating.Marginal:
		return "Marginal. " + base + " It can be separated only with the instrument function measured on a lamp line and held " +
			"fixed in the fit; expect a large uncertainty in the electron density. A narrower slit, a finer grating, a higher order " +
			"or a longer focal length would help."
	default:
		return "Not measurable with this set-up. " + base + " Below about half the instrument width a Voigt fit cannot separate " +
			"the Stark part reliably: narrow the slit, use a finer grating, a higher order or a longer focal length."
	}
}
