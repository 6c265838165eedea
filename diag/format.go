package diag

import (
	"math"
	"strconv"
	"strings"
)

// sci formats v with sig significant figures for messages: plain between
// 1e-3 and 1e5 ("950", "0.0421"), otherwise as "4.95 × 10²¹".
func sci(v float64, sig int) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'g', sig, 64)
	}
	a := math.Abs(v)
	e := int(math.Floor(math.Log10(a)))
	if a >= 1e-3 && a < 1e5 {
		d := max(sig-1-e, 0)
		q := math.Pow(10, float64(sig-1-e))
		return strconv.FormatFloat(math.Round(v*q)/q, 'f', d, 64)
	}
	m := v / math.Pow(10, float64(e))
	if math.Abs(math.Round(m*math.Pow(10, float64(sig-1)))) >= 10*math.Pow(10, float64(sig-1)) {
		m /= 10
		e++
	}
	return strconv.FormatFloat(m, 'f', sig-1, 64) + " × 10" + superscript(e)
}

func superscript(e int) string {
	const digits = "⁰¹²³⁴⁵⁶⁷⁸⁹"
	var b strings.Builder
	for _, r := range strconv.Itoa(e) {
		if r == '-' {
			b.WriteString("⁻")
			continue
		}
		b.WriteString(string([]rune(digits)[r-'0']))
	}
	return b.String()
}
