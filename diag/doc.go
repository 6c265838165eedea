// Package diag is glowlog's physics and numerics engine for hydrogen
// Balmer-line plasma diagnostics.
//
// It computes hydrogen (and deuterium) line data from first principles
// (Rydberg constant, reduced mass, Dirac fine-structure centroids, the
// Gordon radial integrals in exact rational arithmetic), fits Boltzmann
// plots for the excitation temperature, builds the broadening budget of
// each line (instrument, Doppler, natural, resonance, van der Waals),
// converts Stark widths into electron densities with named, cited
// relations, and checks the validity of (partial) local thermodynamic
// equilibrium.
//
// The package is a pure leaf: plain values in, plain structs out. It does
// no I/O, reads no clock and imports nothing else of glowlog's. Caller
// misuse (for example slices of different lengths) panics with a "diag: "
// prefix; problems with the data come back as errors.
//
// Units are SI unless a name says otherwise: wavelengths in nm (…NM),
// energies in eV (…EV), temperatures in K (…K), densities in m⁻³ (…M3).
//
// The slope of a Boltzmann plot gives an excitation temperature of the
// emitting levels. It is called that throughout, never an electron
// temperature: the two agree only in (partial) local thermodynamic
// equilibrium, which most discharges do not reach.
package diag
