package store

import (
	"bytes"
	"sort"
	"strings"
	"unicode/utf8"
)

// textCol holds the searched text of every run of the trend column store
// (title and notes; the gas mixture is the store's gas column) so that a
// text search (RunFilter.Query) is a pass over one block of memory
// instead of a LIKE on every row of the runs table (≈ 1.5 µs a row).
//
// Run i's text is blob[off[i]:off[i+1]]: its title, a zero byte, its
// notes, a zero byte. A query word holds no zero byte (words with one are
// searched through SQL), so a match never spans two fields or two runs.
// A run whose text changed after the blob was built keeps its old bytes
// there (skipped: stale bit set) and its current text in over; new runs
// at the end are appended. Reloading the store builds the blob afresh.
type textCol struct {
	blob  []byte
	off   []uint32 // len(runs)+1
	stale []uint64 // bit i: run i's text is in over, not in the blob
	over  map[int32]string
	// freq counts the bytes of the blob (letters under their lower
	// case) when it was built: searches anchor on a word's rarest byte.
	freq [256]int
}

// textOf is the text of run i as the blob holds it.
func textOf(title, notes []byte) []byte {
	b := make([]byte, 0, len(title)+len(notes)+2)
	b = append(append(b, title...), 0)
	return append(append(b, notes...), 0)
}

// textFits reports whether a title and notes can be held (no zero byte
// inside; the blob stays below 4 GiB).
func (t *textCol) textFits(title, notes []byte) bool {
	return bytes.IndexByte(title, 0) < 0 && bytes.IndexByte(notes, 0) < 0 &&
		uint64(len(t.blob))+uint64(len(title)+len(notes)+2) < 1<<32-1
}

func newTextCol(n int) *textCol {
	return &textCol{off: append(make([]uint32, 0, n+1), 0), over: map[int32]string{}}
}

// appendRun adds a run at the end (false: its text cannot be held).
func (t *textCol) appendRun(title, notes []byte) bool {
	if !t.textFits(title, notes) {
		return false
	}
	t.blob = append(append(append(t.blob, title...), 0), notes...)
	t.blob = append(t.blob, 0)
	t.off = append(t.off, uint32(len(t.blob)))
	return true
}

// finish counts the byte frequencies of a freshly built blob.
func (t *textCol) finish() {
	for _, b := range t.blob {
		t.freq[lowerASCII(b)]++
	}
}

func (t *textCol) isStale(i int32) bool {
	w := int(i) >> 6
	return w < len(t.stale) && t.stale[w]&(1<<(uint(i)&63)) != 0
}

func (t *textCol) setStale(i int32, on bool) {
	w := int(i) >> 6
	for w >= len(t.stale) {
		t.stale = append(t.stale, 0)
	}
	if on {
		t.stale[w] |= 1 << (uint(i) & 63)
	} else {
		t.stale[w] &^= 1 << (uint(i) & 63)
	}
}

// get is run i's text (title 0 notes 0).
func (t *textCol) get(i int32) []byte {
	if t.isStale(i) {
		return []byte(t.over[i])
	}
	return t.blob[t.off[i]:t.off[i+1]]
}

// title is run i's title.
func (t *textCol) title(i int32) []byte {
	s := t.get(i)
	return s[:bytes.IndexByte(s, 0)]
}

// set records run i's current text (false: it cannot be held).
func (t *textCol) set(i int32, title, notes []byte) bool {
	if !t.textFits(title, notes) {
		return false
	}
	cur := textOf(title, notes)
	if bytes.Equal(t.get(i), cur) {
		return true // most changes (analyses, reviews) leave the text alone
	}
	if int(i) == len(t.off)-2 && !t.isStale(i) {
		// The last run: rewrite its end of the blob in place.
		t.blob = append(t.blob[:t.off[i]], cur...)
		t.off[i+1] = uint32(len(t.blob))
		return true
	}
	t.over[i] = string(cur)
	t.setStale(i, true)
	return true
}

