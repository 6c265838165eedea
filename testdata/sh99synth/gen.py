#!/usr/bin/python3
"""Synthetic Balmer spectra shaped by the Stehle & Hutcheon (1999) profiles.

Run from anywhere with Debian's Python, numpy and scipy (python3-scipy):

    /usr/bin/python3 testdata/sh99synth/gen.py

It writes, next to this script, for three spectrometer types (hires, mid,
survey) x six electron densities x three excitation temperatures:

    <type>_ne<n_e>_t<k>.csv         the spectrum: wavelength_nm (air), counts
                                    per pixel (dark-subtracted ADU)
    <type>_ne<n_e>_t<k>.truth.json  what went in (n_e, T_exc, T_gas,
                                    instrument FWHM, detector, lines ...)
    response_<type>.csv             the relative spectral response used
                                    (wavelength_nm, counts per unit intensity)

The spectra are independent of glowlog's Go code: nothing here calls or
copies it. What is shared is only the published table, read from the
project's copy diag/sh99/data/stehle-hutcheon-1999-balmer.json.gz (see
diag/sh99/data/PROVENANCE.md for its layout and source).

Physics, step by step
---------------------
1. Line profile. Stehle, C. & Hutcheon, R. 1999, A&AS 140, 93
   (doi:10.1051/aas:1999118; CDS VI/98A): profile per unit frequency
   against x = |nu - nu0|/F0, F0 = 1.25e-9 n_e^(2/3) (cgs, n_e in cm^-3,
   detuning in Hz), Doppler broadening of the emitter at the same T
   included. Every spectrum uses the table exactly at a node: the electron
   temperature (the tables' T) is the 10^4 K node and every n_e is a
   density node (10^20 ... 3.162e22 m^-3 = 10^14 ... 3.162e16 cm^-3), so
   the truth is the tabulated profile itself, not an interpolation between
   nodes. In detuning the node profile is interpolated by scipy's PCHIP
   (monotone cubic) in ln P against s = asinh(x/x_h) (x_h: the table's
   half-width at half maximum), on the profile mirrored to negative x so
   that the centre is smooth; s is linear near the centre and logarithmic
   in the wings (power-law Stark wings are straight there). Outside the
   tabulated detuning range the profile is taken as 0 (beyond 10^4 half
   widths; its area there is negligible). The interpolated profile is
   normalised to unit area over nu (numerical integration over the full
   tabulated range, both sides).
   Frequency to air wavelength: lambda_vac = lambda_air * n_air (IAU /
   Morton 2000 formula, ApJS 130, 403, with Birch & Downs 1994
   coefficients), nu = c/lambda_vac, density per nm from |d nu/d lambda|;
   so the profile is exactly symmetric in frequency (slightly asymmetric in
   wavelength, as real lines are).
2. Doppler and natural width. The tables already hold Doppler broadening
   at T = 10^4 K, w_D(T) = lambda * sqrt(8 k T ln2 / (M c^2)),
   M = 1.00794 u (the emitter H). A real line is Stark (x) Doppler(T_gas)
   (x) instrument (x) natural Lorentzian (below), i.e. Stark (x) a
   Gaussian of FWHM w_G = sqrt(w_inst^2 + w_D(T_gas)^2) (x) that
   Lorentzian. Whenever w_G >= w_D(10^4 K), that equals table (x)
   Gaussian(sqrt(w_G^2 - w_D(10^4 K)^2)) (x) Lorentzian exactly
   (Gaussians convolve in quadrature), so the tables' Doppler part is
   *replaced* by the true total Gaussian without any deconvolution. The
   spectrometer types are chosen so that this holds for every line (the
   hires type observes only Hbeta, whose 10^4 K Doppler FWHM is
   0.035 nm < 0.04 nm instrument FWHM); the script stops if it does not. This is the "remove the tables' Doppler part
   consistently" choice of physics.md section 4.5, done exactly.
   Natural (radiative) broadening: the tables hold Stark (electrons and
   ions) and Doppler broadening only, and every real line also has its
   natural Lorentzian, FWHM Delta nu = (Gamma_u + Gamma_2)/(2 pi) with
   Gamma_n the total decay rate of level n, its l-substates statistically
   populated (Gamma_n = sum over n' < n of the n-averaged A(n -> n'),
   computed exactly from the Gordon (1929) radial integrals: physics.md
   section 1.4; they reproduce the A values typed in below to 2e-5 (the
   script stops beyond 2e-4), and physics.md section 5.2's Gamma_2 ...
   Gamma_5). The same code and physics as testdata/wholesynth/gen.py.
   FWHM: Halpha 1.303e-4 nm, Hbeta 6.28e-5 nm, Hgamma 4.82e-5 nm,
   Hdelta 4.24e-5 nm, Hepsilon 3.96e-5 nm. Negligible in the cores, but
   at the lowest density node used, 1e20 m^-3, Halpha's tabulated wing
   0.2-2 nm out is that of a Lorentzian of only 0.0036-0.0014 nm, so the
   natural wing adds 4-10 % there (Hbeta 0.6-1.5 %, 3.162e20 m^-3:
   Halpha 1-3 %, Hbeta 0.2-0.5 %; higher members and densities less).
3. Line areas. LTE (Boltzmann) population of the upper levels at T_exc,
   photon units: area ~ g_k A_k2 exp(-E_k / k T_exc). Line data: NIST ASD
   observed air wavelengths; E_k from the NIST level centroids (n = 3-6,
   97492.304, 102823.904, 105291.657, 106632.168 cm^-1) and the computed
   13.32092 eV for n = 7; A from Wiese & Fuhr 2009 (J. Phys. Chem. Ref.
   Data 38, 565) as served by NIST ASD for n = 3-6, and the computed
   4.3889e5 s^-1 for n = 7 (physics.md section 1.2); g_k = 2 n^2.
   Members Halpha ... Hepsilon only (the tables cover all five at every
   density used); H8 and higher are left out, which a real spectrum would
   have (a simplification: no blending from H8 into Hepsilon).
4. Continuum: a smooth, slightly curved continuum (a few per cent of the
   strongest line's peak), the same kind of photons as the lines.
5. Instrument: a Gaussian of constant FWHM in nm across the range. The
   remaining Gaussian of step 2 and the natural Lorentzian are applied per
   line by FFT on a fine uniform grid (step <= 1/20 of the narrowest table
   FWHM or instrument width present), multiplying the transform by the
   exact Gaussian and Lorentzian transfer functions exp(-2 pi^2 sigma^2 f^2
   - pi w_L |f|) with zero padding (voigt_convolve).
6. Response: the photon spectrum is multiplied by a smooth relative
   response R(lambda) (written to response_<type>.csv at 0.5 nm steps;
   linear interpolation of that file differs from R by < 2e-5 relative).
   Counts per pixel are therefore R x photons, and a reader who divides
   counts per nm by R gets the photon spectrum back (areas in the truth
   file are in those corrected units: counts-per-nm/R x nm).
7. Pixel integration: the expected counts of a pixel are the integral of
   the model over the pixel's width (cumulative trapezoid on the fine
   grid, differenced at the pixel edges, edges halfway between pixel
   centres), not the model at the pixel centre.
8. Noise: expected ADU -> electrons (x gain), Poisson draw, plus Gaussian
   read noise, back to ADU, rounded to integers (numpy default_rng, seeded
   per spectrum). The file is dark-subtracted (no bias), so counts can be
   slightly negative.

Truth files record every input and, per line, the area, the widths
measured on the fine model (table FWHM at the node, total FWHM after the
instrument and the natural width), the Gaussian exchanged, the natural
FWHM and the peak of the expected counts.
"""
import gzip
import json
import os
import sys

