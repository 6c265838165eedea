package server

import "testing"

var trendURLs = []string{
	"/trends",
	"/trends?chamber=2&y=ne_m3",
	"/trends?mode=control&chamber=1&base_n=50",
	"/trends?compare=chamber&cmp_a=1&cmp_b=2",
}

// BenchmarkTrendPages100k: the trends page (all runs, one chamber, a
// control chart, side by side) over 100 000 runs, with the trend-series
// cache warm as it is while nothing changes.
func BenchmarkTrendPages100k(b *testing.B) {
	s, ck := benchServer(b)
	pageTimes(b, s, ck, trendURLs)
}

// BenchmarkTrendPages100kCold: the same pages with the data generation
// bumped before every request, so every series is read from the database.
func BenchmarkTrendPages100kCold(b *testing.B) {
	s, ck := benchServer(b)
	pageTimesWith(b, s, ck, trendURLs, func() {
		if _, err := s.DB.SQL().Exec(`UPDATE data_generation SET gen = gen + 1 WHERE id = 1`); err != nil {
			b.Fatal(err)
		}
	})
}
