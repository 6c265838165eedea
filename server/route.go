package server

import (
	"fmt"
	"strings"

	"glowlog/diag/spectrum"
	"glowlog/store"
	"glowlog/views"
)

// The analysis route of a version (AnalysisSettings.Model) travels like
// the line shape does: the run form, the reanalysis form, the API's
// multipart fields and the analyze command's flags all set it, Validate
// checks it, and the analysis service hands it to the spectrum pipeline.
//
// Rules shared by every path:
//   - "" is the default route, which the pipeline decides (DefaultModel
//     names it for the forms and the checks below);
//   - the whole-fit options (whole_areas, whole_free_gas_temperature,
//     whole_free_instrument) belong to the whole-spectrum route: given
//     with the lines route they are refused; carried over from earlier
//     settings (a reanalysis or an upload that switches to lines) they are
//     dropped (dropWholeOptions), so that the settings stored and shown are
//     the settings used;
//   - line tables (measurement sets: intensities and widths, no spectrum)
//     are always analysed line by line; a version whose route is "whole"
//     must have at least one spectrum (checkRouteFiles), and each result
//     says which route produced it (ResultModel).

// DefaultModel is the route the pipeline takes for Model ""
// (spectrum.DefaultModel). TestDefaultModelIsPipelines checks it against
// the pipeline's own answer (Result.Model).
var DefaultModel = spectrum.DefaultModel

// ModelLabel names a route for people.
func ModelLabel(m string) string {
	switch m {
	case spectrum.ModelWhole:
		return "whole-spectrum fit"
	case spectrum.ModelLines:
		return "line by line"
	}
	return m
}

// EffectiveModel is the route settings st take ("" resolved).
func (st AnalysisSettings) EffectiveModel() string {
	if st.Model == "" {
		return spectrum.DefaultRoute(st.LineShape)
	}
	return st.Model
}

// wholeOptionsSet lists the whole-fit options st sets (by their setting
// names), for messages.
func (st AnalysisSettings) wholeOptionsSet() []string {
	var out []string
	if st.WholeAreas != "" {
		out = append(out, fmt.Sprintf("whole_areas %q", st.WholeAreas))
	}
	if st.WholeFreeGasTemperature {
		out = append(out, "whole_free_gas_temperature")
	}
	if st.WholeFreeInstrument {
		out = append(out, "whole_free_instrument")
	}
	return out
}

// validateRoute is the part of Validate that checks the route and its
// options.
func (st AnalysisSettings) validateRoute() error {
	if !spectrum.ValidModel(st.Model) {
		return badRequest("model must be %q or %q (or empty for the default, %s), got %q",
			spectrum.ModelWhole, spectrum.ModelLines, DefaultModel, st.Model)
	}
	switch st.WholeAreas {
	case "", spectrum.WholeAreasBoltzmann, spectrum.WholeAreasFree:
	default:
		return badRequest("whole_areas must be %q or %q (or empty for %s), got %q",
			spectrum.WholeAreasBoltzmann, spectrum.WholeAreasFree, spectrum.WholeAreasBoltzmann, st.WholeAreas)
	}
	if set := st.wholeOptionsSet(); len(set) > 0 && st.EffectiveModel() != spectrum.ModelWhole {
		route := "model " + st.Model
		if st.Model == "" {
			route = "the default route, " + st.EffectiveModel()
		}
		return badRequest("%s: only the whole-spectrum fit (model %q) uses it, and %s analyses line by line",
			strings.Join(set, ", "), spectrum.ModelWhole, route)
	}
	return nil
}

// dropWholeOptions clears whole-fit options carried over from earlier
// settings when the route is not the whole-spectrum fit (given is true
// when this request set any of them itself: then they stay, and Validate
// refuses them with a message).
func (st *AnalysisSettings) dropWholeOptions(given bool) {
	if given || st.EffectiveModel() == spectrum.ModelWhole {
		return
	}
	st.WholeAreas, st.WholeFreeGasTemperature, st.WholeFreeInstrument = "", false, false
}

// checkRouteFiles refuses the whole-spectrum route for a version whose
// files hold no spectrum but line tables: a line table is analysed line by
// line whatever the route, so "whole" would be shown and not used.
func checkRouteFiles(st AnalysisSettings, atts []store.Attachment) error {
	if st.Model != spectrum.ModelWhole {
		return nil
	}
	tables := 0
	for _, a := range atts {
		switch a.Kind {
		case store.KindSpectrum:
			return nil
		case store.KindLineTable:
			tables++
		}
	}
	if tables == 0 {
		return nil
	}
	return formUserError("model %q (whole-spectrum fit) needs a spectrum: this run has only line tables (measurement sets), which are always analysed line by line; choose %q or the default",
		spectrum.ModelWhole, spectrum.ModelLines)
}

// flagWholeFailed is the pipeline's flag for a whole-spectrum fit that
// gave no result (the line-by-line numbers are reported instead).
const flagWholeFailed = "whole_fit_failed"

// ResultModel is the route that produced a stored result: a spectrum
// result says it (results stored before the route existed are "lines");
// a line table is always "lines".
func ResultModel(sr *spectrum.Result) string {
	if sr != nil && sr.Model != "" {
		return sr.Model
	}
	return spectrum.ModelLines
}

// routeValues are the route fields of the forms.
func routeValues(model, areas string, freeGas, freeIn bool) views.RouteValues {
	return views.RouteValues{Model: model, Default: ModelLabel(DefaultModel) + "; line by line for Voigt-shaped lines", DefaultModel: DefaultModel, WholeAreas: areas,
		WholeFreeGas: freeGas, WholeFreeIn: freeIn}
}

// wholeOptionsText describes the whole-fit options of st in words
// (" with free line areas, gas temperature fitted").
func wholeOptionsText(st AnalysisSettings) string {
	var parts []string
	if st.WholeAreas == spectrum.WholeAreasFree {
		parts = append(parts, "free line areas")
	} else {
		parts = append(parts, "line areas tied by T_exc")
	}
	if st.WholeFreeGasTemperature {
		parts = append(parts, "gas temperature fitted")
	}
	if st.WholeFreeInstrument {
		parts = append(parts, "instrument width fitted")
	}
	return " (" + strings.Join(parts, ", ") + ")"
}

// routeWords says which route produced a stored result, for the pages.
func routeWords(r *decodedResult) string {
	if r.Spectrum == nil {
		return "line by line (a line table always is)"
	}
	m := ResultModel(r.Spectrum)
	if m == spectrum.ModelWhole {
		return ModelLabel(m) + " (the whole fitted range at once)"
	}
	for _, f := range r.Spectrum.Flags {
		if f.Code == flagWholeFailed {
			return ModelLabel(m) + " (each line's window on its own): the whole-spectrum fit asked for gave no result, see the warnings"
		}
	}
	return ModelLabel(m) + " (each line's window on its own)"
}
