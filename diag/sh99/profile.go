package sh99

import (
	"fmt"
	"math"
)

// Citation is the full reference of the tables, to be shown with every
// result computed from them.
const Citation = "Stehlé, C. & Hutcheon, R. 1999, \"Extensive tabulations of Stark broadened " +
	"hydrogen line profiles\", Astron. Astrophys. Suppl. Ser. 140, 93–97, doi:10.1051/aas:1999118; " +
	"tables CDS/VizieR VI/98A (model microfield method, pure hydrogen plasma, μ = 0.5)"

// Balmer returns the line n_u → 2 with upper level upper from the
// embedded tables (decoded on first use). It returns an error for a line
// the tables do not cover or if the embedded data cannot be decoded.
func Balmer(upper int) (*Line, error) {
	s, err := load()
	if err != nil {
		return nil, err
	}
	if l, ok, err := s.line(upper); ok {
		return l, err
	}
	return nil, fmt.Errorf("sh99: the Stehlé–Hutcheon tables do not cover the Balmer line n=%d→2 (covered upper levels: %d…%d)",
		upper, s.order[0], s.order[len(s.order)-1])
}

// Uppers returns the upper levels of the Balmer lines the tables cover,
// ascending.
func Uppers() ([]int, error) {
	s, err := load()
	if err != nil {
		return nil, err
	}
	return append([]int(nil), s.order...), nil
}

// prepared is a profile evaluation at a fixed (n_e, T): the corner nodes
// with their weights and the scale factors of the width-scaled
// interpolation.
type prepared struct {
	n     int
	node  [4]*nodeProfile
	wgt   [4]float64 // bilinear weight
	scale [4]float64 // W_c/W
	xnm   [4]float64 // x per nm at the corner's n_e
	norm  [4]float64 // 1/(2∫₀^∞P dx) at the corner
}

func (l *Line) prepare(neM3, tK float64) (prepared, error) {
	g := l.lw[FWHM][0]
	c, err := l.locate(neM3, tK, g, "profile")
	if err != nil {
		return prepared{}, err
	}
	var lW float64
	c.each(func(j, k int, w float64) { lW += w * g[j][k] })
	var p prepared
	c.each(func(j, k int, w float64) {
		np, nerr := l.node(j, k)
		if nerr == nil && np == nil {
			nerr = fmt.Errorf("sh99: %s: node (%d, %d) has a width but no profile", l.name(), j, k)
		}
		if nerr != nil {
			if err == nil {
				err = nerr
			}
			return
		}
		p.node[p.n] = np
		p.wgt[p.n] = w
		p.scale[p.n] = math.Exp(g[j][k] - lW)
		p.xnm[p.n] = l.xPerNM[j]
		p.norm[p.n] = 0.5 / np.half
		p.n++
	})
	if err != nil {
		return prepared{}, err
	}
	return p, nil
}

func (p *prepared) at(dlNM float64) float64 {
	d := math.Abs(dlNM)
	var v float64
	for i := range p.n {
		x := d * p.scale[i] * p.xnm[i]
		v += p.wgt[i] * p.scale[i] * p.xnm[i] * p.norm[i] * p.node[i].at(x)
	}
	return v
}

// Profile returns the line profile in nm⁻¹ at detuning dlNM (nm, from the
// line centre, either side) for electron density neM3 (m⁻³) and
// temperature tK (K): the tables' Stark ⊗ Doppler(T) profile, normalised
// to unit area over Δλ.
//
// Between grid nodes the profile is interpolated in shape: each of the
// four surrounding node profiles (each normalised to unit area) is
// rescaled in Δλ to the interpolated FWHM W(n_e, T), and the rescaled
// profiles are averaged with bilinear weights in (ln n_e, ln T):
//
//	p(Δλ) = Σ_c w_c (W_c/W) p̂_c(Δλ·W_c/W)
//
// W itself is interpolated linearly in (ln n_e, ln T) in ln W. Every term
// has unit area, so p has unit area; at a grid node p is the tabulated
// profile (renormalised). Frequency and wavelength detuning are related
// by Δλ = λ₀²Δν/c. Outside the tabulated grid it returns an error
// wrapping ErrOutOfRange.
func (l *Line) Profile(dlNM, neM3, tK float64) (float64, error) {
	p, err := l.prepare(neM3, tK)
	if err != nil {
		return 0, err
	}
	return p.at(dlNM), nil
}

// ProfileInto evaluates Profile at every detuning of dlNM into dst (which
// must have the same length) and returns dst; the (n_e, T) look-up is
// done once.
func (l *Line) ProfileInto(dst, dlNM []float64, neM3, tK float64) ([]float64, error) {
	if len(dst) != len(dlNM) {
		panic(fmt.Sprintf("sh99: ProfileInto: len(dst) = %d, len(dlNM) = %d", len(dst), len(dlNM)))
	}
	p, err := l.prepare(neM3, tK)
	if err != nil {
		return nil, err
	}
	for i, d := range dlNM {
		dst[i] = p.at(d)
	}
	return dst, nil
}
