package views

import (
	"fmt"
	"math"
	"net/http"
	"strings"
)

func statusText(code int) string {
	if t := http.StatusText(code); t != "" {
		return fmt.Sprintf("%d %s", code, t)
	}
	return fmt.Sprint(code)
}

// Num formats an optional value with sig significant figures, or "—".
func Num(v *float64, sig int) string {
	if v == nil || math.IsNaN(*v) || math.IsInf(*v, 0) {
		return "—"
	}
	return SigFig(*v, sig)
}

// SigFig formats v with sig significant figures, in plain or scientific
// notation (with ×10 superscripts) as fits.
func SigFig(v float64, sig int) string {
	if v == 0 {
		return "0"
	}
	a := math.Abs(v)
	if a >= 1e-3 && a < 1e6 {
		digits := sig - 1 - int(math.Floor(math.Log10(a)))
		if digits < 0 {
			digits = 0
		}
		return fmt.Sprintf("%.*f", digits, v)
	}
	s := fmt.Sprintf("%.*e", sig-1, v)
	mant, exp, _ := strings.Cut(s, "e")
	var e int
	fmt.Sscanf(exp, "%d", &e)
	return mant + " × 10" + superscript(e)
}

// ValueUnc formats a value ± 1σ: the uncertainty rounded to two
// significant figures and the value to the same decimal place (so a value
// with σ/v > 20 % keeps at most two significant figures), in plain
// notation between 1e-3 and 1e6 and as (m ± u) × 10ⁿ otherwise.
func ValueUnc(v, unc *float64) string {
	if v == nil || math.IsNaN(*v) || math.IsInf(*v, 0) {
		return "—"
	}
	if unc == nil || !(*unc > 0) || math.IsInf(*unc, 0) {
		return SigFig(*v, 4)
	}
	u := *unc
	big := math.Max(math.Abs(*v), u)
	e := int(math.Floor(math.Log10(big)))
	if big >= 1e-3 && big < 1e6 {
		return plainPM(*v, u)
	}
	scale := math.Pow(10, float64(e))
	return "(" + plainPM(*v/scale, u/scale) + ") × 10" + superscript(e)
}

// minus writes a typographic minus sign for display.
func minus(s string) string { return strings.ReplaceAll(s, "-", "−") }

// plainPM prints v ± u with u at two significant figures.
func plainPM(v, u float64) string {
	d := 1 - int(math.Floor(math.Log10(u)))
	if d >= 0 {
		return minus(fmt.Sprintf("%.*f", d, v)) + fmt.Sprintf(" ± %.*f", d, u)
	}
	q := math.Pow(10, float64(-d))
	return minus(fmt.Sprintf("%.0f", math.Round(v/q)*q)) + fmt.Sprintf(" ± %.0f", math.Round(u/q)*q)
}

func superscript(e int) string {
	const digits = "⁰¹²³⁴⁵⁶⁷⁸⁹"
	s := fmt.Sprint(e)
	var b strings.Builder
	for _, r := range s {
		if r == '-' {
			b.WriteString("⁻")
			continue
		}
		b.WriteString(string([]rune(digits)[r-'0']))
	}
	return b.String()
}