// insert opens position i (an empty text, set next) before the runs
// from i on.
func (t *textCol) insert(i int32) {
	if int(i) == len(t.off)-1 {
		t.off = append(t.off, t.off[i])
		return
	}
	t.off = insertAt(t.off, int(i), t.off[i]) // an empty segment
	// Positions from i on move up by one: the stale bits and over too.
	n := len(t.off) - 1
	over := make(map[int32]string, len(t.over)+1)
	stale := make([]uint64, (n+63)/64)
	for k, s := range t.over {
		if k >= i {
			k++
		}
		over[k] = s
		stale[k>>6] |= 1 << (uint(k) & 63)
	}
	t.over, t.stale = over, stale
	t.over[i] = "\x00\x00"
	t.setStale(i, true)
}

func lowerASCII(b byte) byte {
	if 'A' <= b && b <= 'Z' {
		return b + 'a' - 'A'
	}
	return b
}

func upperASCII(b byte) byte {
	if 'a' <= b && b <= 'z' {
		return b - ('a' - 'A')
	}
	return b
}

// foldWord is a query word prepared for searching: its bytes with ASCII
// letters in lower case (SQLite's LIKE folds ASCII letters only) and the
// byte the search anchors on.
type foldWord struct {
	w      []byte
	anchor int // index in w
	lo, up byte
}

// searchable reports whether the words of a query can be searched in the
// columns as LIKE '%word%' would match them: valid UTF-8 (LIKE compares
// characters) without zero bytes.
func searchable(q string) bool {
	return utf8.ValidString(q) && strings.IndexByte(q, 0) < 0
}

// queryWords splits a text query into words as RunFilter.whereFor does.
func queryWords(q string) []string { return strings.Fields(strings.TrimSpace(q)) }

func (t *textCol) prepare(word string) foldWord {
	fw := foldWord{w: make([]byte, len(word))}
	best := -1
	for i := range len(word) {
		fw.w[i] = lowerASCII(word[i])
		if best < 0 || t.freq[fw.w[i]] < t.freq[fw.w[best]] {
			best = i
		}
	}
	fw.anchor, fw.lo, fw.up = best, fw.w[best], upperASCII(fw.w[best])
	return fw
}

// equalFold compares s with a folded word.
func equalFold(s, w []byte) bool {
	for i, b := range w {
		if lowerASCII(s[i]) != b {
			return false
		}
	}
	return true
}

// index returns the first index of w in s with ASCII letters compared
// without case, or -1.
func (fw *foldWord) index(s []byte) int {
	sc := foldScan{fw: fw, s: s}
	return sc.find(0)
}

// foldScan finds a word's matches in s from left to right: the anchor
// byte is found with IndexByte (in both cases for a letter) and the word
// checked around it. The next occurrence of each case is kept between
// calls, so a pass over a long text looks at each byte once (a case
// that no longer occurs is not searched for again).
type foldScan struct {
	fw           *foldWord
	s            []byte
	next1, next2 int // next occurrences of lo and up at or after the last anchor looked at; -1: none
	have1, have2 bool
}

// find returns the first match at or after from, or -1.
func (sc *foldScan) find(from int) int {
	fw, s := sc.fw, sc.s
	n, a := len(fw.w), fw.anchor
	last := len(s) - n + a // the last anchor position possible
	if fw.lo == fw.up {
		sc.have2, sc.next2 = true, -1
	}
	for at := from + a; at <= last; {
		if !sc.have1 || (sc.next1 >= 0 && sc.next1 < at) {
			sc.next1, sc.have1 = indexFrom(s, fw.lo, at), true
		}
		if !sc.have2 || (sc.next2 >= 0 && sc.next2 < at) {
			sc.next2, sc.have2 = indexFrom(s, fw.up, at), true
		}
		p := sc.next1
		if sc.next2 >= 0 && (p < 0 || sc.next2 < p) {
			p = sc.next2
		}
		if p < 0 || p > last {
			return -1
		}
		if i := p - a; equalFold(s[i:i+n], fw.w) {
			return i
		}
		at = p + 1
	}
	return -1
}

func indexFrom(s []byte, b byte, from int) int {
	if from >= len(s) {
		return -1
	}
	if k := bytes.IndexByte(s[from:], b); k >= 0 {
		return from + k
	}
	return -1
}