import numpy as np
import scipy
from scipy import constants as sc
from scipy.integrate import cumulative_trapezoid, simpson
from scipy.interpolate import PchipInterpolator

HERE = os.path.dirname(os.path.abspath(__file__))
TABLE = os.path.join(HERE, "..", "..", "diag", "sh99", "data", "stehle-hutcheon-1999-balmer.json.gz")

KB_EV = sc.k / sc.e  # Boltzmann constant, eV/K (CODATA via scipy.constants)
HC_EV_CM = sc.h * sc.c / sc.e * 100.0  # hc in eV cm
M_H = 1.00794 * sc.atomic_mass  # H atomic weight (IUPAC), the tables' emitter
T_TABLE = 10000.0  # electron temperature: the tables' 10^4 K node

# NIST ASD: observed air wavelength (nm), E_k (eV), g_k, A_k2 (s^-1);
# see the module docstring for the source of each column.
LINES = {
    3: ("Halpha", 656.279, 97492.304 * HC_EV_CM, 18, 4.4101e7),
    4: ("Hbeta", 486.135, 102823.904 * HC_EV_CM, 32, 8.4193e6),
    5: ("Hgamma", 434.0472, 105291.657 * HC_EV_CM, 50, 2.5304e6),
    6: ("Hdelta", 410.1734, 106632.168 * HC_EV_CM, 72, 9.7320e5),
    7: ("Hepsilon", 397.0075, 13.32092, 98, 4.3889e5),
}

