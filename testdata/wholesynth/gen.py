#!/usr/bin/python3
"""Accuracy check set for the whole-spectrum fit: Balmer spectra shaped by
the Stehle & Hutcheon (1999) Stark profiles at densities between the
tables' nodes, pixel-integrated, with Poisson and read noise.

Run with Debian's Python, numpy and scipy (python3-scipy; no pip):

    /usr/bin/python3 testdata/wholesynth/gen.py

It rewrites, next to this script, byte for byte the same every time (every
random number comes from numpy's default_rng with a fixed seed):

    survey_NN.csv, hires_ha_NN.csv, hires_hb_NN.csv
                        wavelength_nm (standard air), counts per pixel
                        (dark-subtracted ADU, integers)
    <name>.truth.json   everything that went in (n_e, T_exc, T_e, T_gas,
                        instrument, detector, continuum, seed, lines ...)
    response_survey.csv, response_hires.csv
                        the relative spectral response applied
                        (wavelength_nm, response), for the analysis

Two groups:
  survey   40 spectra, 2048 px over 376-700 nm (slightly non-uniform
           dispersion, 0.15-0.17 nm/px), instrument FWHM 0.3-0.8 nm,
           Balmer members Halpha ... H12 as far as the tables cover them
  hires    40 spectra, windows around Halpha (20) or Hbeta (20), instrument
           FWHM 0.03-0.1 nm sampled at 2.8 px per FWHM on 2048 px (4096 px
           when the line is too wide for 2048), every member the tables
           cover computed (their wings reach into the window)
Parameters (stratified random, a Latin hypercube per group): n_e
log-uniform over 1e20-3e23 m^-3, never within 1 % of a table node; T_exc
uniform over 3000-15000 K; peak SNR log-uniform over 30-3000.

The set is independent of glowlog's Go code: nothing here calls, ports or
copies it. Shared is only the published table, read from the project's
copy diag/sh99/data/stehle-hutcheon-1999-balmer.json.gz (layout and source
in diag/sh99/data/PROVENANCE.md and /work/shared/physics.md section 4.5).

Physics, step by step
---------------------
1. The tables. Stehle, C. & Hutcheon, R. 1999, A&AS 140, 93
   (doi:10.1051/aas:1999118; CDS VizieR VI/98A), model microfield method,
   pure hydrogen (H-H+, reduced mass 0.5), electrons and ions at the
   tables' temperature T. Each node (n_e, T) gives a profile per unit
   frequency P(x) at the one-sided reduced detuning x = |nu - nu0|/F0,
   F0 = 1.25e-9 n_e^(2/3) (cgs, n_e in cm^-3, detuning in Hz); the
   profiles INCLUDE Doppler broadening of the emitter at T.

2. Electron temperature and what the tables cover. The electron
   temperature (the tables' T) is a node, so only n_e is interpolated:
     n_e < 1e22 m^-3            T_e = 5000 K
     1e22 <= n_e < 1e23 m^-3    T_e = 10000 K  (the 3.16e16 and 1e17 cm^-3
                                               nodes exist only from 1e4 K)
     n_e >= 1e23 m^-3           T_e = 19950 K  (3.16e17 cm^-3 only from
                                               19950 K)
   A member is put into the spectrum only when both density nodes that
   bracket n_e are tabulated at T_e for it. At T_e the tables reach
   (m^-3): Halpha 3.16e25 (from 19950 K: 3.16e23), Hbeta 3.16e24, Hgamma
   1e24, Hdelta 1e23, Hepsilon 3.16e22, H8 1e22, H9 3.16e21, H10 and H11
   1e21, H12 3.16e20; so at the top of the density range the survey
   spectra hold Halpha, Hbeta and Hgamma only (Hdelta stops at 1e23), at
   1e22 up to H8, at 1e20 up to H12. The members left out are listed in
   each truth file ("omitted_lines", with the reason). In a real plasma
   they would be Stark-merged into a quasi-continuum near the series limit
   (Inglis-Teller: the last resolved member at 3e22 m^-3 is n ~ 8, at
   3e23 m^-3 n ~ 6), which this set does not model: no light of the
   omitted members at all. H13 and higher (outside the tables; H13 at
   373.44 nm lies 2.6 nm below the survey range) are never included.

3. Interpolation in n_e (our own scheme; glowlog's diag/sh99 uses a
   different one). At each node j the profile is put on a width-reduced
   detuning v = x/h_j, with h_j the node's half width at half maximum in
   x (half of the LARGEST value, outermost crossing, so Hbeta's central
   dip does not count): s_j(v) = h_j F0_j P_j(v h_j), normalised to unit
   area over v (both sides). In v, ln s_j is interpolated by Akima splines
   (scipy Akima1DInterpolator) against t = 0.5 ln(1 + v^2) (even in v,
   logarithmic in the wings). Between the bracketing nodes j, j+1 the
   shape is the geometric mix ln s = (1-w) ln s_j + w ln s_{j+1}, w
   linear in ln n_e, renormalised to unit area; the half width in Hz,
   H = h F0, is interpolated by PCHIP of ln H_j against ln n_e over all
   density nodes tabulated at T_e. Why not the reduced detuning x itself:
   where the tables' Doppler part matters (low n_e) its width in x scales
   as n_e^(-2/3), so mixing two nodes at fixed x would mix two Gaussians
   of widths 2.15x apart; on the width-reduced detuning both node shapes
   share the same core and the geometric mix of two shapes with unit half
   width has unit half width again. Beyond the tabulated detuning (~1e4
   half widths) the profile is 0 (area there negligible).
   Frequency to air wavelength: lambda_vac = lambda_air n_air (IAU /
   Morton 2000, ApJS 130, 403, Birch & Downs 1994 coefficients; n_air at
   the line), nu = c/lambda_vac, density per nm from |d nu/d lambda|; the
   line centre is the NIST observed air wavelength.

4. Doppler, instrument and natural width. The tables hold Stark (x)
   Doppler(T_e) with the emitter H (1.00794 u): w_D(T) = lambda
   sqrt(8 k T ln2/(M c^2)). The spectrum must be Stark (x) Doppler(T_gas)
   (x) instrument (x) natural Lorentzian (below) = Stark (x) a Gaussian of
   FWHM w_G = sqrt(w_inst^2 + w_D(T_gas)^2) (x) that Lorentzian. When w_G >=
   w_D(T_e) that equals table (x) Gaussian(sqrt(w_G^2 - w_D(T_e)^2))
   exactly (Gaussians convolve in quadrature): the tables' own Doppler
   part is REPLACED by the true Gaussian without any deconvolution. The
   set is built so that this always holds:
     n_e < 1e22 m^-3 (T_e = 5000 K): T_gas is drawn uniformly from
       [max(300 K, 1.05 T_min), 3000 K], where T_min makes w_G = w_D(T_e)
       at the window's most demanding line (only the hires Halpha windows
       with instrument FWHM below 0.033 nm need it);
     n_e >= 1e22 m^-3: T_gas = T_e (dense, collision-dominated plasma:
       heavy particles at the electron temperature), so the tables'
       Doppler part IS the true Doppler part and only the instrument is
       convolved.
   Natural (radiative) broadening: the tables hold Stark (electrons and
   ions) and Doppler broadening only (their far wing at the lowest
   density node, 1e16 m^-3, is below 0.3 % of a natural Lorentzian's), and
   every real line also has its natural Lorentzian, FWHM Delta nu =
   (Gamma_u + Gamma_2)/(2 pi) with Gamma_n the total decay rate of level
   n, its l-substates statistically populated (Gamma_n = sum over n' < n
   of the n-averaged A(n -> n'), computed exactly from the Gordon (1929)
   radial integrals: physics.md section 1.4; they reproduce the A values
   typed in below to 2e-5, and physics.md section 5.2's Gamma_2 ...
   Gamma_5). Halpha 1.30e-4 nm, Hbeta 6.3e-5 nm, H12 3.5e-5 nm: small
   against the Stark widths at the top of the range, but at 1e20 m^-3
   Halpha's tabulated wing 0.2-1 nm out is that of a Lorentzian of only
   0.005-0.0024 nm, so the natural wing adds 3-5 % there.
   The convolution is done per line by FFT on a fine uniform grid (step
   <= 1/20 of the narrowest table FWHM or Gaussian present), multiplying
   the transform by the exact Gaussian and Lorentzian transfer functions
   exp(-2 pi^2 sigma^2 f^2 - pi w_L |f|) with zero padding.

5. Line areas (photon units): LTE Boltzmann populations of the upper
   levels at T_exc, area ~ g_k A_k2 exp(-E_k/k T_exc). Line data (NIST
   ASD): observed air wavelengths; E_k from the NIST level centroids for
   n = 3-6 (97492.304, 102823.904, 105291.657, 106632.168 cm^-1) and the
   Dirac-average + Lamb-shift values of physics.md section 1.2 for n >= 7
   (computed, they match NIST to 1e-6 eV for n = 3-6); A from Wiese &
   Fuhr 2009 (J. Phys. Chem. Ref. Data 38, 565) as served by NIST ASD for
   n = 3-6, and for n >= 7 the exact (Gordon-formula) values of
   physics.md section 1.2, which reproduce every NIST value seen to 2e-5
   (the NIST entries for n >= 7 were not seen: "computed"); g_k = 2 n^2.
   glowlog computes its A values itself; these are typed in here.

6. Continuum: smooth on the scale of the whole visible range (the same
   kind of continuum in a 20 nm window as in a survey spectrum),
   c0 (1 + a v + b v^2), v = (lambda - 540 nm)/300 nm, c0 = 1-5 % of the
   strongest line's peak photon density, a in [-0.5, 0.5] and b in
   [-0.3, 0.3] drawn.

7. Response: the photon spectrum is multiplied by a smooth relative
   response R(lambda) (per group; written to response_<group>.csv at
   0.5 nm steps over 340-720 nm; linear interpolation of that file
   differs from R by < 1e-4 relative). Counts per nm divided by R give
   the photon spectrum back; the truth areas are in those units
   (counts per nm / R x nm).

8. Pixel integration: expected counts of a pixel = integral of the model
   over the pixel (cumulative trapezoid on the fine grid, differenced at
   the pixel edges halfway between centres), not the value at the centre.

9. Noise and scale: the expected counts are scaled so that the largest
   pixel has the drawn peak SNR, SNR = N/sqrt(N + r^2) with N its
   electrons and r the read noise (N = (SNR^2 + sqrt(SNR^4 + 4 SNR^2
   r^2))/2); then electrons ~ Poisson, + Gaussian read noise, / gain,
   rounded to integer ADU. Dark-subtracted, so values can be negative.

Truth files: every input, and per line the area (response-corrected
units), the interpolated table FWHM (Stark + Doppler(T_e), air nm), the
Gaussian exchanged, the natural FWHM, the total FWHM of the noise-free line, its peak
expected counts above the continuum and its peak SNR (that peak over the
noise at that pixel), and the fraction of its area inside the range.
"""
import gzip
import json
import os
import sys

