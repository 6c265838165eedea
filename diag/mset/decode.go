package mset

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"glowlog/diag"
)

// MaxBytes is the largest measurement set Decode accepts.
const MaxBytes = 1 << 20

// maxNameBytes bounds the string values of a measurement set (units,
// isotope, perturber, Stark relation IDs), so that messages never echo a
// long string.
const maxNameBytes = 64

// Error is a problem with a measurement set. Line is 1-based (0 when the
// problem has no place in the file, e.g. it is empty or too large).
type Error struct {
	Source string
	Line   int
	Field  string
	Msg    string
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.Source)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
	}
	b.WriteString(": ")
	if e.Field != "" {
		b.WriteString(e.Field + ": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// Input is the wire form of a measurement set. Pointers distinguish a
// missing field from a zero. Field names are documented in README.md.
type Input struct {
	Isotope                 *string           `json:"isotope"`
	IntensityUnit           *string           `json:"intensity_unit"`
	ResponseCorrected       *bool             `json:"response_corrected"`
	InstrumentFWHMNM        *float64          `json:"instrument_fwhm_nm"`
	InstrumentLorentzFWHMNM *float64          `json:"instrument_lorentz_fwhm_nm"`
	GasTemperatureK         *float64          `json:"gas_temperature_K"`
	GasTemperatureUncK      *float64          `json:"gas_temperature_unc_K"`
	PressurePa              *float64          `json:"pressure_Pa"`
	Perturber               *string           `json:"perturber"`
	GroundStateDensityM3    *float64          `json:"ground_state_density_m3"`
	StarkRelations          map[string]string `json:"stark_relations"`
	LastResolvedUpper       *int              `json:"last_resolved_upper_level"`
	SolveGasTemperature     *bool             `json:"solve_gas_temperature"`
	Lines                   []LineInput       `json:"lines"`
}

// LineInput is the wire form of one line.
type LineInput struct {
	UpperLevel              *int     `json:"upper_level"`
	Intensity               *float64 `json:"intensity"`
	IntensityUnc            *float64 `json:"intensity_unc"`
	FWHMNM                  *float64 `json:"fwhm_nm"`
	FWHMUncNM               *float64 `json:"fwhm_unc_nm"`
	LorentzFWHMNM           *float64 `json:"lorentz_fwhm_nm"`
	LorentzFWHMUncNM        *float64 `json:"lorentz_fwhm_unc_nm"`
	InstrumentFWHMNM        *float64 `json:"instrument_fwhm_nm"`
	InstrumentLorentzFWHMNM *float64 `json:"instrument_lorentz_fwhm_nm"`
	Exclude                 *bool    `json:"exclude_from_boltzmann"`
}

// Decode parses and checks a measurement set. source names it in errors
// (a file name, or "stdin"). Every error is an *Error.
func Decode(source string, data []byte) (diag.Measurement, error) {
	var m diag.Measurement
	fail := func(line int, field, format string, args ...any) (diag.Measurement, error) {
		return diag.Measurement{}, &Error{Source: source, Line: line, Field: field, Msg: fmt.Sprintf(format, args...)}
	}
	if len(data) > MaxBytes {
		return fail(0, "", "file is %d bytes, more than the %d-byte limit for a measurement set", len(data), MaxBytes)
	}
	if len(bytes.TrimSpace(data)) == 0 {
		return fail(0, "", "empty input: expected a JSON object with \"intensity_unit\" and \"lines\"")
	}
	if err := checkShape(data, MaxDepth, MaxValues, msetDepthHint); err != nil {
		return diag.Measurement{}, shapeToError(source, data, err)
	}
	pos, err := indexPositions(data, MaxEntries)
	if err != nil {
		var se *json.SyntaxError
		var sh *shapeError
		switch {
		case errors.As(err, &sh):
			return diag.Measurement{}, shapeToError(source, data, err)
		case errors.As(err, &se):
			return fail(lineOf(data, se.Offset), "", "malformed JSON: %v", se)
		case errors.Is(err, errTrailing):
			return fail(lineOf(data, int64(len(bytes.TrimRight(data, " \t\r\n")))), "", "%v", err)
		default:
			return fail(lineOf(data, int64(len(data))), "", "malformed JSON: %v", err)
		}
	}
	at := func(path string) int {
		if off, ok := pos[path]; ok {
			return lineOf(data, off)
		}
		return 0
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var in Input
	if err := dec.Decode(&in); err != nil {
		var te *json.UnmarshalTypeError
		if errors.As(err, &te) {
			field := te.Field
			return fail(lineOf(data, te.Offset), field, "expected %s, got JSON %s", te.Type, te.Value)
		}
		if msg := err.Error(); strings.HasPrefix(msg, "json: unknown field ") {
			name, _ := strconv.Unquote(strings.TrimPrefix(msg, "json: unknown field "))
			line := 0
			for p, off := range pos {
				if p == name || strings.HasSuffix(p, "."+name) {
					line = lineOf(data, off)
					break
				}
			}
			return fail(line, name, "unknown field (see README for the measurement-set fields)")
		}
		return fail(0, "", "malformed JSON: %v", err)
	}

	// Names are short: a long one is not a name, and is not echoed back.
	for _, f := range []struct {
		path string
		v    *string
	}{{"intensity_unit", in.IntensityUnit}, {"isotope", in.Isotope}, {"perturber", in.Perturber}} {
		if f.v != nil && len(*f.v) > maxNameBytes {
			return fail(at(f.path), f.path, "a %d-byte value is not a name (limit %d bytes)", len(*f.v), maxNameBytes)
		}
	}
	for k, v := range in.StarkRelations {
		if len(k) > maxNameBytes || len(v) > maxNameBytes {
			return fail(at("stark_relations"), "stark_relations", "keys are upper levels and values relation IDs, each at most %d bytes", maxNameBytes)
		}
	}

	// Top-level fields.
	if in.IntensityUnit == nil {
		return fail(1, "intensity_unit", "required field missing (\"photon\" or \"energy\")")
	}
	u, err := diag.ParseIntensityUnit(*in.IntensityUnit)
	if err != nil {
		return fail(at("intensity_unit"), "intensity_unit", "%v", err)
	}
	m.Unit = u
	if in.Isotope != nil {
		iso, err := diag.ParseIsotope(*in.Isotope)
		if err != nil {
			return fail(at("isotope"), "isotope", "unknown isotope %q (want \"H\" or \"D\")", *in.Isotope)
		}
		m.Isotope = iso
	}
	m.ResponseCorrected = true
	if in.ResponseCorrected != nil {
		m.ResponseCorrected = *in.ResponseCorrected
	}
	type num struct {
		path     string
		v        *float64
		dst      *float64
		positive bool // > 0 required (else ≥ 0)
		what     string
	}
	nums := []num{
		{"instrument_fwhm_nm", in.InstrumentFWHMNM, &m.InstrumentGaussFWHMNM, false, "an instrument FWHM in nm, ≥ 0"},
		{"instrument_lorentz_fwhm_nm", in.InstrumentLorentzFWHMNM, &m.InstrumentLorentzFWHMNM, false, "a Lorentzian instrument FWHM in nm, ≥ 0"},
		{"gas_temperature_K", in.GasTemperatureK, &m.GasTemperatureK, true, "a gas temperature in K, > 0"},
		{"gas_temperature_unc_K", in.GasTemperatureUncK, &m.GasTemperatureUncK, false, "a 1σ in K, ≥ 0"},
		{"pressure_Pa", in.PressurePa, &m.PressurePa, false, "a pressure in Pa, ≥ 0"},
		{"ground_state_density_m3", in.GroundStateDensityM3, &m.GroundStateDensityM3, false, "an H(1s) density in m⁻³, ≥ 0"},
	}
	for _, n := range nums {
		if n.v == nil {
			continue
		}
		v := *n.v
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 || (n.positive && v == 0) {
			return fail(at(n.path), n.path, "must be %s, got %v", n.what, v)
		}
		*n.dst = v
	}
	if m.GasTemperatureK > 1e6 {
		return fail(at("gas_temperature_K"), "gas_temperature_K", "%v K is not a plausible gas temperature (limit 1e6 K): check the unit", m.GasTemperatureK)
	}
	if m.InstrumentGaussFWHMNM > 50 || m.InstrumentLorentzFWHMNM > 50 {
		return fail(at("instrument_fwhm_nm"), "instrument_fwhm_nm", "instrument width above 50 nm: check the unit (nm expected)")
	}
	if m.PressurePa > 1e8 {
		return fail(at("pressure_Pa"), "pressure_Pa", "%v Pa is above 1000 bar: check the unit (Pa expected)", m.PressurePa)
	}
	if in.Perturber != nil {
		m.Perturber = *in.Perturber
		if _, err := diag.LookupPerturber(m.Perturber); err != nil {
			return fail(at("perturber"), "perturber", "%v", strings.TrimPrefix(err.Error(), "diag: "))
		}
	}
	if len(in.StarkRelations) > 0 {
		m.StarkRelations = map[int]string{}
		keys := make([]string, 0, len(in.StarkRelations))
		for k := range in.StarkRelations {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			p := "stark_relations." + k
			n, err := strconv.Atoi(k)
			if err != nil || n < 3 || n > diag.MaxLevel {
				return fail(at(p), p, "key must be an upper level 3…%d, got %q", diag.MaxLevel, k)
			}
			id := in.StarkRelations[k]
			r, err := diag.LookupStarkRelation(id)
			if err != nil {
				return fail(at(p), p, "%v", strings.TrimPrefix(err.Error(), "diag: "))
			}
			if r.Upper != n {
				return fail(at(p), p, "relation %q is for n = %d, not n = %d", id, r.Upper, n)
			}
			m.StarkRelations[n] = id
		}
	}
	if in.LastResolvedUpper != nil {
		v := *in.LastResolvedUpper
		if v < 3 || v > diag.MaxLevel {
			return fail(at("last_resolved_upper_level"), "last_resolved_upper_level", "must be an upper level 3…%d, got %d", diag.MaxLevel, v)
		}
		m.LastResolvedUpper = v
	}
	if in.SolveGasTemperature != nil {
		m.SolveGasTemperature = *in.SolveGasTemperature
	}

	// Lines.
	if in.Lines == nil {
		return fail(1, "lines", "required field missing (a list of lines with upper_level and intensity)")
	}
	if len(in.Lines) == 0 {
		return fail(at("lines"), "lines", "the list is empty: give at least one line")
	}
	seen := map[int]int{}
	for i, l := range in.Lines {
		base := fmt.Sprintf("lines[%d]", i)
		if l.UpperLevel == nil {
			return fail(at(base), base+".upper_level", "required field missing")
		}
		n := *l.UpperLevel
		if n < 3 || n > diag.MaxLevel {
			return fail(at(base+".upper_level"), base+".upper_level", "no Balmer line has upper level %d (valid: 3 = Hα … %d)", n, diag.MaxLevel)
		}
		if j, dup := seen[n]; dup {
			return fail(at(base+".upper_level"), base+".upper_level", "duplicate line: upper level %d already given in lines[%d]", n, j)
		}
		seen[n] = i
		ml := diag.MeasuredLine{Upper: n}
		lnums := []num{
			{".intensity", l.Intensity, &ml.Intensity, true, "a positive finite intensity"},
			{".intensity_unc", l.IntensityUnc, &ml.IntensityUnc, false, "a 1σ intensity uncertainty, ≥ 0"},
			{".fwhm_nm", l.FWHMNM, &ml.FWHMNM, true, "a positive FWHM in nm"},
			{".fwhm_unc_nm", l.FWHMUncNM, &ml.FWHMUncNM, false, "a 1σ in nm, ≥ 0"},
			{".lorentz_fwhm_nm", l.LorentzFWHMNM, &ml.LorentzFWHMNM, true, "a positive Lorentzian FWHM in nm"},
			{".lorentz_fwhm_unc_nm", l.LorentzFWHMUncNM, &ml.LorentzFWHMUncNM, false, "a 1σ in nm, ≥ 0"},
			{".instrument_fwhm_nm", l.InstrumentFWHMNM, &ml.InstrumentGaussFWHMNM, false, "an instrument FWHM in nm, ≥ 0"},
			{".instrument_lorentz_fwhm_nm", l.InstrumentLorentzFWHMNM, &ml.InstrumentLorentzFWHMNM, false, "a Lorentzian instrument FWHM in nm, ≥ 0"},
		}
		for _, f := range lnums {
			if f.v == nil {
				continue
			}
			v := *f.v
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 || (f.positive && v == 0) {
				return fail(at(base+f.path), base+f.path, "must be %s, got %v", f.what, v)
			}
			*f.dst = v
		}
		if l.Intensity == nil && l.FWHMNM == nil && l.LorentzFWHMNM == nil {
			return fail(at(base), base, "a line needs an intensity, a fwhm_nm or a lorentz_fwhm_nm")
		}
		for _, w := range []struct {
			p string
			v float64
		}{{".fwhm_nm", ml.FWHMNM}, {".lorentz_fwhm_nm", ml.LorentzFWHMNM}} {
			if w.v > 50 {
				return fail(at(base+w.p), base+w.p, "%v nm is wider than any Balmer line a spectrometer resolves (limit 50 nm): check the unit", w.v)
			}
		}
		if l.Exclude != nil {
			ml.ExcludeFromBoltzmann = *l.Exclude
		}
		m.Lines = append(m.Lines, ml)
	}
	return m, nil
}
