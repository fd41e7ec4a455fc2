package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// progress reports the run's long stages on stderr: while a stage runs, a
// bar with its count and rate when stderr is a terminal; when it ends, one
// line with what it did and how long it took, terminal or not. A nil
// *progress (--quiet) reports nothing; every method is safe on nil.
type progress struct {
	w   io.Writer
	tty bool
	mu  sync.Mutex // one line at a time
}

// newProgress returns the reporter for w, or nil when quiet.
func newProgress(w io.Writer, quiet bool) *progress {
	if quiet || w == nil {
		return nil
	}
	p := &progress{w: w}
	if f, ok := w.(*os.File); ok {
		p.tty = term.IsTerminal(int(f.Fd()))
	}
	return p
}

// stage is one running stage.
type stage struct {
	p           *progress
	name, unit  string
	total, done int
	start       time.Time
	bar         *progressbar.ProgressBar
	mu          sync.Mutex
}

// begin starts a stage of total items (a unit such as "hydrants"); a total
// of 0 or less shows no bar, only the closing line.
func (p *progress) begin(name, unit string, total int) *stage {
	if p == nil {
		return nil
	}
	s := &stage{p: p, name: name, unit: unit, total: total, start: time.Now()}
	if p.tty && total > 1 {
		s.bar = progressbar.NewOptions(total,
			progressbar.OptionSetWriter(p.w),
			progressbar.OptionSetDescription(name),
			progressbar.OptionShowCount(),
			progressbar.OptionShowIts(),
			progressbar.OptionSetItsString(unit),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
			progressbar.OptionSetWidth(30))
	}
	return s
}

// add counts n more items done; safe for concurrent use.
func (s *stage) add(n int) {
	if s == nil {
		return
	}
	s.mu.Lock()
	s.done += n
	s.mu.Unlock()
	if s.bar != nil {
		_ = s.bar.Add(n)
	}
}

// end closes the stage with one line: its name, the count, the time and
// the rate, and detail when not "". done defaults to the items added.
func (s *stage) end(detail string) {
	if s == nil {
		return
	}
	if s.bar != nil {
		_ = s.bar.Finish()
	}
	elapsed := time.Since(s.start)
	s.mu.Lock()
	done := s.done
	s.mu.Unlock()
	line := fmt.Sprintf("headroom: %-16s %s", s.name, formatElapsed(elapsed))
	if done > 0 && s.unit != "" {
		unit := s.unit
		if done == 1 {
			unit = strings.TrimSuffix(unit, "s") // the units are regular plurals: "1 scenario"
		}
		line = fmt.Sprintf("headroom: %-16s %d %s in %s", s.name, done, unit, formatElapsed(elapsed))
		if sec := elapsed.Seconds(); sec >= 0.05 {
			line += " (" + formatRate(float64(done)/sec) + ")"
		}
	}
	if detail != "" {
		line += "; " + detail
	}
	s.p.mu.Lock()
	defer s.p.mu.Unlock()
	fmt.Fprintln(s.p.w, line)
}

// formatRate is a rate per second: whole numbers, or one decimal below 10
// ("0.4/s" for three scenarios in 7 s).
func formatRate(perSecond float64) string {
	if perSecond < 10 {
		return fmt.Sprintf("%.1f/s", perSecond)
	}
	return fmt.Sprintf("%.0f/s", perSecond)
}

// formatElapsed is a duration for a person: "0.42 s", "12.3 s", "2 min 05 s".
func formatElapsed(d time.Duration) string {
	switch sec := d.Seconds(); {
	case sec < 10:
		return fmt.Sprintf("%.2f s", sec)
	case sec < 120:
		return fmt.Sprintf("%.1f s", sec)
	default:
		m := int(sec) / 60
		return fmt.Sprintf("%d min %02d s", m, int(sec)-60*m)
	}
}
