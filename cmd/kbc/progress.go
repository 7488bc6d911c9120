package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
	"time"

	"golang.org/x/term"
)

// progress draws a one-line bar on standard error while a build runs, and
// only when standard error is a terminal, so CI logs never fill with it.
type progress struct {
	mu    sync.Mutex
	w     io.Writer
	on    bool
	last  time.Time
	drawn bool
	what  string // "%d/%d files" when empty
}

func newProgress(w io.Writer) *progress {
	f, ok := w.(*os.File)
	return &progress{w: w, on: ok && term.IsTerminal(int(f.Fd()))}
}

// update redraws the bar at most ten times a second; safe for concurrent use.
func (p *progress) update(done, total int) {
	if !p.on {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if done < total && time.Since(p.last) < 100*time.Millisecond {
		return
	}
	p.last = time.Now()
	const width = 30
	fill := 0
	if total > 0 {
		fill = done * width / total
	}
	what := p.what
	if what == "" {
		what = "reading [%s%s] %d/%d files"
	}
	fmt.Fprintf(p.w, "\r"+what, strings.Repeat("#", fill), strings.Repeat(".", width-fill), done, total)
	p.drawn = true
}

// finish clears the bar's line.
func (p *progress) finish() {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.drawn {
		fmt.Fprintf(p.w, "\r%s\r", strings.Repeat(" ", 60))
		p.drawn = false
	}
}