# Electron densities (m^-3): the tables' density nodes 10^14 ... 3.162e16 cm^-3.
NE_NODES_M3 = [1e20, 3.162e20, 1e21, 3.162e21, 1e22, 3.162e22]
# Excitation temperature bands: one spectrum per band and density.
TEXC_BANDS = [(3000.0, 6000.0), (6000.0, 9000.0), (9000.0, 12000.0)]

# Spectrometer types. Pixel axis: lambda(p) = lo + b p + c p^2 (c = 0:
# uniform); FWHM in pixels >= 2 everywhere (checked).
TYPES = {
    # high resolution, narrow range: the Hbeta window only
    "hires": dict(pixels=2048, lo=471.0, hi=501.7, curv=0.0, inst=0.04, gain=1.0, read=6.0,
                  peak=(20000.0, 45000.0), tgas=(500.0, 2500.0), uppers=[4], resp=(480.0, 60.0, 0.25), digits=6),
    # mid resolution: Hbeta .. Halpha
    "mid": dict(pixels=4096, lo=474.0, hi=666.5, curv=0.0, inst=0.10, gain=1.5, read=8.0,
                peak=(20000.0, 45000.0), tgas=(500.0, 2500.0), uppers=[3, 4], resp=(560.0, 200.0, 0.1), digits=5),
    # survey: 350-700 nm on 2048 pixels, slightly non-uniform dispersion
    "survey": dict(pixels=2048, lo=350.0, hi=700.0, curv=0.08, inst=0.40, gain=2.0, read=25.0,
                   peak=(15000.0, 40000.0), tgas=(500.0, 2500.0), uppers=[3, 4, 5, 6, 7], resp=(520.0, 220.0, -0.15),
                   digits=5),
}


# Natural width (docstring step 2): each level's total decay rate from the
# Gordon (1929) radial integrals, the same code and physics as
# testdata/wholesynth/gen.py (physics.md sections 1.4 and 5.2).


# The natural width from the Gordon (1929) decay rates, shared with the other check-set
# generator (testdata/scipy/natural_width.py).
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "scipy"))
from natural_width import n_air, natural_fwhm_nm, voigt_convolve  # noqa: E402


def doppler_fwhm(lam_nm, t_k):
    return lam_nm * np.sqrt(8 * sc.k * t_k * np.log(2) / (M_H * sc.c ** 2))