// contains reports whether run i's text holds the word.
func (fw *foldWord) contains(s []byte) bool { return fw.index(s) >= 0 }

// matchAll marks in hit every run (position) whose title or notes hold
// the word: one pass over the blob, then the runs whose text moved to
// over.
func (t *textCol) matchAll(fw *foldWord, hit []bool) {
	blob, off := t.blob, t.off
	sc := foldScan{fw: fw, s: blob}
	i := 0 // the run at the current blob position
	for p := 0; p < len(blob); {
		k := sc.find(p)
		if k < 0 {
			break
		}
		at := uint32(k)
		if off[i+1] <= at { // not in run i: most often in the next
			i++
			if off[i+1] <= at { // the run holding at: the last offset ≤ at
				i += sort.Search(len(off)-i-1, func(j int) bool { return off[i+1+j] > at })
			}
		}
		if !t.isStale(int32(i)) {
			hit[i] = true
		}
		p = int(off[i+1])
	}
	for i, s := range t.over {
		if int(i) < len(hit) && fw.contains([]byte(s)) {
			hit[i] = true
		}
	}
}

// textWord is a query word compiled for the columns: the word, and
// which gas mixtures (by code) hold it.
type textWord struct {
	fw     foldWord
	gasHit []bool
	anyGas bool
}

// compileWords prepares the words of a text query (c.text is held).
func (c *trendCols) compileWords(words []string) []textWord {
	out := make([]textWord, len(words))
	for k, word := range words {
		tw := &out[k]
		tw.fw = c.text.prepare(word)
		tw.gasHit = make([]bool, len(c.gasDict))
		for g, mix := range c.gasDict {
			tw.gasHit[g] = tw.fw.contains([]byte(mix))
			tw.anyGas = tw.anyGas || tw.gasHit[g]
		}
	}
	return out
}

// matches reports whether run i's title, notes or gas mixture hold the
// word.
func (c *trendCols) matches(tw *textWord, i int) bool {
	return tw.gasHit[c.gas[i]] || tw.fw.contains(c.text.get(int32(i)))
}

// sampleStep spaces the runs a filter's share of matches is estimated on
// (about 2000 of them).
func sampleStep(n int) int { return max(1, n/2000) }

// textMatch narrows mask (nil: every run) to the runs whose title, notes
// or gas mixture hold every word, as RunFilter.whereFor's LIKE conditions
// do; n is the number of runs. The words go rarest first (estimated on a
// sample of runs); once few runs are left, each one's text is checked
// instead of scanning the whole text again.
func (c *trendCols) textMatch(words []textWord, mask []bool, n int) []bool {
	rate := make([]int, len(words))
	for k := range words {
		for i := 0; i < n; i += sampleStep(n) {
			if c.matches(&words[k], i) {
				rate[k]++
			}
		}
	}
	byRate := make([]int, len(words))
	for k := range byRate {
		byRate[k] = k
	}
	sort.SliceStable(byRate, func(a, b int) bool { return rate[byRate[a]] < rate[byRate[b]] })
	for _, k := range byRate {
		tw := &words[k]
		cand := n
		if mask != nil {
			cand = 0
			for _, ok := range mask {
				if ok {
					cand++
				}
			}
		}
		if mask != nil && cand < n/4 {
			// Few runs left: check each one's text.
			for i, ok := range mask {
				if ok && !c.matches(tw, i) {
					mask[i] = false
				}
			}
			continue
		}
		hit := make([]bool, n)
		if tw.anyGas {
			for i, g := range c.gas {
				hit[i] = tw.gasHit[g]
			}
		}
		c.text.matchAll(&tw.fw, hit)
		if mask == nil {
			mask = hit
			continue
		}
		for i, ok := range hit {
			mask[i] = mask[i] && ok
		}
	}
	return mask
}

// titleCmp compares the titles of runs a and b as SQLite's BINARY
// collation does.
func (t *textCol) titleCmp(a, b int32) int { return bytes.Compare(t.title(a), t.title(b)) }
