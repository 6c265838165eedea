#!/usr/bin/python3
"""The same job as glowlog's spectrum pipeline, written the usual way with
numpy and scipy, for a side-by-side speed comparison (.ci/bench).

    /usr/bin/python3 testdata/scipy/fit_bench.py [SPECTRUM.csv] [REPEATS]

For each of Halpha-Hdelta inside the range it cuts a window, fits a Voigt
profile (scipy.special.voigt_profile) plus a linear baseline with
scipy.optimize.curve_fit, the Gaussian FWHM fixed to the instrument and
Doppler width, then fits the Boltzmann plot with numpy.polyfit. It prints
the median wall time of the whole job in milliseconds, as
"python_median_ms <value>".
"""
import statistics
import sys
import time

import numpy as np
from scipy.optimize import curve_fit
from scipy.special import voigt_profile

KB = 8.617333262e-5
HCEVCM = 1.239841984e-4
LINES = {  # NIST air wavelength, E_k (eV), g, A
    3: (656.279, 97492.304 * HCEVCM, 18, 4.4101e7),
    4: (486.135, 102823.904 * HCEVCM, 32, 8.4193e6),
    5: (434.0472, 105291.657 * HCEVCM, 50, 2.5304e6),
    6: (410.1734, 106632.168 * HCEVCM, 72, 9.7320e5),
}


def job(x, y, inst_fwhm, tgas):
    pts = []
    for n, (lam, e, g, a) in LINES.items():
        if not (x[0] + 2 < lam < x[-1] - 2):
            continue
        wd = 7.16233e-7 * lam * np.sqrt(tgas / 1.00794)
        sigma = np.hypot(inst_fwhm, wd) / 2.3548200450309493
        half = 6.0 if n >= 5 else 4.0
        m = (x > lam - half) & (x < lam + half)
        xw, yw = x[m], y[m]

        def model(xx, c, area, gam, b0, b1):
            return area * voigt_profile(xx - c, sigma, gam) + b0 + b1 * (xx - lam)

        p0 = [lam, (yw.max() - yw.min()) * 1.0, 0.2, np.median(yw), 0.0]
        popt, pcov = curve_fit(model, xw, yw, p0=p0, maxfev=2000)
        pts.append((e, np.log(popt[1] / (g * a)), np.sqrt(pcov[1, 1]) / popt[1]))
    e = np.array([p[0] for p in pts])
    yv = np.array([p[1] for p in pts])
    w = 1 / np.array([p[2] for p in pts])
    slope = np.polyfit(e, yv, 1, w=w)[0]
    return -1 / (KB * slope)


def main():
    path = sys.argv[1] if len(sys.argv) > 1 else "testdata/spectra/scipy_wide_snr1000.csv"
    reps = int(sys.argv[2]) if len(sys.argv) > 2 else 30
    d = np.loadtxt(path, delimiter=",", comments="#", skiprows=3)
    x, y = d[:, 0], d[:, 1]
    times = []
    t = 0.0
    for _ in range(reps):
        t0 = time.perf_counter()
        t = job(x, y, 0.35, 1000.0)
        times.append((time.perf_counter() - t0) * 1e3)
    print("python_T_exc_K %.1f" % t)
    print("python_median_ms %.3f" % statistics.median(times))


if __name__ == "__main__":
    main()
