#!/usr/bin/python3
"""Synthetic Balmer spectra made independently of glowlog's own code.

Run with Debian's Python and python3-scipy:

    /usr/bin/python3 testdata/scipy/synth_spectra.py

For each case it writes testdata/spectra/scipy_<name>.csv (wavelength_nm,
counts) and scipy_<name>.truth.json. Line profiles are
scipy.special.voigt_profile integrated over each pixel (as a detector does):
the pixel runs between the midpoints to its neighbouring centres (mirrored
at the two ends) and its mean is taken by numpy's Gauss-Legendre rule
(numpy.polynomial.legendre.leggauss), 16 nodes on each of 8 equal parts of
the pixel; line data are the NIST
ASD values (observed air wavelengths; E_k from the NIST level centroids;
A from Wiese & Fuhr 2009 for n = 3-6, and the computed values of
physics.md section 1.2 for n = 7, 8), not glowlog's computed ones.
Intensities are LTE populations at T_exc in photon units (g A exp(-E/kT)),
scaled so that Halpha has an area of 2e4 counts.
Lorentzian widths: Stark widths from the Gigosos-Gonzalez-Cardenoso 2003
fits as written in physics.md section 4.1 (coefficients from memory there),
Hgamma and higher scaled as n^2 from Hbeta for realism only (their truth is
the Lorentzian width itself, not a density). No perturber gas, so the Stark
width is the whole Lorentzian width except the natural width (ignored,
1e-4 nm). Gaussian width: instrument FWHM combined in quadrature with the
Doppler FWHM 7.16233e-7 * lambda * sqrt(T/M), M = 1.00794.
Noise: Gaussian with sigma = peak / SNR of the strongest line (per nm), seeded.
The file holds counts per pixel: the spectral density averaged over the
pixel times the pixel width, so that a reader dividing by the pixel width
gets the mean density back; areas in the truth file are in counts
(density x nm); "peak" is the largest pixel mean of the line.
"""
import json
import os

import numpy as np
import scipy
from scipy.special import voigt_profile

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "spectra")
KB = 8.617333262e-5  # eV/K
HCEVCM = 1.239841984e-4

# n: (lambda_air nm, level cm-1 or energy eV, g, A)
LINES = {
    3: (656.279, 97492.304 * HCEVCM, 18, 4.4101e7),
    4: (486.135, 102823.904 * HCEVCM, 32, 8.4193e6),
    5: (434.0472, 105291.657 * HCEVCM, 50, 2.5304e6),
    6: (410.1734, 106632.168 * HCEVCM, 72, 9.7320e5),
    7: (397.0075, 13.32092, 98, 4.3889e5),
    8: (388.9064, 13.38596, 128, 2.2148e5),
}


def stark_fwhm(n, ne):
    if n == 3:  # FWHA = FWHM for a Lorentzian
        return 1.098 * (ne / 1e23) ** 0.67965
    hb = 4.800 * (ne / 1e23) ** 0.68116
    return hb * (n / 4.0) ** 2 if n >= 5 else hb


CASES = [
    # name, pixels, lo, hi, T_exc, n_e, T_gas, instrument FWHM, SNR, seed
    ("wide_snr1000", 2048, 380.0, 700.0, 6000.0, 3e21, 1000.0, 0.35, 1000.0, 1),
    ("wide_snr100", 2048, 380.0, 700.0, 9000.0, 8e21, 1500.0, 0.35, 100.0, 2),
    ("wide_snr20", 2048, 380.0, 700.0, 5000.0, 5e21, 800.0, 0.35, 20.0, 3),
    ("hbeta_window_snr1000", 3648, 471.0, 501.0, 7000.0, 2e21, 1200.0, 0.03, 1000.0, 4),
    ("hbeta_window_snr100", 3648, 471.0, 501.0, 7000.0, 1e22, 1200.0, 0.05, 100.0, 5),
    ("halpha_window_snr100", 3648, 641.0, 671.0, 7000.0, 1e21, 600.0, 0.03, 100.0, 6),
    # the speed benchmark (.ci/bench): Halpha-Hdelta all well above the noise
    ("bench_2048", 2048, 380.0, 700.0, 12000.0, 5e21, 1000.0, 0.35, 5000.0, 7),
]


