package diag

// VacToAirNM converts a vacuum wavelength to standard air by the IAU
// standard formula (Morton 2000), with coefficients of Birch & Downs (1994):
//
//	s = 10⁴/λ_vac[Å]  (µm⁻¹)
//	n − 1 = 8.34254e-5 + 2.406147e-2/(130 − s²) + 1.5998e-4/(38.9 − s²)
//	λ_air = λ_vac/n
//
// It applies to dry air at 15 °C, 101 325 Pa and 0.045 % CO₂. By
// convention wavelengths below 200 nm are quoted in vacuum, so they are
// returned unchanged.
//
// References:
//
//	Morton, D. C. 2000, ApJS 130, 403.
//	Birch, K. P. & Downs, M. J. 1994, Metrologia 31, 315.
func VacToAirNM(vacNM float64) float64 {
	if vacNM < 200 {
		return vacNM
	}
	s := 1e3 / vacNM // 10⁴/λ[Å] with λ[Å] = 10·λ[nm]
	s2 := s * s
	n := 1 + 8.34254e-5 + 2.406147e-2/(130-s2) + 1.5998e-4/(38.9-s2)
	return vacNM / n
}

// AirToVacNM converts a standard-air wavelength to vacuum by the fitted
// inverse of the IAU formula due to N. Piskunov (as given in the VALD3
// documentation, "Air-to-vacuum conversion"):
//
//	s = 10⁴/λ_air[Å]
//	n = 1 + 8.336624212083e-5 + 2.408926869968e-2/(130.1065924522 − s²)
//	      + 1.599740894897e-4/(38.92568793293 − s²)
//	λ_vac = λ_air·n
//
// followed by one Newton correction against VacToAirNM, so that the two
// functions are inverse to better than 1e-9 nm. Wavelengths below 200 nm
// are returned unchanged.
func AirToVacNM(airNM float64) float64 {
	if airNM < 200 {
		return airNM
	}
	s := 1e3 / airNM
	s2 := s * s
	n := 1 + 8.336624212083e-5 + 2.408926869968e-2/(130.1065924522-s2) + 1.599740894897e-4/(38.92568793293-s2)
	vac := airNM * n
	// One fixed-point correction: the air/vacuum ratio varies slowly, so
	// the error of the fitted inverse is removed almost completely.
	for range 2 {
		vac += airNM - VacToAirNM(vac)
	}
	return vac
}

// EdlenVacToAirNM converts vacuum to standard air with the Edlén (1966)
// dispersion formula, for comparison with VacToAirNM:
//
//	(n − 1)·10⁸ = 8342.13 + 2 406 030/(130 − σ²) + 15 997/(38.9 − σ²),  σ in µm⁻¹
//
// References:
//
//	Edlén, B. 1966, Metrologia 2, 71.
func EdlenVacToAirNM(vacNM float64) float64 {
	s := 1e3 / vacNM
	s2 := s * s
	n := 1 + (8342.13+2406030/(130-s2)+15997/(38.9-s2))*1e-8
	return vacNM / n
}

// CiddorVacToAirNM converts vacuum to standard air with the Ciddor (1996)
// standard-air formula, valid 230–1690 nm:
//
//	n − 1 = 0.05792105/(238.0185 − σ²) + 0.00167917/(57.362 − σ²),  σ in µm⁻¹
//
// References:
//
//	Ciddor, P. E. 1996, Appl. Opt. 35, 1566.
func CiddorVacToAirNM(vacNM float64) float64 {
	return vacNM / ciddorIndex(vacNM)
}

// CiddorAirToVacNM inverts CiddorVacToAirNM by fixed-point iteration on
// the index (evaluated at the current vacuum estimate).
func CiddorAirToVacNM(airNM float64, iterations int) float64 {
	vac := airNM
	for range iterations {
		vac = airNM * ciddorIndex(vac)
	}
	return vac
}

func ciddorIndex(vacNM float64) float64 {
	s := 1e3 / vacNM
	s2 := s * s
	return 1 + 0.05792105/(238.0185-s2) + 0.00167917/(57.362-s2)
}
