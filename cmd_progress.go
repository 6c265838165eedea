package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"time"
)

// progress writes a one-line progress report of a batch on standard error
// ("12/40 files · 3.1 files/s · 9 s left"), rewritten in place with \r at
// most progressEvery, and ends it with a newline. It is off (every method
// a no-op) for a single file, for --progress never, and for --progress
// auto when standard error is not a terminal (a pipe or a file gets
// nothing extra).
type progress struct {
	w     io.Writer
	total int
	start time.Time
	now   func() time.Time

	mu    sync.Mutex
	n     int
	last  time.Time
	width int // of the last line written, to blank what a shorter one leaves
}

// progressEvery is the shortest interval between two progress lines.
const progressEvery = 250 * time.Millisecond

// newProgress returns the progress line of a batch of total files for
// mode auto, always or never (nil when off).
func newProgress(w io.Writer, mode string, total int) (*progress, error) {
	switch mode {
	case "", "auto":
		if !IsTerminal(w) {
			return nil, nil
		}
	case "always":
	case "never":
		return nil, nil
	default:
		return nil, fmt.Errorf("--progress: %q is not auto, always or never", mode)
	}
	if total < 2 {
		return nil, nil
	}
	return &progress{w: w, total: total, start: time.Now(), now: time.Now}, nil
}

// IsTerminal says whether w is a terminal (a character device such as a
// tty; pipes and regular files are not).
func IsTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}

// done counts one finished file.
func (p *progress) done() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.n++
	if t := p.now(); p.n < p.total && t.Sub(p.last) >= progressEvery {
		p.last = t
		p.write(t, "\r")
	}
}

// finish writes the final line and a newline.
func (p *progress) finish() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.write(p.now(), "\r")
	fmt.Fprint(p.w, "\n")
}

func (p *progress) write(t time.Time, prefix string) {
	el := t.Sub(p.start).Seconds()
	line := fmt.Sprintf("%d/%d files", p.n, p.total)
	if el > 0 && p.n > 0 {
		rate := float64(p.n) / el
		line += fmt.Sprintf(" · %.3g files/s", rate)
		if left := p.total - p.n; left > 0 {
			line += " · " + fmtDuration(time.Duration(float64(left)/rate*float64(time.Second))) + " left"
		} else {
			line += " · " + fmtDuration(t.Sub(p.start)) + " in all"
		}
	}
	pad := p.width - len([]rune(line))
	p.width = len([]rune(line))
	if pad > 0 {
		line += fmt.Sprintf("%*s", pad, "")
	}
	fmt.Fprint(p.w, prefix+line)
}

// fmtDuration writes d in whole seconds, or minutes and seconds.
func fmtDuration(d time.Duration) string {
	s := int(d.Round(time.Second).Seconds())
	if s < 60 {
		return fmt.Sprintf("%d s", s)
	}
	if s < 3600 {
		return fmt.Sprintf("%d min %02d s", s/60, s%60)
	}
	return fmt.Sprintf("%d h %02d min", s/3600, s%3600/60)
}