def pixel_mean(x, fn, parts=8, nodes=16):
    """Mean of fn over each pixel of the ascending axis x."""
    mid = 0.5 * (x[1:] + x[:-1])
    lo = np.concatenate(([x[0] - (mid[0] - x[0])], mid))
    hi = np.concatenate((mid, [x[-1] + (x[-1] - mid[-1])]))
    t, w = np.polynomial.legendre.leggauss(nodes)
    width = (hi - lo) / parts
    total = np.zeros_like(x)
    for k in range(parts):
        a = lo + k * width
        pts = a[:, None] + 0.5 * width[:, None] * (t[None, :] + 1)
        total += (fn(pts) * w[None, :]).sum(axis=1) / 2
    return total / parts


def main():
    os.makedirs(OUT, exist_ok=True)
    for name, npx, lo, hi, texc, ne, tgas, inst, snr, seed in CASES:
        x = np.linspace(lo, hi, npx)
        y = np.zeros_like(x)
        truth = {"generator": "testdata/scipy/synth_spectra.py",
                 "scipy": scipy.__version__, "numpy": np.__version__,
                 "pixels": npx, "range_nm": [lo, hi],
                 "excitation_temperature_K": texc, "electron_density_m3": ne,
                 "gas_temperature_K": tgas, "instrument_fwhm_nm": inst,
                 "peak_snr": snr, "seed": seed, "lines": []}
        for n, (lam, e, g, a) in LINES.items():
            if not (lo + 1 < lam < hi - 1):
                continue
            area = 2e4 * g * a * np.exp(-(e - LINES[3][1]) / (KB * texc)) / (18 * 4.4101e7)
            wd = 7.16233e-7 * lam * np.sqrt(tgas / 1.00794)
            wg = np.hypot(inst, wd)
            wl = stark_fwhm(n, ne)
            sigma = wg / (2 * np.sqrt(2 * np.log(2)))
            prof = area * pixel_mean(x, lambda v: voigt_profile(v - lam, sigma, wl / 2))
            y += prof
            truth["lines"].append({"upper_level": n, "center_nm": lam, "area": area,
                                   "gauss_fwhm_nm": wg, "lorentz_fwhm_nm": wl,
                                   "peak": float(prof.max())})
        base = 50.0 + 0.02 * (x - lo)  # a gentle sloping baseline (counts/nm)
        peak = y.max()
        rng = np.random.default_rng(seed)
        noise = rng.normal(0.0, peak / snr, size=x.size)
        truth["noise_sigma"] = peak / snr
        truth["baseline"] = "50 + 0.02*(lambda - lo)"
        # Detector counts per pixel: the pixel-mean density (per nm) times
        # the local pixel width; the noise is added per pixel. (The linear
        # baseline's pixel mean is its value at the centre.)
        dx = np.gradient(x)
        data = (y + base) * dx + noise * dx
        with open(os.path.join(OUT, "scipy_%s.csv" % name), "w") as f:
            f.write("# synthetic Balmer spectrum by testdata/scipy/synth_spectra.py (scipy %s)\n" % scipy.__version__)
            f.write("# counts per pixel (density per nm averaged over the pixel times the pixel width), wavelengths in air\n")
            f.write("wavelength_nm,counts\n")
            for xi, yi in zip(x, data):
                f.write("%.6f,%.6g\n" % (xi, yi))
        with open(os.path.join(OUT, "scipy_%s.truth.json" % name), "w") as f:
            json.dump(truth, f, indent=1)
            f.write("\n")


if __name__ == "__main__":
    main()
