#!/usr/bin/python3
"""A plain numpy/scipy line-by-line analysis of the wholesynth spectra: the
reference competitor in the accuracy table of the whole-spectrum fit. It
is written the way a careful user would write it in an afternoon, and it
is NOT tuned to this set (its choices are fixed below and were not
adjusted after looking at its errors).

    /usr/bin/python3 testdata/wholesynth/scipy_lines.py

writes scipy_lines_results.json next to this script (one entry per
spectrum: n_e, T_exc, their 1 sigma, and per line what was fitted).

Per spectrum, with what the truth file gives the analysis as known
(instrument FWHM, gas temperature, response file) -- the same inputs
glowlog's analysis gets:
1. numpy.loadtxt (comments and the header line skipped); counts per nm = counts / pixel width (numpy.gradient of
   the axis); divided by the response (linear interpolation of the
   response file): photon spectral density.
2. Noise: robust sigma of the first differences (1.4826 MAD / sqrt 2) in
   each window.
3. Per Balmer member n = 3..12 whose centre lies inside the range (at least
   one window's half width from the ends is not required): window
   +-max(2 nm, 10 x instrument FWHM), at most halfway to the neighbouring
   members; a line counts as detected when its peak above the window's
   edge level exceeds 5 sigma.
4. scipy.optimize.curve_fit of area x scipy.special.voigt_profile(x - x0,
   sigma, gamma) + a + b (x - x0), unweighted (covariance scaled by the
   residuals, curve_fit's default), values at pixel centres (no pixel
   integration). The Gaussian part is fixed, the plain way: sigma =
   w_G / (2 sqrt(2 ln 2)), w_G^2 = instrument^2 + Doppler(T_gas)^2
   (Doppler FWHM = lambda sqrt(8 k T ln2 / (m_H c^2))). Then a second fit on
   a window of +-max(5 x fitted Voigt FWHM, 10 x instrument FWHM) (same
   neighbour limit).
5. Electron density from the Lorentzian FWHM w_L = 2 gamma taken as the
   Stark width, Gigosos, Gonzalez & Cardenoso 2003 (Spectrochim. Acta B
   58, 1489) as quoted in physics.md section 4.1: Hbeta FWHM
   n_e = 1e23 (w_L / 4.800 nm)^1.46808 m^-3; Halpha FWHA (= FWHM for a
   Lorentzian) n_e = 1e23 (w_L / 1.098 nm)^1.47135 m^-3. Hbeta's value is
   used when Hbeta was fitted, else Halpha's. 1 sigma by propagating
   gamma's.
6. Excitation temperature: weighted straight line through
   y = ln(area / (g_k A_k)) against E_k of the detected lines with a
   relative area error below 50 % (numpy.polyfit, weights 1/sigma_y;
   covariance scaled by chi^2/dof for three lines or more, unscaled for
   two), T = -1/(k slope), sigma_T = k T^2 sigma_slope. Line data: NIST
   ASD as in gen.py (g_k A_k for n = 3-6 from Wiese & Fuhr 2009 via NIST;
   n >= 7 the exact values of physics.md section 1.2).
"""
import glob
import json
import os

import numpy as np
from scipy import constants as sc
from scipy.optimize import curve_fit
from scipy.special import voigt_profile

HERE = os.path.dirname(os.path.abspath(__file__))
KB_EV = sc.k / sc.e
HC_EV_CM = sc.h * sc.c / sc.e * 100.0
M_H = 1.00794 * sc.atomic_mass

# upper level: NIST air wavelength (nm), E_k (eV), g_k, A_k2 (s^-1) -- see gen.py
LINES = {
    3: (656.279, 97492.304 * HC_EV_CM, 18, 4.4101e7),
    4: (486.135, 102823.904 * HC_EV_CM, 32, 8.4193e6),
    5: (434.0472, 105291.657 * HC_EV_CM, 50, 2.5304e6),
    6: (410.1734, 106632.168 * HC_EV_CM, 72, 9.7320e5),
    7: (397.0075, 13.32092, 98, 4.3889e5),
    8: (388.9064, 13.38596, 128, 2.2148e5),
    9: (383.5397, 13.43055, 162, 1.2156e5),
    10: (379.7909, 13.46245, 200, 7.1224e4),
    11: (377.0633, 13.48605, 242, 4.3972e4),
    12: (375.0151, 13.50400, 288, 2.8337e4),
}
GGC = {4: (4.800, 1.46808), 3: (1.098, 1.47135)}  # nm coefficient, inverse exponent (physics.md 4.1)


def doppler_fwhm(lam, t):
    return lam * np.sqrt(8 * sc.k * t * np.log(2) / (M_H * sc.c ** 2))


def model(x, area, x0, gamma, a, b, sigma):
    return area * voigt_profile(x - x0, sigma, gamma) + a + b * (x - x0)


def robust_sigma(y):
    d = np.diff(y)
    return 1.4826 * np.median(np.abs(d - np.median(d))) / np.sqrt(2)


