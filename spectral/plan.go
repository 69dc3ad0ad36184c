package spectral

import (
	"fmt"
	"sync"
)

// Plan transforms real fields of one grid to spectral fields and back. A
// plan owns all its scratch memory; Forward and Inverse allocate nothing.
// A plan is not safe for concurrent use: give each goroutine its own.
type Plan interface {
	// Forward sets dst to the box-normalised coefficients of the real field
	// src (the unnormalised DFT divided by Nx·Ny). src is not modified. It
	// panics if a length does not match the grid.
	Forward(dst []complex128, src []float64)
	// Inverse sets dst to the real field whose box-normalised coefficients
	// are src (the unnormalised inverse DFT). src is not modified. Only the
	// Hermitian part of src matters: the imaginary parts of the self-conjugate
	// modes are ignored. It panics if a length does not match the grid.
	Inverse(dst []float64, src []complex128)
	// InverseOverwrite is Inverse for a src the caller no longer needs: it
	// may overwrite src with intermediate values, which saves the copy that
	// Inverse makes to keep src intact.
	InverseOverwrite(dst []float64, src []complex128)
	// Grid returns the grid the plan was made for.
	Grid() *Grid
	// Threads returns the number of threads a transform uses.
	Threads() int
	// Backend names the FFT implementation: "fftw" or "gonum".
	Backend() string
	// Close releases the plan's memory and threads. Using the plan after
	// Close panics; calling Close twice is allowed.
	Close()
}

// Backend selects an FFT implementation.
type Backend string

// The FFT backends. FFTW is the production backend when the binary is built
// with cgo and without the nofftw tag; Gonum is pure Go and always present.
const (
	FFTW  Backend = "fftw"
	Gonum Backend = "gonum"
)

// Options configures NewPlan. The zero value gives the default backend and
// one thread.
type Options struct {
	Backend Backend // "" for the default backend (DefaultBackend)
	Threads int     // ≤ 0 means 1
	// Measure makes FFTW time candidate algorithms when planning
	// (FFTW_MEASURE): faster transforms, slower planning, and results that
	// may differ in the last bits between processes. The default
	// (FFTW_ESTIMATE) is reproducible bit for bit. Ignored by Gonum.
	Measure bool
}

// DefaultBackend is FFTW when it is compiled in, else Gonum.
func DefaultBackend() Backend { return defaultBackend }

// Backends lists the backends compiled into this binary, default first.
func Backends() []Backend {
	if haveFFTW {
		return []Backend{FFTW, Gonum}
	}
	return []Backend{Gonum}
}

// NewPlan returns a plan for real-to-complex transforms on g. It returns an
// error if the backend is unknown or not compiled in, or if FFTW cannot
// make a plan.
func NewPlan(g *Grid, opt Options) (Plan, error) {
	threads := opt.Threads
	if threads <= 0 {
		threads = 1
	}
	b := opt.Backend
	if b == "" {
		b = defaultBackend
	}
	switch b {
	case Gonum:
		return newGonumPlan(g, threads), nil
	case FFTW:
		if !haveFFTW {
			return nil, fmt.Errorf("spectral: backend %q is not compiled into this binary (built with the nofftw tag or without cgo); use %q", FFTW, Gonum)
		}
		return newFFTWPlan(g, threads, opt.Measure)
	default:
		return nil, fmt.Errorf("spectral: unknown FFT backend %q: valid are %q and %q", b, FFTW, Gonum)
	}
}

// workerPool runs a fixed set of goroutines that each call a function with
// their worker index. Starting and waiting allocate nothing, so a plan that
// spreads a transform over threads stays allocation-free.
type workerPool struct {
	start []chan func(int)
	wg    sync.WaitGroup
}

func newWorkerPool(n int) *workerPool {
	p := &workerPool{start: make([]chan func(int), n)}
	for w := range p.start {
		c := make(chan func(int))
		p.start[w] = c
		go func() {
			for f := range c {
				f(w)
				p.wg.Done()
			}
		}()
	}
	return p
}

// run calls f(w) for every worker w concurrently and waits for all of them.
func (p *workerPool) run(f func(int)) {
	p.wg.Add(len(p.start))
	for _, c := range p.start {
		c <- f
	}
	p.wg.Wait()
}

func (p *workerPool) close() {
	for _, c := range p.start {
		close(c)
	}
}

// span returns the half-open range of n items that worker w of nw handles.
func span(n, w, nw int) (lo, hi int) {
	return n * w / nw, n * (w + 1) / nw
}