class NodeProfile:
    """One tabulated node (line, n_e, T = 10^4 K) as a function of frequency
    detuning, normalised to unit area over nu."""

    def __init__(self, line, ne_cm3):
        j = next(i for i, v in enumerate(line["ne_cm3"]) if abs(v / ne_cm3 - 1) < 1e-3)
        k = line["T_K"].index(T_TABLE)
        x = np.asarray(line["delta_nu_over_F0"], float)
        p = np.asarray(line["profile"], float)[:, j, k]
        if not (p > 0).all():
            raise SystemExit("table node not tabulated: upper %d, n_e %g cm^-3" % (line["upper"], ne_cm3))
        self.lam0_vac_nm = line["lambda0_vac_angstrom"][j][k] / 10.0
        self.f0 = 1.25e-9 * ne_cm3 ** (2.0 / 3.0)  # Hz per unit x
        # half-width at half maximum on the table (maximum may be off-centre: Hbeta's dip)
        half = p.max() / 2
        i = np.nonzero(p >= half)[0][-1]
        self.x_h = x[i] + (x[i + 1] - x[i]) * (p[i] - half) / (p[i] - p[i + 1])
        s = np.arcsinh(x / self.x_h)
        ss = np.concatenate([-s[:0:-1], s])
        lp = np.log(p)
        ll = np.concatenate([lp[:0:-1], lp])
        self.interp = PchipInterpolator(ss, ll, extrapolate=False)
        self.x_max = x[-1]
        # normalisation over nu: 2 F0 int_0^xmax P(x) dx on a dense grid in s
        sg = np.linspace(0.0, s[-1], 200001)
        xg = self.x_h * np.sinh(sg)
        pg = np.exp(self.interp(sg))
        area = 2 * self.f0 * simpson(pg * self.x_h * np.cosh(sg), x=sg)
        self.norm = 1.0 / area
        self.raw_area = area

    def per_hz(self, dnu):
        """Profile per Hz at frequency detunings dnu (any sign)."""
        x = np.abs(dnu) / self.f0
        out = np.zeros_like(x)
        m = x <= self.x_max
        out[m] = np.exp(self.interp(np.arcsinh(x[m] / self.x_h))) * self.norm
        return out


def fwhm_on_grid(xg, yg):
    """Full width at half of the maximum between the outermost half-maximum
    crossings (so a central dip does not count), linear interpolation."""
    half = yg.max() / 2
    idx = np.nonzero(yg >= half)[0]
    a, b = idx[0], idx[-1]
    xl = xg[a - 1] + (xg[a] - xg[a - 1]) * (half - yg[a - 1]) / (yg[a] - yg[a - 1])
    xr = xg[b] + (xg[b + 1] - xg[b]) * (yg[b] - half) / (yg[b] - yg[b + 1])
    return xr - xl


def response(cfg, lam):
    c, w, tilt = cfg["resp"]
    u = (lam - c) / w
    return np.exp(-u * u) * (1 + tilt * u) + 0.05


def pixel_axis(cfg):
    n = cfg["pixels"]
    p = np.arange(n) / (n - 1)
    c = cfg["curv"]
    # lo + (hi - lo) * ((1 - c) p + c p^2): monotone for c < 1
    return cfg["lo"] + (cfg["hi"] - cfg["lo"]) * ((1 - c) * p + c * p * p)


