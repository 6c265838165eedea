package server

import "testing"

// BenchmarkTrendPages100k: the trends page (all runs, one chamber, a
// control chart, side by side) over 100 000 runs.
func BenchmarkTrendPages100k(b *testing.B) {
	s, ck := benchServer(b)
	pageTimes(b, s, ck, []string{
		"/trends",
		"/trends?chamber=2&y=ne_m3",
		"/trends?mode=control&chamber=1&base_n=50",
		"/trends?compare=chamber&cmp_a=1&cmp_b=2",
	})
}