import numpy as np
import scipy
from scipy import constants as sc
from scipy.integrate import cumulative_trapezoid, trapezoid
from scipy.interpolate import Akima1DInterpolator, PchipInterpolator

HERE = os.path.dirname(os.path.abspath(__file__))
TABLE = os.path.join(HERE, "..", "..", "diag", "sh99", "data", "stehle-hutcheon-1999-balmer.json.gz")

KB_EV = sc.k / sc.e  # Boltzmann constant in eV/K (CODATA 2018, scipy.constants)
HC_EV_CM = sc.h * sc.c / sc.e * 100.0  # hc in eV cm
M_H = 1.00794 * sc.atomic_mass  # H atomic weight (IUPAC); the tables' emitter

# upper level: name, NIST ASD observed air wavelength (nm), E_k (eV), g_k,
# A_k2 (s^-1). Sources: module docstring, step 5 (physics.md section 1.2).
LINES = {
    3: ("Halpha", 656.279, 97492.304 * HC_EV_CM, 18, 4.4101e7),  # NIST ASD (Wiese & Fuhr 2009)
    4: ("Hbeta", 486.135, 102823.904 * HC_EV_CM, 32, 8.4193e6),  # NIST ASD
    5: ("Hgamma", 434.0472, 105291.657 * HC_EV_CM, 50, 2.5304e6),  # NIST ASD
    6: ("Hdelta", 410.1734, 106632.168 * HC_EV_CM, 72, 9.7320e5),  # NIST ASD
    7: ("Hepsilon", 397.0075, 13.32092, 98, 4.3889e5),  # lambda NIST; E, A computed (physics.md 1.2)
    8: ("H8", 388.9064, 13.38596, 128, 2.2148e5),  # same
    9: ("H9", 383.5397, 13.43055, 162, 1.2156e5),
    10: ("H10", 379.7909, 13.46245, 200, 7.1224e4),
    11: ("H11", 377.0633, 13.48605, 242, 4.3972e4),
    12: ("H12", 375.0151, 13.50400, 288, 2.8337e4),
}

