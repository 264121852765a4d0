package main

import (
	"fmt"
	"io"
	"os"
	"sync"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// progress shows how far a long command has come: a bar when stderr is a
// terminal, nothing otherwise (logs and pipes stay clean), and nothing at all
// with --quiet. It is safe for concurrent use, so workers may report.
type progress struct {
	mu  sync.Mutex
	bar *progressbar.ProgressBar
}

// newProgress returns a progress display for total items described by
// what; it is silent when quiet is set or w is not a terminal.
func newProgress(w io.Writer, total int, what string, quiet bool) *progress {
	p := &progress{}
	if quiet || !isTerminal(w) || total <= 0 {
		return p
	}
	p.bar = progressbar.NewOptions(total,
		progressbar.OptionSetWriter(w),
		progressbar.OptionSetDescription(what),
		progressbar.OptionShowCount(),
		progressbar.OptionSetWidth(30),
		progressbar.OptionThrottle(100_000_000),
		progressbar.OptionClearOnFinish(),
	)
	return p
}

// isTerminal reports whether w is a terminal.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

// Set records that done items of the total are finished; it has the shape
// of the progress callbacks the packages take.
func (p *progress) Set(done, total int) {
	if p == nil || p.bar == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.bar.Set(done)
}

// Done removes the bar.
func (p *progress) Done() {
	if p == nil || p.bar == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.bar.Finish()
}

// warnf prints a warning on stderr unless quiet.
func warnf(e *env, quiet bool, format string, a ...any) {
	if !quiet {
		fmt.Fprintf(e.stderr, "spotsift: warning: "+format+"\n", a...)
	}
}
