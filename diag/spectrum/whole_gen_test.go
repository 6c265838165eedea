package spectrum

// A generator of multi-line Balmer spectra with the Stehlé & Hutcheon
// (1999) shapes for the whole-spectrum fit's tests: every line the tables
// cover at (n_e, T_e) is the tabulated profile (sh99 Line.Profile, not
// the Shape cumulative the fit uses) at T_e, convolved numerically on a
// fine grid with the Gaussian still missing, √(instrument² +
// Doppler(T_gas)² − Doppler(T_e)²), with an area from a Boltzmann
// population at T_exc (photon units), integrated over each pixel by the
// trapezoidal cumulative of the fine grid, on a sloped continuum, with
// Poisson (as Gaussian) and read noise in electrons. Its settings (grids,
// densities, seeds) are our own; testdata/sh99synth and
// testdata/wholesynth are never used to set anything in the fit.

import (
	"math"
	"math/rand/v2"

	"glowlog/diag"
	"glowlog/diag/sh99"
)

type wgen struct {
	lo, hi     float64
	npx        int
	uppers     []int
	texc, ne   float64
	te         float64
	instG      float64
	gasT       float64
	peakCounts float64 // counts per pixel at the strongest line's peak (roughly)
	baseFrac   float64 // continuum per pixel / peak counts
	gain, read float64
	// areaScale multiplies given lines' areas (non-Boltzmann populations).
	areaScale map[int]float64
	offset    float64 // true wavelength offset, nm
}

type wtruth struct {
	areas map[int]float64 // per-nm intensity × nm (per-nm units of the pipeline)
}

// gen returns the spectrum (counts) and the truth.
func (g wgen) gen(rng *rand.Rand) (*Spectrum, wtruth, error) {
	x := make([]float64, g.npx)
	for i := range x {
		x[i] = g.lo + (g.hi-g.lo)*float64(i)/float64(g.npx-1)
	}
	px := x[1] - x[0]
	te := g.te
	if te == 0 {
		te = 1e4
	}
	dens := make([]float64, g.npx) // per-nm signal density, pixel mean, relative
	tr := wtruth{areas: map[int]float64{}}
	ha, _ := diag.Balmer(3, diag.Hydrogen)
	kT := diag.BoltzmannEVPerK * g.texc
	type ln struct {
		c, a float64
		prof []float64
		fx0  float64
		h    float64
	}
	var maxPeak float64
	var lines []ln
	for _, up := range g.uppers {
		t, _ := diag.Balmer(up, diag.Hydrogen)
		l, err := sh99.Balmer(up)
		if err != nil {
			return nil, tr, err
		}
		if _, err := l.Profile(0, g.ne, te); err != nil {
			continue
		}
		a := float64(t.GUpper) * t.EinsteinA / (float64(ha.GUpper) * ha.EinsteinA) * math.Exp(-(t.UpperEnergyEV-ha.UpperEnergyEV)/kT)
		if s, ok := g.areaScale[up]; ok {
			a *= s
		}
		wD := diag.DopplerFWHMNM(t.WavelengthAirNM, g.gasT, diag.EmitterMassAMU(diag.Hydrogen))
		g2 := g.instG*g.instG + wD*wD - math.Pow(l.DopplerFWHMNM(te), 2)
		if g2 < 0 {
			g2 = 0
		}
		wT, _ := l.TableWidthNM(sh99.FWHM, g.ne, te)
		gs := math.Sqrt(g2) / (2 * math.Sqrt(2*math.Ln2))
		h := math.Min(px/10, math.Min(wT, math.Max(math.Sqrt(g2), wT))/12)
		span := math.Max(400*wT, 60*math.Sqrt(g2)) + 40*px
		span = math.Min(span, 160)
		m := int(2*span/h) + 1
		if m > 400000 {
			h = 2 * span / 400000
			m = 400001
		}
		c := t.WavelengthAirNM + g.offset
		fx := make([]float64, m)
		for i := range fx {
			fx[i] = -span + float64(i)*h
		}
		prof := make([]float64, m)
		if _, err := l.ProfileInto(prof, fx, g.ne, te); err != nil {
			return nil, tr, err
		}
		if gs > h/4 {
			kh := int(6 * gs / h)
			kern := make([]float64, 2*kh+1)
			var ks float64
			for j := range kern {
				d := float64(j-kh) * h
				kern[j] = math.Exp(-d * d / (2 * gs * gs))
				ks += kern[j]
			}
			conv := make([]float64, m)
			for i := range conv {
				var s float64
				for j, kv := range kern {
					if k := i + j - kh; k >= 0 && k < m {
						s += kv * prof[k]
					}
				}
				conv[i] = s / ks
			}
			prof = conv
		}
		var pk float64
		for _, v := range prof {
			pk = math.Max(pk, v)
		}
		maxPeak = math.Max(maxPeak, a*pk)
		lines = append(lines, ln{c: c, a: a, prof: prof, fx0: -span, h: h})
		tr.areas[up] = a
	}
	for _, l := range lines {
		// Cumulative (trapezoid), with the tail beyond the grid as a
		// power law Δλ^(−5/2) matched at the ends.
		m := len(l.prof)
		cum := make([]float64, m)
		for i := 1; i < m; i++ {
			cum[i] = cum[i-1] + 0.5*l.h*(l.prof[i]+l.prof[i-1])
		}
		at := func(v float64) float64 {
			f := (v - l.c - l.fx0) / l.h
			switch {
			case f <= 0:
				d := -(v - l.c)
				return l.prof[0] * (-l.fx0) / 1.5 * math.Pow(d/(-l.fx0), -1.5)
			case f >= float64(m-1):
				d := v - l.c
				end := l.fx0 + float64(m-1)*l.h
				return cum[m-1] + l.prof[0]*(-l.fx0)/1.5 + l.prof[m-1]*end/1.5*(1-math.Pow(d/end, -1.5))
			}
			i := int(f)
			return l.prof[0]*(-l.fx0)/1.5 + cum[i] + (f-float64(i))*(cum[i+1]-cum[i])
		}
		for i := range x {
			a, b := pixelEdgesAt(x, i)
			dens[i] += l.a * (at(b) - at(a)) / (b - a)
		}
	}
	// Scale: counts per pixel.
	k := g.peakCounts / (maxPeak * px)
	for up := range tr.areas {
		tr.areas[up] *= k
	}
	counts := make([]float64, g.npx)
	base := g.baseFrac * g.peakCounts
	slope := 0.3 * (rng.Float64() - 0.5)
	for i := range x {
		u := (x[i] - 0.5*(g.lo+g.hi)) / (g.hi - g.lo)
		s := dens[i]*k*px + base*(1+slope*u)
		e := s * g.gain
		sig := math.Sqrt(math.Max(e, 0) + g.read*g.read)
		counts[i] = (e + sig*rng.NormFloat64()) / g.gain
	}
	return &Spectrum{Name: "wgen", WavelengthNM: x, Counts: counts}, tr, nil
}

// wopt returns analysis options matching the generator.
func (g wgen) wopt(model string) Options {
	return Options{Model: model, GainElectronsPerCount: g.gain, ReadNoiseElectrons: g.read,
		Conditions: diag.Measurement{InstrumentGaussFWHMNM: g.instG, GasTemperatureK: g.gasT}}
}