NE_RANGE_M3 = (1e20, 3e23)
CONT_MID_NM, CONT_SCALE_NM = 540.0, 300.0  # continuum shape variable (step 6)
TEXC_RANGE_K = (3000.0, 15000.0)
SNR_RANGE = (30.0, 3000.0)
N_SURVEY = 40
N_HIRES = 40  # half Halpha, half Hbeta

GROUPS = {
    "survey": dict(pixels=2048, lo=376.0, hi=700.0, curv=0.05, inst=(0.3, 0.8), gain=2.0, read=20.0, digits=5,
                   resp=lambda l: np.exp(-((l - 540.0) / 230.0) ** 2) * (1 + 0.25 * (l - 540.0) / 230.0) + 0.08),
    "hires": dict(inst=(0.03, 0.1), px_per_fwhm=2.8, gain=1.0, read=5.0, digits=6,
                  resp=lambda l: 0.55 + 0.45 * np.exp(-((l - 560.0) / 140.0) ** 2)),
}


# The natural width from the Gordon (1929) decay rates, shared with the other check-set
# generator (testdata/scipy/natural_width.py).
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "scipy"))
from natural_width import n_air, natural_fwhm_nm, voigt_convolve  # noqa: E402


def doppler_fwhm(lam_nm, t_k):
    return lam_nm * np.sqrt(8 * sc.k * t_k * np.log(2) / (M_H * sc.c ** 2))