def make_spectrum(table, tname, cfg, ne_m3, texc, tgas, peak_adu, seed):
    lam = pixel_axis(cfg)
    edges = np.concatenate([[lam[0] - (lam[1] - lam[0]) / 2], (lam[1:] + lam[:-1]) / 2,
                            [lam[-1] + (lam[-1] - lam[-2]) / 2]])
    if np.max(np.diff(edges)) * 2 > cfg["inst"]:
        raise SystemExit("%s: instrument FWHM below 2 pixels" % tname)
    ne_cm3 = ne_m3 * 1e-6
    nodes = {u: NodeProfile(table[u], ne_cm3) for u in cfg["uppers"]}
    # fine grid step: 1/20 of the narrowest width present (instrument or a
    # table profile at its node)
    widths = [cfg["inst"]]
    for u, nd in nodes.items():
        widths.append(2 * nd.x_h * nd.f0 * (LINES[u][1] * 1e-9) ** 2 / sc.c * 1e9)
    h = min(widths) / 20
    pad = 4 * cfg["inst"]
    fine = np.arange(edges[0] - pad, edges[-1] + pad + h, h)
    photons = np.zeros_like(fine)  # photons per nm (arbitrary scale)
    k_e3 = LINES[3]
    info = []
    for u, nd in nodes.items():
        name, lam_air, ek, g, a = LINES[u]
        area = g * a * np.exp(-(ek - k_e3[2]) / (KB_EV * texc)) / (k_e3[3] * k_e3[4])
        n = n_air(lam_air)
        lam_vac = fine * n
        nu0 = sc.c / (lam_air * n * 1e-9)
        nu = sc.c / (lam_vac * 1e-9)
        prof = nd.per_hz(nu - nu0) * sc.c * n / (lam_vac * 1e-9) ** 2 * 1e-9  # per nm of air wavelength
        table_fwhm = fwhm_on_grid(fine, prof)
        wd_table = doppler_fwhm(lam_air, T_TABLE)
        wg = np.hypot(cfg["inst"], doppler_fwhm(lam_air, tgas))
        if wg < wd_table:
            raise SystemExit("%s: Gaussian FWHM %.4g nm below the tables' Doppler FWHM %.4g nm at %s" % (tname, wg, wd_table, name))
        wx = np.sqrt(wg ** 2 - wd_table ** 2)
        wn = natural_fwhm_nm(u, lam_air, LINES[u][4])
        prof = voigt_convolve(prof, h, wx, wn)
        line = area * prof
        photons += line
        info.append(dict(upper_level=u, name=name, center_air_nm=lam_air, photon_area=area,
                         table_fwhm_nm=table_fwhm, table_doppler_fwhm_nm=wd_table, gauss_fwhm_nm=wg,
                         exchange_gauss_fwhm_nm=wx, natural_fwhm_nm=wn, total_fwhm_nm=fwhm_on_grid(fine, prof),
                         table_raw_area=nd.raw_area, fraction_in_range=None, _line=line))
    # continuum: a few per cent of the strongest line's peak density
    strongest = max(info, key=lambda d: d["_line"].max())
    mid = (lam[0] + lam[-1]) / 2
    span = lam[-1] - lam[0]
    rng = np.random.default_rng(seed)
    cfrac = rng.uniform(0.01, 0.04)
    v = (fine - mid) / span
    cont = cfrac * strongest["_line"].max() * (1 + 0.4 * v + 0.3 * v * v)
    total = (photons + cont) * response(cfg, fine)
    # pixel integration
    cum = cumulative_trapezoid(total, fine, initial=0.0)
    mu = np.diff(np.interp(edges, fine, cum))
    scale = peak_adu / mu.max()
    mu *= scale
    electrons = rng.poisson(mu.clip(min=0) * cfg["gain"]).astype(float)
    electrons += rng.normal(0.0, cfg["read"], size=mu.size)
    adu = np.rint(electrons / cfg["gain"]).astype(int)
    for d in info:
        line = d.pop("_line")
        inside = (fine >= edges[0]) & (fine <= edges[-1])
        d["fraction_in_range"] = float(np.trapz(line[inside], fine[inside]) / d["photon_area"])
        d["area"] = d.pop("photon_area") * scale  # calibrated units (counts per nm / R) x nm
        lm = np.abs(lam - d["center_air_nm"]) <= max(0.5 * d["total_fwhm_nm"], float(np.interp(d["center_air_nm"], lam, np.gradient(lam))))
        d["peak_expected_counts"] = float(mu[lm].max()) if lm.any() else None
        d["fwhm_pixels"] = d["total_fwhm_nm"] / float(np.interp(d["center_air_nm"], lam, np.gradient(lam)))
    return lam, adu, mu, info, dict(fine_step_nm=h, continuum_fraction=cfrac, scale=scale)