def fit_line(x, y, lam0, hw, sigma, lo_lim, hi_lim):
    m = (x >= max(lam0 - hw, lo_lim)) & (x <= min(lam0 + hw, hi_lim))
    xw, yw = x[m], y[m]
    if xw.size < 8:
        return None
    n_edge = max(3, xw.size // 20)
    base = 0.5 * (np.median(yw[:n_edge]) + np.median(yw[-n_edge:]))
    noise = robust_sigma(yw)
    c = np.abs(xw - lam0) <= max(3 * sigma * 2.355, 0.2)
    peak = (yw[c].max() - base) if c.any() else 0.0
    if not (peak > 5 * noise):
        return dict(detected=False, peak_over_noise=float(peak / noise) if noise > 0 else None)
    area0 = max(np.sum(yw - base) * np.mean(np.diff(xw)), peak * sigma)
    p0 = [area0, lam0, max(0.5 * sigma, 1e-4), base, 0.0]
    f = lambda xx, area, x0, gamma, a, b: model(xx, area, x0, gamma, a, b, sigma)
    try:
        p, cov = curve_fit(f, xw, yw, p0=p0, bounds=([0, lam0 - 1, 0, -np.inf, -np.inf], [np.inf, lam0 + 1, np.inf, np.inf, np.inf]),
                           maxfev=20000)
    except (RuntimeError, ValueError) as e:
        return dict(detected=True, failed=str(e))
    err = np.sqrt(np.clip(np.diag(cov), 0, None))
    if not np.all(np.isfinite(err)):
        return dict(detected=True, failed="covariance not finite")
    wl = 2 * p[2]
    wv = 0.5346 * wl + np.sqrt(0.2166 * wl ** 2 + (2.3548 * sigma) ** 2)  # Olivero & Longbothum 1977
    return dict(detected=True, area=float(p[0]), area_unc=float(err[0]), center_nm=float(p[1]),
                lorentz_fwhm_nm=float(wl), lorentz_fwhm_unc_nm=float(2 * err[2]), voigt_fwhm_nm=float(wv),
                window_nm=[float(xw[0]), float(xw[-1])], pixels=int(xw.size), peak_over_noise=float(peak / noise))


def load(name):
    """numpy.loadtxt of a CSV with '#' comments and one header line."""
    with open(os.path.join(HERE, name)) as f:
        rows = [l for l in f if not l.startswith("#")]
    return np.loadtxt(rows[1:], delimiter=",")


def analyse(truth):
    d = load(truth["spectrum"])
    x, counts = d[:, 0], d[:, 1]
    r = load(truth["response"])
    y = counts / np.gradient(x) / np.interp(x, r[:, 0], r[:, 1])
    inst, tgas = truth["instrument_fwhm_nm"], truth["gas_temperature_K"]
    present = sorted(u for u, ln in LINES.items() if x[0] < ln[0] < x[-1])
    out = dict(lines={})
    for u in present:
        lam0 = LINES[u][0]
        wg = np.hypot(inst, doppler_fwhm(lam0, tgas))
        sigma = wg / (2 * np.sqrt(2 * np.log(2)))
        # halfway to the neighbouring members
        nb = [LINES[v][0] for v in LINES if v != u]
        lo_lim = max([x[0]] + [(lam0 + c) / 2 for c in nb if c < lam0])
        hi_lim = min([x[-1]] + [(lam0 + c) / 2 for c in nb if c > lam0])
        r1 = fit_line(x, y, lam0, max(2.0, 10 * inst), sigma, lo_lim, hi_lim)
        if r1 and "area" in r1:
            r2 = fit_line(x, y, lam0, max(5 * r1["voigt_fwhm_nm"], 10 * inst), sigma, lo_lim, hi_lim)
            if r2 and "area" in r2:
                r1 = r2
        out["lines"][str(u)] = r1
    # density
    for u in (4, 3):
        ln = out["lines"].get(str(u))
        if ln and "area" in ln and ln["lorentz_fwhm_nm"] > 0:
            c, e = GGC[u]
            w, sw = ln["lorentz_fwhm_nm"], ln["lorentz_fwhm_unc_nm"]
            ne = 1e23 * (w / c) ** e
            out.update(electron_density_m3=ne, electron_density_unc_m3=ne * e * sw / w, density_line=u)
            break
    # Boltzmann plot
    pts = []
    for u in present:
        ln = out["lines"].get(str(u))
        if ln and "area" in ln and ln["area"] > 0 and ln["area_unc"] < 0.5 * ln["area"]:
            _, ek, g, a = LINES[u]
            pts.append((ek, np.log(ln["area"] / (g * a)), ln["area_unc"] / ln["area"], u))
    out["boltzmann_lines"] = [p[3] for p in pts]
    if len(pts) >= 2:
        e, yy, sy = (np.array([p[i] for p in pts]) for i in range(3))
        if len(pts) >= 3:
            coef, cov = np.polyfit(e, yy, 1, w=1 / sy, cov=True)
        else:
            coef, cov = np.polyfit(e, yy, 1, w=1 / sy, cov="unscaled")
        slope, ss = coef[0], np.sqrt(cov[0, 0])
        if slope < 0:
            t = -1 / (KB_EV * slope)
            out.update(excitation_temperature_K=float(t), excitation_temperature_unc_K=float(KB_EV * t * t * ss))
    return out


def main():
    res = {}
    for f in sorted(glob.glob(os.path.join(HERE, "*.truth.json"))):
        truth = json.load(open(f))
        res[truth["spectrum"]] = analyse(truth)
    with open(os.path.join(HERE, "scipy_lines_results.json"), "w") as f:
        json.dump(dict(script="testdata/wholesynth/scipy_lines.py", results=res), f, indent=1, sort_keys=True)
        f.write("\n")
    # summary
    for grp in ("survey", "hires"):
        ne, te = [], []
        for f in sorted(glob.glob(os.path.join(HERE, grp + "_*.truth.json"))):
            t = json.load(open(f))
            r = res[t["spectrum"]]
            if "electron_density_m3" in r:
                ne.append(abs(r["electron_density_m3"] / t["electron_density_m3"] - 1))
            if "excitation_temperature_K" in r:
                te.append(abs(r["excitation_temperature_K"] / t["excitation_temperature_K"] - 1))
        print("%-7s n_e %d values, median |err| %.3f; T_exc %d values, median |err| %s" % (
            grp, len(ne), np.median(ne) if ne else np.nan, len(te), "%.3f" % np.median(te) if te else "-"))


if __name__ == "__main__":
    main()