def electron_temperature(ne_m3):
    """The tables' temperature node used at n_e (docstring, step 2)."""
    if ne_m3 < 1e22:
        return 5000.0
    if ne_m3 < 1e23:
        return 10000.0
    return 19950.0


def hwhm(x, y):
    """Half width at half of the largest value, outermost crossing (one-sided
    profile on x >= 0), linear interpolation."""
    half = y.max() / 2
    i = np.nonzero(y >= half)[0][-1]
    return x[i] + (x[i + 1] - x[i]) * (y[i] - half) / (y[i] - y[i + 1])


def fwhm_on_grid(xg, yg):
    """Full width at half of the largest value between the outermost
    crossings (Hbeta's dip does not count)."""
    half = yg.max() / 2
    idx = np.nonzero(yg >= half)[0]
    a, b = idx[0], idx[-1]
    xl = xg[a - 1] + (xg[a] - xg[a - 1]) * (half - yg[a - 1]) / (yg[a] - yg[a - 1])
    xr = xg[b] + (xg[b + 1] - xg[b]) * (yg[b] - half) / (yg[b] - yg[b + 1])
    return xr - xl


class NodeShape:
    """One tabulated node on the width-reduced detuning v = x/h (step 3)."""

    def __init__(self, x, p, ne_cm3):
        self.ne_cm3 = ne_cm3
        self.f0 = 1.25e-9 * ne_cm3 ** (2.0 / 3.0)
        self.h = hwhm(x, p)  # in x units
        self.hz = self.h * self.f0  # half width in Hz
        v = x / self.h
        s = p * self.f0 * self.h
        self.v_max = v[-1]
        self.spline = Akima1DInterpolator(0.5 * np.log1p(v * v), np.log(s))
        self.lognorm = 0.0
        self.lognorm = -np.log(two_sided_area(self.log_shape, self.v_max))

    def log_shape(self, v):
        return self.spline(0.5 * np.log1p(v * v)) + self.lognorm


def two_sided_area(logf, v_max):
    """Area of exp(logf(v)) over -v_max..v_max (even function), on a grid
    dense at the centre and logarithmic in the wings."""
    v = np.concatenate([np.linspace(0.0, 4.0, 40001), np.geomspace(4.0, v_max, 40001)[1:]])
    return 2 * trapezoid(np.exp(logf(v)), v)


