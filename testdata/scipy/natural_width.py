"""Each Balmer line's natural Lorentzian for the check-set generators
(testdata/wholesynth/gen.py, testdata/sh99synth/gen.py): hydrogen's
n-averaged Einstein A and level decay rates exactly from the Gordon
(1929) radial dipole integrals, the natural FWHM, and the convolution of
a profile with a Gaussian and that Lorentzian. physics.md sections 1.4 and 5.2. Debian's
python3-scipy (constants only)."""
from fractions import Fraction
from math import factorial

import numpy as np
from scipy import constants as sc


def _hyp2f1_terminating(a, b, c, x):
    """Gauss 2F1(a, b; c; x) for a or b a non-positive integer (a finite
    polynomial), exactly in rationals."""
    term, total, k = Fraction(1), Fraction(1), 0
    while True:
        term = term * (a + k) * (b + k) / ((c + k) * (k + 1)) * x
        k += 1
        if term == 0:
            return total
        total += term


def _gordon_r2(n, l, n2):
    """Square of the radial dipole integral <n, l | r | n2, l-1> in units of
    the (reduced) Bohr radius, exactly (Gordon 1929; Bethe & Salpeter,
    Quantum Mechanics of One- and Two-Electron Atoms, section 63)."""
    nr, nr2 = n - l - 1, n2 - l
    x = Fraction(-4 * n * n2, (n - n2) ** 2)
    brace = (_hyp2f1_terminating(-nr, -nr2, 2 * l, x)
             - Fraction(n - n2, n + n2) ** 2 * _hyp2f1_terminating(-nr - 2, -nr2, 2 * l, x))
    pre = (Fraction(factorial(n + l) * factorial(n2 + l - 1), factorial(n - l - 1) * factorial(n2 - l))
           / (4 * factorial(2 * l - 1)) ** 2)
    return (pre * Fraction(4 * n * n2) ** (2 * l + 2) * Fraction(n - n2) ** (2 * (n + n2 - 2 * l - 2))
            / Fraction(n + n2) ** (2 * (n + n2)) * brace ** 2)


ME_MP = sc.m_e / sc.m_p
R_H_PER_M = sc.Rydberg / (1 + ME_MP)  # hydrogen Rydberg (reduced mass)


def einstein_a_nn(n, n2):
    """n-averaged Einstein A of hydrogen n -> n2 < n, s^-1: the line
    strength summed over l, m and spin from the Gordon integrals,
    S = 2 sum_l [l R^2(n,l; n2,l-1) + l R^2(n2,l; n,l-1)], times the
    reduced-mass factor (1 + m_e/m_p)^2 (atomic units), then
    A = 2.02613e18 S / (g_n lambda^3[Angstrom]) with lambda (vacuum) from
    the reduced-mass Rydberg. These reproduce NIST's A values (the
    Balmer values typed in LINES; checked in natural_fwhm_nm)."""
    s = Fraction(0)
    for l in range(1, min(n - 1, n2) + 1):
        s += l * _gordon_r2(n, l, n2)
    for l in range(1, n2):
        s += l * _gordon_r2(n2, l, n)
    s = 2 * float(s) * (1 + ME_MP) ** 2
    lam_a = 1e10 / (R_H_PER_M * (1.0 / n2 ** 2 - 1.0 / n ** 2))
    return 2.02613e18 * s / (2 * n * n * lam_a ** 3)


def decay_rate(n):
    """Total radiative decay rate of level n, s^-1, its l-substates
    statistically populated: Gamma_n = sum over n2 < n of A(n -> n2)."""
    return sum(einstein_a_nn(n, n2) for n2 in range(1, n))


def natural_fwhm_nm(u, lam_air_nm, a_table):
    """Natural (radiative) Lorentzian FWHM of the Balmer line u -> 2 in air
    nm: Delta nu = (Gamma_u + Gamma_2)/(2 pi), Delta lambda_air =
    Delta nu lambda_air^2 n_air / c. a_table is the A(u -> 2) the
    generator uses, which the Gordon value must reproduce to 2e-4."""
    a = einstein_a_nn(u, 2)
    if abs(a / a_table - 1) > 2e-4:
        raise SystemExit("A(%d->2) = %.6g from the Gordon integrals, the table has %.6g" % (u, a, a_table))
    dnu = (decay_rate(u) + decay_rate(2)) / (2 * np.pi)
    return dnu * (lam_air_nm * 1e-9) ** 2 * n_air(lam_air_nm) / sc.c * 1e9


def n_air(lam_air_nm):
    """Refractive index of standard air at an air wavelength (IAU / Morton
    2000 vacuum-to-air formula, iterated on the vacuum wavelength)."""
    lv = lam_air_nm
    for _ in range(4):
        s2 = (1e3 / lv) ** 2
        n = 1 + 8.34254e-5 + 2.406147e-2 / (130 - s2) + 1.5998e-4 / (38.9 - s2)
        lv = lam_air_nm * n
    return n


def voigt_convolve(y, h, fwhm, lor_fwhm):
    """Convolution with a unit-area Gaussian of FWHM fwhm and a unit-area
    Lorentzian of FWHM lor_fwhm on a uniform grid of step h: exact transfer
    functions exp(-2 pi^2 sigma^2 f^2) exp(-pi lor_fwhm |f|), zero-padded
    FFT. The transform is circular: the Lorentzian's wing beyond the
    period P = n h folds back, a density of about pi lor_fwhm/(6 P^2) of
    the area per nm (P > 20 nm in the check sets: below 1e-5 of the
    area over the grid)."""
    sig = fwhm / (2 * np.sqrt(2 * np.log(2)))
    padn = int(np.ceil(10 * sig / h))
    n = 1 << int(np.ceil(np.log2(y.size + 2 * padn)))
    f = np.fft.rfftfreq(n, d=h)
    yt = np.fft.rfft(y, n)
    out = np.fft.irfft(yt * np.exp(-2 * np.pi ** 2 * sig ** 2 * f ** 2 - np.pi * lor_fwhm * f), n)
    return out[: y.size]
