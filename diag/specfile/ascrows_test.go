package specfile

import (
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestAscRowsMatchesReference: files whose rows are mostly of ascRows'
// fast form (counts with or without a point; "\n" or "\r\n"), with rows
// that end it at every place (a sign, an exponent, eight digits, an x
// without a point, a lone "\r", a comment, a row out of order, a long
// row, the end of the file without a line end), read as the two-pass
// reference reads them, also with point limits that stop ascRows.
func TestAscRowsMatchesReference(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 7))
	odd := []string{"-%s,%s", "%s,-%s", "%s,%se0", "%s0000000,%s", "%s,%s00000000", "%s,7", "7,%s",
		"%s,%s\r", "# note", "%s , %s", "%s,%s,", "+%s,%s", "%s,%s%s"}
	for trial := range 300 {
		var b strings.Builder
		b.WriteString("wavelength_nm,counts\n")
		// A third of the files end their rows with "\r\n", a third
		// write the counts as whole numbers.
		eol, whole := "\n", trial%3 == 1
		if trial%3 == 2 {
			eol = "\r\n"
		}
		x := 300.0
		rows := 5 + r.IntN(120)
		for i := range rows {
			x += 0.01 + r.Float64()
			if r.IntN(40) == 0 {
				x -= 2 // out of order
			}
			xs := fmt.Sprintf("%.*f", r.IntN(8), x)
			prec := r.IntN(9)
			if whole && r.IntN(20) > 0 {
				prec = 0
			}
			ys := fmt.Sprintf("%.*f", prec, r.Float64()*float64(int(1)<<r.IntN(30)))
			line := xs + "," + ys
			if r.IntN(25) == 0 {
				f := odd[r.IntN(len(odd))]
				switch strings.Count(f, "%s") {
				case 0:
					line = f
				case 1:
					line = fmt.Sprintf(f, xs)
				case 2:
					line = fmt.Sprintf(f, xs, ys)
				default:
					line = fmt.Sprintf(f, xs, ys, ys)
				}
			}
			b.WriteString(line)
			if i < rows-1 || r.IntN(2) == 0 {
				b.WriteString(eol)
			}
		}
		data := []byte(b.String())
		checkMatchesReference(t, data, TextOptions{}, Limits{})
		checkMatchesReference(t, data, TextOptions{}, Limits{MaxPoints: 3 + trial%50, MinPoints: 3})
	}
}

// TestDigitsIn: digitsIn counts the leading decimal digits of a word
// (digits7 up to 7), for
// every byte value in every place after runs of digits of every length.
func TestDigitsIn(t *testing.T) {
	for run := 0; run <= 8; run++ {
		for c := range 256 {
			for fill := range 3 {
				var b [8]byte
				for i := range b {
					b[i] = "0123456789"[(i*7+fill)%10]
				}
				want := run
				if run < 8 {
					b[run] = byte(c)
					if c >= '0' && c <= '9' {
						continue
					}
					for i := run + 1; i < 8; i++ {
						b[i] = byte(c + i*fill) // what follows is anything
					}
				}
				w := load8(string(b[:]), 0)
				if got := digitsIn(w); got != want {
					t.Fatalf("% x: digitsIn %d, want %d", b, got, want)
				}
				if got := digits7(w); got != min(want, 7) {
					t.Fatalf("% x: digits7 %d, want %d", b, got, min(want, 7))
				}
			}
		}
	}
}