class LineModel:
    """A Balmer member at the tables' temperature node T_e: the profile at
    any n_e between the tabulated density nodes (step 3)."""

    def __init__(self, tab, t_e):
        k = tab["T_K"].index(t_e)
        x = np.asarray(tab["delta_nu_over_F0"], float)
        prof = np.asarray(tab["profile"], float)
        self.nodes = []
        for j, ne in enumerate(tab["ne_cm3"]):
            p = prof[:, j, k]
            if (p > 0).all():
                self.nodes.append(NodeShape(x, p, ne))
        lne = np.log([n.ne_cm3 for n in self.nodes])
        if np.any(np.diff(lne) <= 0):
            raise SystemExit("density nodes not increasing")
        self.lne = lne
        self.width = PchipInterpolator(lne, np.log([n.hz for n in self.nodes]))
        self.ne_max_cm3 = self.nodes[-1].ne_cm3
        self.ne_min_cm3 = self.nodes[0].ne_cm3

    def covers(self, ne_cm3):
        return self.ne_min_cm3 <= ne_cm3 <= self.ne_max_cm3

    def profile_hz(self, ne_cm3):
        """Returns (function of |detuning| in Hz -> profile per Hz, half
        width in Hz)."""
        l = np.log(ne_cm3)
        j = int(np.searchsorted(self.lne, l, side="right")) - 1
        j = min(max(j, 0), len(self.nodes) - 2)
        w = (l - self.lne[j]) / (self.lne[j + 1] - self.lne[j])
        a, b = self.nodes[j], self.nodes[j + 1]
        v_max = min(a.v_max, b.v_max)

        def logmix(v):
            return (1 - w) * a.log_shape(v) + w * b.log_shape(v)

        lognorm = -np.log(two_sided_area(logmix, v_max))
        hz = float(np.exp(self.width(l)))

        def per_hz(dnu):
            v = np.abs(dnu) / hz
            out = np.zeros_like(v)
            m = v <= v_max
            out[m] = np.exp(logmix(v[m]) + lognorm) / hz
            return out

        return per_hz, hz, dict(nodes_cm3=[a.ne_cm3, b.ne_cm3], weight_log_ne=w)


def pixel_edges(lam):
    return np.concatenate([[lam[0] - (lam[1] - lam[0]) / 2], (lam[1:] + lam[:-1]) / 2,
                           [lam[-1] + (lam[-1] - lam[-2]) / 2]])


def electrons_for_snr(snr, read):
    return (snr ** 2 + np.sqrt(snr ** 4 + 4 * snr ** 2 * read ** 2)) / 2


def line_profile_nm(model, ne_cm3, lam_air, fine):
    """Interpolated table profile (Stark + Doppler at T_e) per nm of air
    wavelength on the grid `fine`, and its half width in Hz."""
    per_hz, hz, info = model.profile_hz(ne_cm3)
    n = n_air(lam_air)
    lam_vac = fine * n
    nu0 = sc.c / (lam_air * n * 1e-9)
    nu = sc.c / (lam_vac * 1e-9)
    return per_hz(nu - nu0) * sc.c * n / (lam_vac * 1e-9) ** 2 * 1e-9, hz, info


def hz_to_nm(hz, lam_nm):
    return hz * (lam_nm * 1e-9) ** 2 / sc.c * 1e9


