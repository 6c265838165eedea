#!/usr/bin/python3
"""Reference values for diag/spectrum TestSynthesizeStarkScipyProfile.

Run from this directory with Debian's Python and scipy (python3-scipy):

    /usr/bin/python3 profile_check.py > profile_check.json

It uses gen.py's own table reading and interpolation (NodeProfile, independent
of glowlog's Go code) to compute single Balmer lines at a table node
(T = 10^4 K, n_e = 10^22 m^-3): the tabulated Stark x Doppler(10^4 K)
profile per nm of air wavelength, convolved (gen.voigt_convolve: exact
transfer functions, zero-padded FFT, step 0.0005 nm) with the Gaussian
sqrt(w_G^2 - w_D(10^4 K)^2), w_G = instrument (0.2 nm) (+) Doppler(1500 K),
and with the line's natural Lorentzian (gen.natural_fwhm_nm, gen.py's
docstring step 2; Halpha 1.3e-4 nm: +0.1 % at 2 nm out, +0.2 % at 10 nm,
Hbeta and Hgamma below 0.04 %), and prints the profile (unit area) at a set of
detunings, averaged over both sides (the profile is symmetric in frequency,
not exactly in wavelength).
"""
import gzip
import json
import os
import sys

import numpy as np
import scipy
from scipy import constants as sc

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import gen  # noqa: E402

NE_M3, INST_NM, TGAS_K, STEP = 1e22, 0.2, 1500.0, 0.0005
DETUNINGS = [0, 0.1, 0.2, 0.5, 1, 2, 5, 10]

with gzip.open(gen.TABLE, "rt") as f:
    doc = json.load(f)
table = {ln["upper"]: ln for ln in doc["lines"]}
out = {"script": "testdata/sh99synth/profile_check.py", "scipy": scipy.__version__, "numpy": np.__version__,
       "electron_density_m3": NE_M3, "electron_temperature_K": gen.T_TABLE, "instrument_fwhm_nm": INST_NM,
       "gas_temperature_K": TGAS_K, "detunings_nm": DETUNINGS, "lines": []}
for u in (3, 4, 5):
    nd = gen.NodeProfile(table[u], NE_M3 * 1e-6)
    lam_air = gen.LINES[u][1]
    fine = np.arange(lam_air - 60, lam_air + 60, STEP)
    n = gen.n_air(lam_air)
    lam_vac = fine * n
    nu0 = sc.c / (lam_air * n * 1e-9)
    nu = sc.c / (lam_vac * 1e-9)
    prof = nd.per_hz(nu - nu0) * sc.c * n / (lam_vac * 1e-9) ** 2 * 1e-9
    wg = np.hypot(INST_NM, gen.doppler_fwhm(lam_air, TGAS_K))
    wx = np.sqrt(wg ** 2 - gen.doppler_fwhm(lam_air, gen.T_TABLE) ** 2)
    prof = gen.voigt_convolve(prof, STEP, wx, gen.natural_fwhm_nm(u, lam_air, gen.LINES[u][4]))
    vals = [0.5 * (np.interp(lam_air + d, fine, prof) + np.interp(lam_air - d, fine, prof)) for d in DETUNINGS]
    out["lines"].append({"upper_level": u, "profile_per_nm": [float(v) for v in vals]})
json.dump(out, sys.stdout, indent=1)
print()
