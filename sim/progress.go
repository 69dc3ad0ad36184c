package sim

import (
	"fmt"
	"io"
	"math"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// Progress shows how far a run has come. Run calls Start once, Update after
// every step and Stop at the end.
type Progress interface {
	Start(t0, tEnd float64, step0, maxSteps int)
	Update(t float64, step int, dt float64)
	Stop()
}

// NewProgress returns a progress bar with an ETA and the current step size
// when w is a terminal, and plain log lines every interval otherwise (for
// batch jobs whose output goes to a file). Times are shown multiplied by
// scale, with unit after them (e.g. the SI value of the reduced time unit
// and "s"); scale 0 means 1.
func NewProgress(w io.Writer, interval time.Duration, scale float64, unit string) Progress {
	if scale == 0 {
		scale = 1
	}
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		return &barProgress{w: w, scale: scale, unit: unit}
	}
	return &lineProgress{w: w, every: interval, now: time.Now, scale: scale, unit: unit}
}

// fraction returns how much of the run is done, in [0, 1], from whichever
// end condition is set (the one further along if both are).
type span struct {
	t0, tEnd      float64
	step0, nSteps int
}

func (s span) fraction(t float64, step int) float64 {
	f := 0.0
	if s.tEnd > s.t0 {
		f = (t - s.t0) / (s.tEnd - s.t0)
	}
	if s.nSteps > s.step0 {
		f = math.Max(f, float64(step-s.step0)/float64(s.nSteps-s.step0))
	}
	return math.Min(math.Max(f, 0), 1)
}

// barProgress draws a terminal bar in permille of the run.
type barProgress struct {
	w     io.Writer
	s     span
	bar   *progressbar.ProgressBar
	scale float64
	unit  string
}

func (p *barProgress) Start(t0, tEnd float64, step0, maxSteps int) {
	p.s = span{t0, tEnd, step0, maxSteps}
	p.bar = progressbar.NewOptions(1000,
		progressbar.OptionSetWriter(p.w),
		progressbar.OptionSetWidth(30),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionThrottle(200*time.Millisecond),
		progressbar.OptionShowElapsedTimeOnFinish(),
		progressbar.OptionSetDescription("starting"),
	)
}

func (p *barProgress) Update(t float64, step int, dt float64) {
	p.bar.Describe(fmt.Sprintf("step %d  t %.4g %s  dt %.2g %s", step, t*p.scale, p.unit, dt*p.scale, p.unit))
	_ = p.bar.Set(int(1000 * p.s.fraction(t, step)))
}

func (p *barProgress) Stop() {
	_ = p.bar.Finish()
	fmt.Fprintln(p.w)
}

// lineProgress writes one plain line every interval.
type lineProgress struct {
	w     io.Writer
	every time.Duration
	now   func() time.Time
	scale float64
	unit  string
	s     span
	start time.Time
	last  time.Time
	step  int
	t, dt float64
}

func (p *lineProgress) Start(t0, tEnd float64, step0, maxSteps int) {
	p.s = span{t0, tEnd, step0, maxSteps}
	p.start = p.now()
	p.last = p.start
	p.t, p.step = t0, step0
}

func (p *lineProgress) Update(t float64, step int, dt float64) {
	p.t, p.step, p.dt = t, step, dt
	if now := p.now(); now.Sub(p.last) >= p.every {
		p.last = now
		p.line()
	}
}

func (p *lineProgress) line() {
	f := p.s.fraction(p.t, p.step)
	el := p.now().Sub(p.start)
	eta := "?"
	if f > 0 {
		eta = (time.Duration(float64(el) * (1 - f) / f)).Round(time.Second).String()
	}
	fmt.Fprintf(p.w, "progress: step %d  t = %.6g %s  dt = %.3g %s  %5.1f%%  elapsed %s  eta %s\n",
		p.step, p.t*p.scale, p.unit, p.dt*p.scale, p.unit, 100*f, el.Round(time.Second), eta)
}

func (p *lineProgress) Stop() { p.line() }