def make_spectrum(models, name, group, cfg, p, rng):
    """Builds one spectrum; p holds the drawn parameters (modified: T_e,
    T_gas, axis). Returns (lam, adu, truth dict)."""
    ne_m3, texc, snr, inst = p["ne_m3"], p["texc"], p["snr"], p["inst"]
    ne_cm3 = ne_m3 * 1e-6
    t_e = electron_temperature(ne_m3)
    mods = models[t_e]
    included = [u for u in LINES if mods[u].covers(ne_cm3)]
    omitted = [dict(upper_level=u, name=LINES[u][0],
                    reason="n_e %.3g m^-3 beyond the tables' density nodes for this member at T_e = %g K "
                           "(last node %.3g m^-3)" % (ne_m3, t_e, mods[u].ne_max_cm3 * 1e6))
               for u in LINES if u not in included]
    # table half widths (nm) at n_e, for the grid step and the window
    half_nm = {u: hz_to_nm(mods[u].profile_hz(ne_cm3)[1], LINES[u][1]) for u in included}
    # pixel axis
    if group == "survey":
        n = cfg["pixels"]
        q = np.arange(n) / (n - 1)
        c = cfg["curv"]
        lam = cfg["lo"] + (cfg["hi"] - cfg["lo"]) * ((1 - c) * q + c * q * q)
        main = [u for u in included]
    else:
        u0 = p["main"]
        if u0 not in included:
            raise SystemExit("%s: the window's line is not covered" % name)
        step = inst / cfg["px_per_fwhm"]
        width_est = 2 * np.hypot(half_nm[u0], inst / 2)
        npx = 2048 if 2048 * step >= 16 * width_est else 4096
        centre = LINES[u0][1] + p["offset_frac"] * npx * step
        lam = centre + (np.arange(npx) - (npx - 1) / 2) * step
        lam = np.round(lam, cfg["digits"])
        main = [u0]
    edges = pixel_edges(lam)
    # temperatures: step 4
    if ne_m3 < 1e22:
        need = 0.0
        for u in included:
            lam0 = LINES[u][1]
            if not (edges[0] - 50 <= lam0 <= edges[-1] + 50):
                continue
            wd_e = doppler_fwhm(lam0, t_e)
            if wd_e > inst:
                need = max(need, t_e * (1 - (inst / wd_e) ** 2))
        lo = max(300.0, 1.05 * need)
        tgas = float(np.round(lo + p["tgas_u"] * (3000.0 - lo), -1))
    else:
        tgas = t_e
    widths = [inst]
    for u in included:
        widths.append(2 * half_nm[u])
    h = min(widths) / 20
    gmax = max(np.sqrt(max(inst ** 2 + doppler_fwhm(LINES[u][1], tgas) ** 2 - doppler_fwhm(LINES[u][1], t_e) ** 2, 0))
               for u in included)
    pad = 6 * gmax + 0.2
    fine = np.arange(edges[0] - pad, edges[-1] + pad + h, h)
    photons = np.zeros_like(fine)
    e3 = LINES[3]
    info = []
    lines = {}
    for u in included:
        lname, lam0, ek, g, a = LINES[u]
        area = g * a * np.exp(-(ek - e3[2]) / (KB_EV * texc)) / (e3[3] * e3[4])
        prof, hz, interp = line_profile_nm(mods[u], ne_cm3, lam0, fine)
        wd_e = doppler_fwhm(lam0, t_e)
        wg = np.hypot(inst, doppler_fwhm(lam0, tgas))
        if wg < wd_e * (1 - 1e-12):
            raise SystemExit("%s: Gaussian FWHM %.4g nm below the tables' Doppler FWHM %.4g nm (%s)" % (name, wg, wd_e, lname))
        wx = np.sqrt(max(wg ** 2 - wd_e ** 2, 0.0))
        # the table profile's FWHM on the fine grid where it lies inside it
        inside_c = fine[0] + 5 * hz_to_nm(hz, lam0) < lam0 < fine[-1] - 5 * hz_to_nm(hz, lam0)
        table_fwhm = fwhm_on_grid(fine, prof) if inside_c else 2 * hz_to_nm(hz, lam0)
        wn = natural_fwhm_nm(u, lam0, LINES[u][4])
        conv = voigt_convolve(prof, h, wx, wn)
        lines[u] = area * conv
        info.append(dict(upper_level=u, name=lname, center_air_nm=lam0, E_k_eV=ek, g_k=g, A_per_s=a,
                         photon_area=area, table_fwhm_nm=table_fwhm, table_half_width_hz=hz,
                         table_doppler_fwhm_nm=wd_e, gauss_fwhm_nm=wg, exchange_gauss_fwhm_nm=wx,
                         natural_fwhm_nm=wn,
                         interpolation=interp,
                         total_fwhm_nm=fwhm_on_grid(fine, conv) if inside_c else None))
        photons += area * conv
    strongest = max(lines.values(), key=lambda y: y.max())
    v = (fine - CONT_MID_NM) / CONT_SCALE_NM
    cont = p["cfrac"] * strongest.max() * (1 + p["ca"] * v + p["cb"] * v * v)
    resp = cfg["resp"](fine)
    total = (photons + cont) * resp
    cum = cumulative_trapezoid(total, fine, initial=0.0)
    mu = np.diff(np.interp(edges, fine, cum))
    peak_e = electrons_for_snr(snr, cfg["read"])
    scale = peak_e / cfg["gain"] / mu.max()
    mu *= scale
    electrons = rng.poisson(np.clip(mu * cfg["gain"], 0, None)).astype(float)
    electrons += rng.normal(0.0, cfg["read"], size=mu.size)
    adu = np.rint(electrons / cfg["gain"]).astype(np.int64)
    # per-line figures on the pixel grid
    cont_pix = np.diff(np.interp(edges, fine, cumulative_trapezoid(cont * resp, fine, initial=0.0))) * scale
    inside = (fine >= edges[0]) & (fine <= edges[-1])
    for d in info:
        u = d["upper_level"]
        lp = np.diff(np.interp(edges, fine, cumulative_trapezoid(lines[u] * resp, fine, initial=0.0))) * scale
        i = int(np.argmax(lp))
        noise = np.sqrt(max(mu[i], 0) * cfg["gain"] + cfg["read"] ** 2) / cfg["gain"]
        d["area"] = d.pop("photon_area") * scale
        d["fraction_in_range"] = float(trapezoid(lines[u][inside], fine[inside]) / trapezoid(lines[u], fine))
        d["peak_expected_counts"] = float(lp[i])
        d["peak_snr"] = float(lp[i] / noise)
        d["center_in_range"] = bool(lam[0] <= d["center_air_nm"] <= lam[-1])
        d["pixel_nm"] = float(np.interp(d["center_air_nm"], lam, np.gradient(lam)))
        d["fwhm_pixels"] = d["total_fwhm_nm"] / d["pixel_nm"] if d["total_fwhm_nm"] else None
    truth = dict(
        generator="testdata/wholesynth/gen.py", scipy=scipy.__version__, numpy=np.__version__,
        profiles="Stehle & Hutcheon 1999, A&AS 140, 93; CDS VI/98A (diag/sh99/data), interpolated in n_e by gen.py",
        group=group, window=(LINES[main[0]][0] if group == "hires" else "survey"),
        spectrum=name + ".csv", response="response_%s.csv" % group, intensity_unit="photon",
        pixels=int(lam.size), range_nm=[float(lam[0]), float(lam[-1])],
        electron_density_m3=ne_m3, excitation_temperature_K=texc, electron_temperature_K=t_e,
        gas_temperature_K=tgas, instrument_fwhm_nm=inst, peak_snr=snr,
        peak_expected_counts=float(mu.max()), gain_e_per_count=cfg["gain"], read_noise_e=cfg["read"],
        seed=p["seed"],
        doppler="tables (Stark x Doppler at T_e) convolved with a Gaussian of FWHM sqrt(w_G^2 - w_D(T_e)^2), "
                "w_G^2 = instrument^2 + w_D(T_gas)^2 (exact: Gaussians add in quadrature); T_gas = T_e for n_e >= 1e22 m^-3",
        natural="each line also convolved with its natural Lorentzian, FWHM (Gamma_u + Gamma_2)/(2 pi) "
                "(natural_fwhm_nm per line; the tables hold none)",
        continuum="c0 (1 + %.4f v + %.4f v^2), v = (lambda - 540 nm)/300 nm, c0 = %.4f x strongest line's peak photon density"
                  % (p["ca"], p["cb"], p["cfrac"]),
        continuum_expected_counts_mid_range=float(cont_pix[cont_pix.size // 2]),
        fine_step_nm=h, scale=scale, lines=info, omitted_lines=omitted)
    return lam, adu, truth


def lhs(rng, n):
    """Stratified uniforms in [0, 1): one per stratum, shuffled."""
    return rng.permutation((np.arange(n) + rng.uniform(size=n)) / n)


def draw(rng, n, group, seed0):
    """Parameters of n spectra of a group (Latin hypercube)."""
    lo, hi = np.log(NE_RANGE_M3[0]), np.log(NE_RANGE_M3[1])
    node_logs = np.log(np.array([1e20, 3.162e20, 1e21, 3.162e21, 1e22, 3.162e22, 1e23, 3.162e23]))
    u_ne, u_t, u_snr, u_inst = lhs(rng, n), lhs(rng, n), lhs(rng, n), lhs(rng, n)
    cfg = GROUPS[group]
    out = []
    for i in range(n):
        lne = lo + u_ne[i] * (hi - lo)
        # off the table nodes: at least 1 % away (the tables' nodes are
        # 10^k and 3.162 x 10^k cm^-3)
        d = lne - node_logs
        j = int(np.argmin(np.abs(d)))
        if abs(d[j]) < 0.01:
            lne = node_logs[j] + (0.01 if d[j] >= 0 else -0.01)
        p = dict(ne_m3=float(np.exp(lne)),
                 texc=float(np.round(TEXC_RANGE_K[0] + u_t[i] * (TEXC_RANGE_K[1] - TEXC_RANGE_K[0]), -1)),
                 snr=float(np.exp(np.log(SNR_RANGE[0]) + u_snr[i] * np.log(SNR_RANGE[1] / SNR_RANGE[0]))),
                 inst=float(np.round(cfg["inst"][0] + u_inst[i] * (cfg["inst"][1] - cfg["inst"][0]), 4)),
                 tgas_u=float(rng.uniform()), cfrac=float(rng.uniform(0.01, 0.05)),
                 ca=float(rng.uniform(-0.5, 0.5)), cb=float(rng.uniform(-0.3, 0.3)),
                 offset_frac=float(rng.uniform(-0.15, 0.15)), seed=seed0 + i)
        p["ne_m3"] = float("%.4g" % p["ne_m3"])
        p["snr"] = float("%.4g" % p["snr"])
        out.append(p)
    return out


def main():
    with gzip.open(TABLE, "rt") as f:
        doc = json.load(f)
    tabs = {ln["upper"]: ln for ln in doc["lines"]}
    models = {t: {u: LineModel(tabs[u], t) for u in LINES} for t in (5000.0, 10000.0, 19950.0)}
    total_bytes = 0
    rl = np.arange(340.0, 720.0 + 1e-9, 0.5)
    for group, cfg in GROUPS.items():
        with open(os.path.join(HERE, "response_%s.csv" % group), "w") as f:
            f.write("# relative spectral response of the synthetic '%s' spectrometer (testdata/wholesynth/gen.py)\n" % group)
            f.write("wavelength_nm,response\n")
            for l, r in zip(rl, cfg["resp"](rl)):
                f.write("%.1f,%.8f\n" % (l, r))
    jobs = []
    rng = np.random.default_rng(20261202)
    for i, p in enumerate(draw(rng, N_SURVEY, "survey", 1000)):
        jobs.append(("survey_%02d" % (i + 1), "survey", p))
    hp = draw(rng, N_HIRES, "hires", 2000)
    for i, p in enumerate(hp):
        ha = i % 2 == 0
        p["main"] = 3 if ha else 4
        jobs.append(("hires_%s_%02d" % ("ha" if ha else "hb", i // 2 + 1), "hires", p))
    for name, group, p in jobs:
        cfg = GROUPS[group]
        lam, adu, truth = make_spectrum(models, name, group, cfg, p, np.random.default_rng(p["seed"]))
        fmt = "%%.%df,%%d\n" % cfg["digits"]
        path = os.path.join(HERE, name + ".csv")
        with open(path, "w") as f:
            f.write("# synthetic Balmer spectrum, Stehle-Hutcheon 1999 profiles between density nodes (testdata/wholesynth/gen.py)\n")
            f.write("# pixel-integrated counts per pixel (dark-subtracted ADU), wavelengths in standard air\n")
            f.write("wavelength_nm,counts\n")
            for x, y in zip(lam, adu):
                f.write(fmt % (x, y))
        with open(os.path.join(HERE, name + ".truth.json"), "w") as f:
            json.dump(truth, f, indent=1)
            f.write("\n")
        total_bytes += os.path.getsize(path)
        print("%-14s n_e %.3g T_exc %5.0f T_e %5.0f T_gas %5.0f inst %.3f SNR %6.1f px %d lines %s" % (
            name, truth["electron_density_m3"], truth["excitation_temperature_K"], truth["electron_temperature_K"],
            truth["gas_temperature_K"], truth["instrument_fwhm_nm"], truth["peak_snr"], truth["pixels"],
            ",".join("%d" % d["upper_level"] for d in truth["lines"])))
    print("spectra: %d bytes" % total_bytes)


if __name__ == "__main__":
    main()
