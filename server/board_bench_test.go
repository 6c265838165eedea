package server

import "testing"

// BenchmarkBoardPage100k: the chamber board over 100 000 runs (four
// chambers of about 25 000 runs each); every request reads the database
// (the board has no cache).
func BenchmarkBoardPage100k(b *testing.B) {
	s, ck := benchServer(b)
	pageTimes(b, s, ck, []string{"/board"})
}

// BenchmarkTrendEvents100k: the control chart of one chamber with chamber
// events marked.
func BenchmarkTrendEvents100k(b *testing.B) {
	s, ck := benchServer(b)
	pageTimes(b, s, ck, []string{"/trends?mode=control&chamber=1&base_n=50"})
}
