package main

import (
	"fmt"
	"io"
	"math"
	"strings"
	"sync"
	"time"
)

// progress shows what basin is doing on stderr, only when stderr is a
// terminal and --quiet is not given, and only once a job has run for a
// second. A stage that reports its share of the job done ([progress.Share])
// gets a bar with the percentage and an estimate of the time left; one
// that cannot (reading logs) a moving marker and the time spent.
type progress struct {
	mu      sync.Mutex
	w       io.Writer
	on      bool
	start   time.Time // of the job
	stage   string
	share   float64 // of the job done; NaN when the stage does not say
	shareT0 time.Time
	// finish is when the job should end at the pace so far, as estimated
	// at the last Share call (zero while unknown): the time left counts
	// down between calls instead of growing while a stage runs.
	finish time.Time
	drawn  bool
	stop   chan struct{}
	frame  int
}

// progressWidth is the widest line drawn, so that an 80-column terminal
// never wraps it.
const progressWidth = 78

func newProgress(w io.Writer, quiet bool) *progress {
	return &progress{w: w, on: !quiet && isTerminal(w), share: math.NaN()}
}

// Stage starts a stage that does not report its share.
func (p *progress) Stage(name string) {
	if !p.on {
		return
	}
	p.mu.Lock()
	p.stage, p.share = name, math.NaN()
	p.mu.Unlock()
	p.run()
}

// Share starts or continues a stage with done (0 to 1) of the measured
// part of the job behind it; validate.Options.Progress has this shape.
func (p *progress) Share(stage string, done float64) {
	if !p.on {
		return
	}
	p.mu.Lock()
	now := time.Now()
	if math.IsNaN(p.share) || p.shareT0.IsZero() {
		p.shareT0 = now
	}
	p.stage, p.share = stage, math.Min(math.Max(done, 0), 1)
	p.finish = time.Time{}
	if el := now.Sub(p.shareT0); p.share >= 0.02 && el > 0 {
		p.finish = now.Add(time.Duration(float64(el) * (1 - p.share) / p.share))
	}
	p.mu.Unlock()
	p.run()
}

// run starts the drawing goroutine once.
func (p *progress) run() {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.stop != nil {
		return
	}
	p.start, p.stop = time.Now(), make(chan struct{})
	stop := p.stop
	go func() {
		t := time.NewTicker(200 * time.Millisecond)
		defer t.Stop()
		for {
			select {
			case <-stop:
				return
			case now := <-t.C:
				p.mu.Lock()
				if p.stop == stop && now.Sub(p.start) >= time.Second {
					fmt.Fprintf(p.w, "\r%-*s", progressWidth, p.line(now))
					p.drawn = true
					p.frame++
				}
				p.mu.Unlock()
			}
		}
	}()
}

// line is the progress line at now; p.mu is held.
func (p *progress) line(now time.Time) string {
	if math.IsNaN(p.share) {
		frames := []string{"[=   ]", "[ =  ]", "[  = ]", "[   =]", "[  = ]", "[ =  ]"}
		return clip(fmt.Sprintf("%s %s, %s", frames[p.frame%len(frames)], p.stage, seconds(now.Sub(p.start))), progressWidth)
	}
	left := time.Duration(-1)
	if !p.finish.IsZero() {
		left = max(p.finish.Sub(now), 0)
	}
	return progressLine(p.stage, p.share, left)
}

// progressLine draws "[#######.............]  35% certifying · about 12 s
// left" for a share done and an estimate of the time left (negative while
// there is none; zero says the estimate has run out).
func progressLine(stage string, share float64, left time.Duration) string {
	const cells = 20
	k := int(math.Min(math.Max(share, 0), 1) * cells)
	bar := "[" + strings.Repeat("#", k) + strings.Repeat(".", cells-k) + "]"
	est := "estimating time left"
	switch {
	case share >= 1:
		est = "finishing"
	case left == 0:
		est = "taking longer than estimated"
	case left > 0:
		est = "about " + seconds(left) + " left"
	}
	return clip(fmt.Sprintf("%s %3.0f%% %s · %s", bar, 100*share, stage, est), progressWidth)
}

// seconds writes a duration the way people say it: "0.4 s", "12 s",
// "3 min 5 s".
func seconds(d time.Duration) string {
	s := d.Seconds()
	switch {
	case s < 10:
		return fmt.Sprintf("%.1f s", s)
	case s < 90:
		return fmt.Sprintf("%.0f s", s)
	}
	m := int(s) / 60
	return fmt.Sprintf("%d min %d s", m, int(s)-60*m)
}

// clip shortens s to n runes.
func clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// Done stops the drawing and clears the line.
func (p *progress) Done() {
	if !p.on {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.stop != nil {
		close(p.stop)
		p.stop = nil
	}
	if p.drawn {
		fmt.Fprintf(p.w, "\r%-*s\r", progressWidth, "")
		p.drawn = false
	}
}