def main():
    with gzip.open(TABLE, "rt") as f:
        doc = json.load(f)
    table = {ln["upper"]: ln for ln in doc["lines"]}
    total_bytes = 0
    for ti, (tname, cfg) in enumerate(TYPES.items()):
        rl = np.arange(np.floor(cfg["lo"]) - 1, np.ceil(cfg["hi"]) + 1.5, 0.5)
        rname = "response_%s.csv" % tname
        with open(os.path.join(HERE, rname), "w") as f:
            f.write("# relative spectral response of the synthetic '%s' spectrometer (testdata/sh99synth/gen.py)\n" % tname)
            f.write("wavelength_nm,response\n")
            for l, r in zip(rl, response(cfg, rl)):
                f.write("%.1f,%.8f\n" % (l, r))
        for ni, ne in enumerate(NE_NODES_M3):
            for bi, (t0, t1) in enumerate(TEXC_BANDS):
                seed = 1000 * (ti + 1) + 10 * ni + bi
                rng = np.random.default_rng(seed + 500000)
                texc = float(np.round(rng.uniform(t0, t1), -1))
                tgas = float(np.round(rng.uniform(*cfg["tgas"]), -1))
                peak = float(np.round(rng.uniform(*cfg["peak"]), -2))
                base = "%s_ne%.3g_t%d" % (tname, ne, bi + 1)
                base = base.replace("+", "")
                lam, adu, mu, info, extra = make_spectrum(table, base, cfg, ne, texc, tgas, peak, seed)
                fmt = "%%.%df,%%d\n" % cfg["digits"]
                with open(os.path.join(HERE, base + ".csv"), "w") as f:
                    f.write("# synthetic Balmer spectrum, Stehle-Hutcheon 1999 profiles (testdata/sh99synth/gen.py, scipy %s)\n" % scipy.__version__)
                    f.write("# pixel-integrated counts per pixel (dark-subtracted ADU), wavelengths in standard air\n")
                    f.write("wavelength_nm,counts\n")
                    for x, y in zip(lam, adu):
                        f.write(fmt % (x, y))
                truth = dict(
                    generator="testdata/sh99synth/gen.py", scipy=scipy.__version__, numpy=np.__version__,
                    profiles="Stehle & Hutcheon 1999, A&AS 140, 93; CDS VI/98A (diag/sh99/data)",
                    spectrometer=tname, spectrum=base + ".csv", response=rname, intensity_unit="photon",
                    pixels=int(lam.size), range_nm=[float(lam[0]), float(lam[-1])],
                    dispersion="lambda(p) = lo + (hi - lo)((1 - c)q + c q^2), q = p/(N - 1), c = %g" % cfg["curv"],
                    instrument_fwhm_nm=cfg["inst"], gas_temperature_K=tgas, electron_temperature_K=T_TABLE,
                    electron_density_m3=ne, excitation_temperature_K=texc,
                    gain_e_per_count=cfg["gain"], read_noise_e=cfg["read"], peak_expected_counts=peak,
                    seed=seed, doppler="table (Stark x Doppler at 1e4 K) convolved with a Gaussian of FWHM "
                    "sqrt(w_G^2 - w_D(1e4 K)^2), w_G^2 = instrument^2 + Doppler(T_gas)^2",
                    natural="each line also convolved with its natural Lorentzian, FWHM (Gamma_u + Gamma_2)/(2 pi) "
                    "(natural_fwhm_nm per line; the tables hold none)",
                    continuum="c0 (1 + 0.4 v + 0.3 v^2), v = (lambda - mid)/span, c0 = %.4f x strongest line's peak photon density" % extra["continuum_fraction"],
                    fine_step_nm=extra["fine_step_nm"], lines=info)
                with open(os.path.join(HERE, base + ".truth.json"), "w") as f:
                    json.dump(truth, f, indent=1)
                    f.write("\n")
                total_bytes += os.path.getsize(os.path.join(HERE, base + ".csv"))
    print("spectra: %d bytes" % total_bytes)


if __name__ == "__main__":
    main()
