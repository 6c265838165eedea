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

// ValueUnc formats a value ± 1σ with the uncertainty to two significant
// figures and the value to the same decimal place; with σ/v > 20 % both get
// at most two significant figures.
func ValueUnc(v, unc *float64) string {
	if v == nil {
		return "—"
	}
	if unc == nil || *unc <= 0 {
		return SigFig(*v, 4)
	}
	a, u := math.Abs(*v), *unc
	if a >= 1e6 || a < 1e-3 {
		e := math.Floor(math.Log10(a))
		scale := math.Pow(10, e)
		m, mu := *v/scale, u/scale
		d := decimalsFor(mu)
		return fmt.Sprintf("(%.*f ± %.*f) × 10%s", d, m, d, mu, superscript(int(e)))
	}
	d := decimalsFor(u)
	return fmt.Sprintf("%.*f ± %.*f", d, *v, d, u)
}

func decimalsFor(u float64) int {
	if u <= 0 {
		return 3
	}
	d := 1 - int(math.Floor(math.Log10(u)))
	if d < 0 {
		return 0
	}
	return d
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
