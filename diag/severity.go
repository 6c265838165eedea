package diag

// Severity grades a Flag for the reader.
type Severity string

// The three severities, from the worst.
const (
	// SeverityProblem: this run's number is doubtful; act (recalibrate,
	// re-measure, exclude a line).
	SeverityProblem Severity = "problem"
	// SeverityCaution: a limit worth knowing for this run.
	SeverityCaution Severity = "caution"
	// SeverityNote: a general caveat of the method, true of every run of
	// its kind; shown once in the method panel and not counted.
	SeverityNote Severity = "note"
)

// flagSeverity is the one table of severities, keyed by flag code. A
// branch that adds a flag code adds its entry here; TestFlagSeverityTable
// fails for a code constant missing from it. Codes not in the table (for
// example from an older stored result) are cautions.
var flagSeverity = map[string]Severity{
	// Boltzmann plot.
	FlagTooFewLines:      SeverityCaution, // no T_exc from this run
	FlagSlopeNotNegative: SeverityProblem, // no physical temperature
	FlagSlopeFlat:        SeverityProblem, // no temperature from the slope
	FlagLowSensitivity:   SeverityNote,    // Balmer levels span ~1 eV: always a short lever
	FlagWideUncertainty:  SeverityCaution,
	FlagSelfAbsorption:   SeverityProblem, // Hα low: self-absorption suspected
	FlagPartialLTE:       SeverityCaution, // a level off the line
	FlagScaledUnc:        SeverityCaution, // scatter beyond the stated errors
	FlagNoIntensityUnc:   SeverityCaution,

	// Analysis.
	FlagUncalibrated:     SeverityProblem, // raw counts: T_exc meaningless
	FlagNoGasTemperature: SeverityCaution, // densities are upper limits
	FlagNoStarkWidth:     SeverityCaution,
	FlagNoRelation:       SeverityNote, // the method has no relation for these lines
	FlagRelationRange:    SeverityCaution,
	FlagDensityDisagree:  SeverityProblem,
	FlagUnverified:       SeverityNote,    // coefficients of the method itself
	FlagModelRange:       SeverityNote,    // one of several Stark models outside its tables: the others give n_e
	FlagShapeBound:       SeverityCaution, // Stark width ≪ instrument: n_e only a lower limit
	FlagDensityScatter:   SeverityCaution, // lines disagree beyond their σ (σ scaled up)
	// The calibration σ is unknown unless given: a caveat of every run
	// without it, said once in the method panel.
	FlagTexNoCalibrationUnc: SeverityNote,

	// LTE checks.
	FlagLTENotChecked:        SeverityCaution,
	FlagLTEComplete:          SeverityNote, // complete LTE fails in any low-pressure discharge
	FlagLTEPartial:           SeverityCaution,
	FlagLTEDensitySameSource: SeverityNote, // always true: n_e comes from the same spectrum
	FlagLTE:                  SeverityCaution,

	// Spectrum pipeline (diag/spectrum).
	"saturation_auto":   SeverityCaution,
	"line_saturated":    SeverityProblem,
	"partial_result":    SeverityProblem,
	"line_undersampled": SeverityCaution, // width withheld from n_e
	// Whole-spectrum fit (diag/spectrum whole.go).
	"whole_lines_disagree": SeverityProblem, // the two routes differ beyond 2σ
	"whole_fit_failed":     SeverityCaution, // lines result reported instead
	"whole_density_limit":  SeverityCaution, // n_e an upper limit only
}

// SeverityOf returns the severity of a flag code (caution when the code
// is not in the table).
func SeverityOf(code string) Severity {
	if s, ok := flagSeverity[code]; ok {
		return s
	}
	return SeverityCaution
}

// SetSeverities sets each flag's Severity from the table. It is applied
// where flags are finalised (Analyze, the spectrum pipeline).
func SetSeverities(fs []Flag) {
	for i := range fs {
		fs[i].Severity = SeverityOf(fs[i].Code)
	}
}

// severityRank orders severities: problem 3, caution 2, note 1, none 0.
func severityRank(s Severity) int {
	switch s {
	case SeverityProblem:
		return 3
	case SeverityCaution:
		return 2
	case SeverityNote:
		return 1
	}
	return 0
}

// FlagSeverity returns the flag's severity, from the table when unset
// (flags of results stored before severities existed).
func FlagSeverity(f Flag) Severity {
	if f.Severity != "" {
		return f.Severity
	}
	return SeverityOf(f.Code)
}

// CountWarnings returns the number of distinct flag codes of severity
// problem or caution (notes are not counted) and the worst severity among
// them ("" when there is none): the run log's warning count and colour.
func CountWarnings(fs []Flag) (int, Severity) {
	seen := map[string]bool{}
	var worst Severity
	for _, f := range fs {
		s := FlagSeverity(f)
		if s == SeverityNote || seen[f.Code] {
			continue
		}
		seen[f.Code] = true
		if severityRank(s) > severityRank(worst) {
			worst = s
		}
	}
	return len(seen), worst
}
