package pipeline

import (
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
	"time"
)

// Progress on long runs goes to stderr, and only when stderr is a terminal:
// a person watching sees each phase with its elapsed time and a bar for the
// ALS iterations; a script or a log file gets nothing (the results and the
// summary are the record, progress is not). --quiet silences it too.

// isTerminal says whether f is a character device (a terminal), by its
// file mode: no system call beyond stat, no dependency.
func isTerminal(f *os.File) bool {
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// newProgress returns the progress writer for w: a live display when w is
// a terminal, io.Discard otherwise.
func newProgress(w io.Writer) io.Writer {
	f, ok := w.(*os.File)
	if !ok || !isTerminal(f) {
		return io.Discard
	}
	p := startProgress(f)
	p.tick(250 * time.Millisecond)
	return p
}

// progress is the live display. Each line written to it is a phase: it is
// kept on screen with the time it started, and the last one stays as a
// status line (label, counter or bar, elapsed time) redrawn in place.
type progress struct {
	mu      sync.Mutex
	w       io.Writer
	start   time.Time
	label   string
	done    int
	total   int
	detail  string
	drawn   bool
	last    time.Time // last redraw by count
	stop    chan struct{}
	stopped chan struct{}
}

func startProgress(w io.Writer) *progress {
	return &progress{w: w, start: time.Now()}
}

// tick redraws the status line every d so the elapsed time moves during
// phases that report nothing (reading a folder, the SVD).
func (p *progress) tick(d time.Duration) {
	p.stop, p.stopped = make(chan struct{}), make(chan struct{})
	go func() {
		defer close(p.stopped)
		t := time.NewTicker(d)
		defer t.Stop()
		for {
			select {
			case <-p.stop:
				return
			case <-t.C:
				p.mu.Lock()
				if p.label != "" {
					p.draw()
				}
				p.mu.Unlock()
			}
		}
	}()
}

// Write takes phase lines, as Run prints them.
func (p *progress) Write(b []byte) (int, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	for _, line := range strings.Split(strings.TrimRight(string(b), "\n"), "\n") {
		if line = strings.TrimSpace(line); line == "" {
			continue
		}
		p.clear()
		fmt.Fprintf(p.w, "%7s  %s\n", elapsed(time.Since(p.start)), line)
		p.label, p.done, p.total, p.detail = line, 0, 0, ""
	}
	return len(b), nil
}

// count sets the status line's counter: done of total (total 0: no bar).
func (p *progress) count(done, total int, detail string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.done, p.total, p.detail = done, total, detail
	// A redraw per ALS iteration would cost more than the iteration on
	// small data: the display is refreshed at most every 50 ms.
	if now := time.Now(); done == total || now.Sub(p.last) >= 50*time.Millisecond {
		p.last = now
		p.draw()
	}
}

// finish ends the display: stops the ticker and clears the status line.
func (p *progress) finish() {
	if p.stop != nil {
		close(p.stop)
		<-p.stopped
		p.stop = nil
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.clear()
	fmt.Fprintf(p.w, "%7s  done\n", elapsed(time.Since(p.start)))
	p.label = ""
}

// draw writes the status line in place (carriage return, clear to end of
// line), so nothing scrolls.
func (p *progress) draw() {
	var b strings.Builder
	b.WriteString("\r\x1b[K")
	fmt.Fprintf(&b, "%7s  %s", elapsed(time.Since(p.start)), p.label)
	if p.total > 0 {
		const width = 24
		n := min(width, p.done*width/p.total)
		fmt.Fprintf(&b, "  [%s%s] %d/%d", strings.Repeat("#", n), strings.Repeat("·", width-n), p.done, p.total)
	} else if p.done > 0 {
		fmt.Fprintf(&b, "  %d", p.done)
	}
	if p.detail != "" {
		b.WriteString("  " + p.detail)
	}
	io.WriteString(p.w, b.String())
	p.drawn = true
}

func (p *progress) clear() {
	if p.drawn {
		io.WriteString(p.w, "\r\x1b[K")
		p.drawn = false
	}
}

func elapsed(d time.Duration) string {
	return fmt.Sprintf("%.1f s", d.Seconds())
}

// endProgress finishes the display if log is one.
func endProgress(log io.Writer) {
	if p, ok := log.(*progress); ok {
		p.finish()
	}
}

// stepCounter is for long loops of the pipeline (uniqueness ranges,
// replicates): it announces the phase and returns a function to call with
// the number of steps done. On anything but a live display it costs
// nothing.
func stepCounter(log io.Writer, label string, total int) func(done int) {
	p, ok := log.(*progress)
	if !ok {
		return func(int) {}
	}
	fmt.Fprintln(p, label)
	return func(done int) { p.count(done, total, "") }
}

// alsProgress is the ALS observer for the live display: iterations against
// the limit and the current lack of fit. nil when log is not a display.
func alsProgress(log io.Writer, maxIter int) func(iter int, lof float64) {
	p, ok := log.(*progress)
	if !ok {
		return nil
	}
	return func(iter int, lof float64) {
		p.count(iter, maxIter, fmt.Sprintf("lack of fit %.4g %%", lof))
	}
}
