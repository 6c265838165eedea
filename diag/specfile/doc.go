// Package specfile reads the spectrum files that grating spectrometers
// write, for hydrogen Balmer-line diagnostics, and writes spectra back out.
//
// It is pure parsing: an io.Reader (or bytes) goes in, a [Spectrum] comes
// out. There is no HTTP, SQL, logging or clock here, and nothing is
// guessed silently: an unrecognised axis unit is reported as UnknownUnit,
// not assumed to be nanometres.
//
// Two open formats are supported:
//
//   - delimited text (CSV, semicolon with decimal comma, tab, or
//     whitespace columns), read by [ReadText];
//   - IUPAC JCAMP-DX 4.24 / 5.01 with XYDATA in AFFN or compressed ASDF
//     form, XYPOINTS or PEAK TABLE, read by [ReadJCAMP].
//
// [Read] detects the format from the content and is the entry point for
// uploads:
//
//	sp, err := specfile.Read(upload.Filename, f, specfile.Options{})
//	if err != nil {
//		var pe *specfile.ParseError
//		if errors.As(err, &pe) {
//			// pe.Line is 17; err.Error() reads
//			// spectrum.csv:17: non-numeric intensity "12,3,4"
//		}
//		return err
//	}
//	wl, y, err := sp.WavelengthNM() // ascending nm, whatever the file's unit
//
// [ReadBytes] reads a file already in memory without copying it, and can
// reuse the point arrays of the previous spectrum ([Buffers]): for
// programs that read many files in turn.
//
// # Guarantees
//
// A returned Spectrum has len(X) == len(Y) >= Limits.MinPoints, only
// finite values, and strictly ascending X. A strictly descending axis, as
// wavenumber exports often have, is reversed (X and Y together); any other
// ordering problem is an error naming the line and value.
//
// # Errors and limits
//
// Every error about the data is a *[ParseError] carrying the file name,
// the 1-based line and a message, and wrapping a sentinel such as
// [ErrSyntax], [ErrInconsistent] or the limit errors [ErrFileTooLarge],
// [ErrLineTooLong], [ErrTooManyPoints] and [ErrTooFewPoints]. Inputs are
// bounded by [DefaultMaxBytes], [DefaultMaxPoints] and [DefaultMaxLineLen]
// unless [Limits] in [Options] say otherwise; no more than MaxBytes+1 bytes
// are ever read. Invalid options are programming errors and panic.
//
// # Writing
//
// [WriteCSV] and [WriteJCAMP] export a spectrum; both read back with the
// values unchanged (JCAMP-DX compressed ordinates to about 10⁻⁹ of the
// largest intensity unless they are whole numbers).
//
// References:
//
//   - R. S. McDonald and P. A. Wilks, "JCAMP-DX: A Standard Form for
//     Exchange of Infrared Spectra in Computer Readable Form", Applied
//     Spectroscopy 42(1), 151–162 (1988). Defines labels, AFFN and the ASDF
//     compression (SQZ, DIF, DUP) with the Y-value check.
//   - IUPAC JCAMP-DX version 5.01, which keeps the 4.24 XYDATA, XYPOINTS
//     and PEAK TABLE forms used here unchanged.
package specfile
