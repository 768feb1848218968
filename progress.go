package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"golang.org/x/term"

	"telltale/internal/wording"
)

// progressBar draws a one-line progress bar on a terminal and nothing
// elsewhere, so logs and pipes stay clean.
type progressBar struct {
	w     io.Writer
	on    bool
	last  time.Time
	width int
}

func newProgressBar(w io.Writer, quiet bool) *progressBar {
	on := false
	if f, ok := w.(*os.File); ok && !quiet {
		on = term.IsTerminal(int(f.Fd()))
	}
	return &progressBar{w: w, on: on, width: 30}
}

// show redraws the bar at done/total with a trailing note, at most ten
// times a second unless force is set.
func (p *progressBar) show(done, total int, note string, force bool) {
	if !p.on || total <= 0 {
		return
	}
	if !force && time.Since(p.last) < 100*time.Millisecond {
		return
	}
	p.last = time.Now()
	n := p.width * min(done, total) / total
	fmt.Fprintf(p.w, "\r[%s%s] %3d%% %s\x1b[K", strings.Repeat("#", n), strings.Repeat(".", p.width-n), 100*done/total, note)
}

// line prints a line of its own above the bar (on a terminal) or as is.
func (p *progressBar) line(format string, args ...any) {
	if p.on {
		fmt.Fprint(p.w, "\r\x1b[K")
	}
	fmt.Fprintf(p.w, format+"\n", args...)
}

// done clears the bar.
func (p *progressBar) done() {
	if p.on {
		fmt.Fprint(p.w, "\r\x1b[K")
	}
}

// note redraws a line of text where the total is not known in advance.
func (p *progressBar) note(s string) {
	if !p.on || time.Since(p.last) < 100*time.Millisecond {
		return
	}
	p.last = time.Now()
	fmt.Fprintf(p.w, "\r%s\x1b[K", s)
}

// progress shows how many texts are done: a bar when their total is known,
// else a running count (a stream such as standard input). Off a terminal,
// and between redraws, it costs a comparison and no allocation, so it may
// be called once per text.
func (p *progressBar) progress(verb string, done, total int) {
	if !p.on || time.Since(p.last) < 100*time.Millisecond {
		return
	}
	if total > 0 {
		p.show(done, total, fmt.Sprintf("%s: %d of %s", verb, done, wording.Texts(total)), false)
		return
	}
	p.note(verb + ": " + wording.Texts(done) + " so far")
}
