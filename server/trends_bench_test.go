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

// BenchmarkTrendPages100kAfterChange: the same pages with one run's
// analysis summary changed before every request (as while spectra are
// being ingested): cached series are brought up to date from the change
// log.
func BenchmarkTrendPages100kAfterChange(b *testing.B) {
	s, ck := benchServer(b)
	i := 0
	pageTimesWith(b, s, ck, trendURLs, func() {
		i++
		if _, err := s.DB.SQL().Exec(`UPDATE runs SET texc_k = texc_k + 1 WHERE id = ?`, 1+(i*7919)%benchRuns); err != nil {
			b.Fatal(err)
		}
	})
}

// BenchmarkTrendPages100kFirstView: the same pages with the trend cache
// emptied before every request: every series is read from the database.
func BenchmarkTrendPages100kFirstView(b *testing.B) {
	s, ck := benchServer(b)
	pageTimesWith(b, s, ck, trendURLs, s.DB.DropTrendCache)
}
