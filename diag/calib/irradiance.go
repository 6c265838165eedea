package calib

import (
	"fmt"
	"io"

	"glowlog/diag/specfile"
)

// Irradiance is a certified spectral-irradiance table of a standard lamp.
type Irradiance struct {
	// WavelengthNM is the strictly ascending wavelength grid, nm.
	WavelengthNM []float64
	// WPerM2NM is the spectral irradiance E_λ at each wavelength, in
	// W m⁻² nm⁻¹ (energy units), at the certified distance and current.
	WPerM2NM []float64
	// Name is the file name given to ReadIrradiance.
	Name string
	// Title is the "# title:" comment of the file, if any.
	Title string
	// Meta holds "# key: value" comments (for example "lamp",
	// "distance_cm", "current_a", "certificate"). Never nil.
	Meta map[string]string
}

// ReadIrradiance reads a certified spectral-irradiance table from a text
// file. name is used only in messages.
//
// The file form is two columns, wavelength in nm and spectral irradiance
// in W m⁻² nm⁻¹, separated by commas, tabs, semicolons or spaces, with
// comment lines starting with "#" (and the other comment forms of
// specfile.ReadText) and an optional header row. A header that names a
// wavelength unit (for example "wavelength (Å)") is honoured and converted
// to nm; without one the first column is taken to be nm, as this file form
// defines. For example:
//
//	# title: FEL-type irradiance standard, serial FH-Q-0412
//	# lab: Fenwick Hollow Plasma Lab
//	# distance_cm: 50.0
//	wavelength_nm, irradiance_W_m2_nm
//	350, 0.0521
//	400, 0.1155
//	...
//
// At least two points are required. Errors are *specfile.ParseError values
// for syntax problems (naming the line) and errors wrapping ErrBadTable
// for tables that are not a valid positive function of wavelength (naming
// the file and the wavelength).
func ReadIrradiance(name string, r io.Reader) (*Irradiance, error) {
	sp, err := specfile.Read(name, r, specfile.Options{
		Format: specfile.FormatText,
		Limits: specfile.Limits{MinPoints: 2},
	})
	if err != nil {
		return nil, err
	}
	if sp.XUnit == specfile.UnknownUnit {
		sp.XUnit = specfile.NM // the file form defines nm
	}
	wl, e, err := sp.WavelengthNM()
	if err != nil {
		return nil, fmt.Errorf("irradiance table %s: %w", name, err)
	}
	if err := checkTable(wl, e, "irradiance"); err != nil {
		return nil, fmt.Errorf("irradiance table %s: %w", name, err)
	}
	return &Irradiance{WavelengthNM: wl, WPerM2NM: e, Name: name, Title: sp.Title, Meta: sp.Meta}, nil
}
