// Package sh99 is a Stark-broadening model of the hydrogen Balmer lines
// Hα … H(12→2) built from the published profile tables of Stehlé &
// Hutcheon (1999), independent of the Gigosos–González–Cardeñoso (2003)
// fits in package diag. It gives, for every Balmer line the tables cover:
// the line profile at any (n_e, T) inside the tables, its widths (FWHM
// and full width at half area, FWHA) as functions of n_e and T, the
// Stark-only widths with the tables' Doppler part removed, and their
// inverse (width → n_e at a given T).
//
// The package is pure: the tables are embedded (data/, see
// data/PROVENANCE.md) and decoded once, on first use; nothing is read
// from disk at run time. It imports nothing of glowlog's.
//
// # The tables
//
// Model microfield method (MMM), pure hydrogen plasma, emitter–perturber
// reduced mass 0.5 (H–H⁺), electrons and ions at the same T. Grid: T =
// 2500 K … 1.259×10⁶ K (10 values), n_e = 10¹⁶ … 3.16×10²⁵ m⁻³ for Hα,
// fewer for higher members (Hβ to 3.16×10²⁴, Hγ 10²⁴, Hδ 10²³, Hε
// 3.16×10²², H8 10²², H9 3.16×10²¹, H10 and H11 10²¹, H12 3.16×10²⁰
// m⁻³), and at the highest densities only the higher temperatures. The
// profiles are per unit frequency against the reduced detuning x = Δν/F₀
// with the Holtsmark field F₀ = 1.25×10⁻⁹ n_e^(2/3) (cgs), one-sided and
// symmetric, and they include Doppler broadening of the emitter at the
// same T.
//
// # Interpolation
//
// In detuning, each tabulated (n_e, T) node profile is interpolated by
// monotone cubic Hermite (PCHIP, Fritsch–Carlson slopes) in ln P against
// u = ½ ln(1 + x²/x_c²), x_c ≈ the half-width: near the centre u ≈
// x²/2x_c² (a Gaussian core is nearly straight), in the wings u → ln x
// (the power-law Stark wings are straight). The interpolant passes
// through every tabulated value without overshoot; the far wing beyond
// the table is a power law. On the tables' detuning grid it measures the
// FWHM and FWHA of known Lorentzian and Gaussian shapes to 0.2 % where
// the grid is dense (≈ 5 points per decade, where every Stark-dominated
// profile's half maximum falls) and to 2.5 % where it is sparse (reached
// only by Doppler-dominated profiles at low n_e). Each node profile is
// normalised to unit area: the tables' own two-sided integral of this
// interpolant is 0.86–1.07 where the Stark part dominates, and depends on
// the interpolation where a Doppler core falls between sparse nodes.
//
// Widths (FWHM and FWHA) are measured on every node profile and
// interpolated linearly in (ln n_e, ln T) in ln w. The FWHM is the full
// width at half of the largest value: for lines with a central dip (Hβ
// and the other even upper levels) the half maximum is taken relative to
// the peaks, not to the centre, and the width is measured between the
// outer half-maximum points.
//
// Between nodes the profile is interpolated in shape, in the reduced
// variable Δλ/W(n_e, T): each of the four surrounding node profiles is
// rescaled in Δλ to the interpolated FWHM W and the rescaled profiles are
// averaged with bilinear weights in (ln n_e, ln T). Every term has unit
// area, so the result has unit area; at a node it is the tabulated
// profile; its FWHM agrees with W to better than 1 %. Frequency and
// wavelength detuning are related by Δλ = λ₀²Δν/c with the tables'
// vacuum λ₀ (Δλ in air differs by the refractive index, 0.03 %).
//
// # Doppler part
//
// The tabulated profiles are Stark ⊗ Doppler(T) with the emitter (H,
// 1.00794 amu) at the table's T. In a discharge the emitters' gas
// temperature is far below T_e, so the tables' Doppler width (0.035 nm
// for Hβ, 0.047 nm for Hα at 10⁴ K) is not the Doppler width of the
// measured line. Profile and TableWidthNM give the tables as they are
// (Stark ⊗ Doppler at T). StarkWidthNM gives the Stark-only width, to be
// compared with the Stark part of a measured line after its own Gaussian
// parts (instrument, Doppler at the gas temperature) are removed. It is
// obtained at every node by
//
//  1. removing the Doppler FWHM as from a Voigt profile whose Lorentzian
//     part is the Stark part (FWHM: Olivero & Longbothum 1977, JQSRT 17,
//     233, inverted; FWHA: the exact half-area width of the Voigt
//     profile, inverted), then
//  2. correcting the shape error of step 1 (the Stark profiles are not
//     Lorentzian) by Richardson extrapolation in the Gaussian variance:
//     the node profile is broadened numerically by one more Gaussian of
//     the Doppler width, step 1 is repeated with the total Gaussian width
//     √2·w_D, and S = 2·s(w_D) − s(√2·w_D).
//
// The same extrapolation from √2·w_D and √3·w_D gives a second estimate;
// DopplerRemovalUncRel reports the larger of the step-2 correction and the
// disagreement of the two estimates as the relative uncertainty of the
// removal. Measured over all lines and nodes (TestDopplerRemovalUncertainty):
// ≤ 0.12 % for the FWHA and ≤ 2.1 % for the FWHM (Hγ's and Hα's sharp
// central components respond to a Gaussian more strongly than w_G²)
// where the Doppler FWHM is under a tenth of the Stark width, and at most
// 8.5 % (Hβ FWHM) where it is comparable. Stark-only widths are reported
// only where the tables' Doppler FWHM is at most the Stark width; below
// that density (e.g. Hα below 3.16×10²¹ m⁻³ and Hβ below 3.16×10²⁰ m⁻³
// at 10⁴ K) they return ErrOutOfRange. Carry DopplerRemovalUncRel as a
// systematic uncertainty.
//
// A whole-profile fit can use the tables exactly where the measured
// Gaussian width (instrument ⊕ gas Doppler) w_G is at least the tables'
// Doppler width: Profile ⊗ Gaussian(√(w_G² − w_D(T)²)) is then exactly
// Stark ⊗ Gaussian(w_G).
//
// # Fast cumulative integrals (Shape)
//
// Line.Shape prepares the interpolated profile at one (n_e, T) for a
// whole-profile fit: its cumulative integral (exact for the width-scaled
// interpolation: a weighted sum of the corner nodes' own cumulatives at
// scaled detunings), the profile, and the cumulative's derivative in
// ln n_e, from a dense table per node profile (built once, cubic
// Hermite, the power-law wing integrated analytically beyond it).
// Differences of the cumulative at pixel or grid edges give exact
// pixel-integrated values with no area lost in the far wings.
//
// # Inverse
//
// At fixed T the interpolated width is piecewise linear in ln n_e between
// density nodes, so DensityFromStarkWidthM3 (and DensityFromTableWidthM3)
// find the root exactly on the bracketing segment of the range where the
// width increases strictly with n_e (checked); a width outside the range
// available at that T returns an error wrapping ErrOutOfRange that names
// the widths and densities available. StarkRange gives that range.
//
// # Accuracy against published widths
//
// At 10⁴ K the Stark-only widths agree with the values read from the same
// tables in glowlog's physics notes (§4.5, §10 items 10–11) within 4 %
// (Hβ FWHM 0.195 / 0.933 / 4.49 nm at 10²¹ / 10²² / 10²³ m⁻³ against
// 0.200 / 0.971 / 4.66; Hα FWHA 0.202 nm at 10²² m⁻³ against 0.204; Hγ
// FWHM 1.18 nm against 1.19); the notes do not say how they interpolated
// in detuning, and linear against log-log interpolation of the same nodes
// differ by up to 5 % for Hβ. The GGC (2003) fits lie above SH99 by
// 6–9 % (Hβ FWHM) and 12–16 % (Hα FWHA) over 10²¹–10²³ m⁻³ at 10⁴ K,
// as expected from ion dynamics, which MMM for μ = 0.5 treats
// differently: carry the spread between models as a systematic
// uncertainty.
//
// References:
//
//	Stehlé, C. & Hutcheon, R. 1999, "Extensive tabulations of Stark
//	broadened hydrogen line profiles", Astron. Astrophys. Suppl. Ser.
//	140, 93–97, doi:10.1051/aas:1999118; tables CDS/VizieR VI/98A.
//
//	Olivero, J. J. & Longbothum, R. L. 1977, "Empirical fits to the Voigt
//	line width: a brief review", JQSRT 17, 233–236.
//
//	Fritsch, F. N. & Carlson, R. E. 1980, "Monotone piecewise cubic
//	interpolation", SIAM J. Numer. Anal. 17, 238–246.
package sh99
