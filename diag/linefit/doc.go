// Package linefit fits a spectral window with a sum of Voigt lines on a
// polynomial baseline by the Levenberg–Marquardt method.
//
// The model for K lines and baseline order m ∈ {0, 1, 2} is
//
//	f(x) = Σ_k A_k V(x − c_k; σ_k, γ_k) + Σ_{j=0}^{m} b_j (x − x_mid)^j,
//
// with V the area-normalised Voigt profile of package glowlog/diag/voigt,
// σ_k = f_G,k / (2√(2 ln 2)) and γ_k = f_L,k / 2 from the Gaussian and
// Lorentzian full widths at half maximum, and x_mid the middle of the
// window. All positions and widths share the unit of x (for example nm);
// A_k has the unit of y times the unit of x (for example counts·nm).
//
// A Fitter is created once for a maximum window size and reused: after the
// first call with a given Result, Fit performs no allocation at all.
//
// References:
//
//	K. Levenberg, A method for the solution of certain non-linear problems
//	in least squares, Quart. Appl. Math. 2 (1944) 164–168.
//	D. W. Marquardt, An algorithm for least-squares estimation of nonlinear
//	parameters, J. Soc. Indust. Appl. Math. 11 (1963) 431–441.
//	J. J. Moré, The Levenberg–Marquardt algorithm: implementation and
//	theory, in G. A. Watson (ed.), Numerical Analysis (Dundee 1977),
//	Springer LNM 630 (1978) 105–116.
//	K. Madsen, H. B. Nielsen and O. Tingleff, Methods for Non-Linear Least
//	Squares Problems, 2nd ed., IMM, Technical University of Denmark (2004),
//	§3.2 (damping-parameter update; section number from memory).
//	J. J. Olivero and R. L. Longbothum, Empirical fits to the Voigt line
//	width: a brief review, J. Quant. Spectrosc. Radiat. Transfer 17 (1977)
//	233–236.
package linefit
