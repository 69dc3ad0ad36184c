package spectral

import "gonum.org/v1/gonum/dsp/fourier"

// gonumPlan is the pure-Go backend: real transforms along x for each row,
// complex transforms along y for each stored kx column, both from gonum's
// dsp/fourier (FFTPACK). Threads > 1 split rows and columns over a fixed
// worker pool.
type gonumPlan struct {
	g       *Grid
	threads int
	work    []complex128 // Ny × (Nx/2+1) intermediate, row-major
	workers []gonumWorker
	pool    *workerPool
	closed  bool

	// The current call's arguments, read by the bound step functions below.
	rsrc []float64
	rdst []float64
	csrc []complex128
	cdst []complex128

	// Method values bound once so that handing them to the pool does not
	// allocate on every transform.
	fwdRows, fwdCols, invCols, invRows func(w int)
}

type gonumWorker struct {
	row    *fourier.FFT
	col    *fourier.CmplxFFT
	colIn  []complex128
	colOut []complex128
}

func newGonumPlan(g *Grid, threads int) *gonumPlan {
	p := &gonumPlan{g: g, threads: threads, work: g.NewSpectral()}
	p.workers = make([]gonumWorker, threads)
	for w := range p.workers {
		p.workers[w] = gonumWorker{
			row:    fourier.NewFFT(g.Nx),
			col:    fourier.NewCmplxFFT(g.Ny),
			colIn:  make([]complex128, g.Ny),
			colOut: make([]complex128, g.Ny),
		}
	}
	p.fwdRows, p.fwdCols = p.forwardRows, p.forwardCols
	p.invCols, p.invRows = p.inverseCols, p.inverseRows
	if threads > 1 {
		p.pool = newWorkerPool(threads)
	}
	return p
}

func (p *gonumPlan) Grid() *Grid     { return p.g }
func (p *gonumPlan) Threads() int    { return p.threads }
func (p *gonumPlan) Backend() string { return string(Gonum) }

func (p *gonumPlan) Close() {
	if p.closed {
		return
	}
	p.closed = true
	if p.pool != nil {
		p.pool.close()
	}
}

func (p *gonumPlan) each(f func(int)) {
	if p.closed {
		panic("spectral: gonum plan used after Close")
	}
	if p.pool == nil {
		f(0)
		return
	}
	p.pool.run(f)
}

func (p *gonumPlan) Forward(dst []complex128, src []float64) {
	p.g.checkSpec(dst, "Forward dst")
	p.g.checkReal(src, "Forward src")
	p.rsrc, p.cdst = src, dst
	p.each(p.fwdRows)
	p.each(p.fwdCols)
	p.rsrc, p.cdst = nil, nil
}

func (p *gonumPlan) Inverse(dst []float64, src []complex128) {
	p.g.checkReal(dst, "Inverse dst")
	p.g.checkSpec(src, "Inverse src")
	p.csrc, p.rdst = src, dst
	p.each(p.invCols)
	p.each(p.invRows)
	p.csrc, p.rdst = nil, nil
}

// InverseOverwrite leaves src intact: the pure-Go backend needs no copy.
func (p *gonumPlan) InverseOverwrite(dst []float64, src []complex128) { p.Inverse(dst, src) }

func (p *gonumPlan) forwardRows(w int) {
	g, nk := p.g, p.g.nkx
	lo, hi := span(g.Ny, w, p.threads)
	for j := lo; j < hi; j++ {
		p.workers[w].row.Coefficients(p.work[j*nk:(j+1)*nk], p.rsrc[j*g.Nx:(j+1)*g.Nx])
	}
}

func (p *gonumPlan) forwardCols(w int) {
	g, nk := p.g, p.g.nkx
	wk := &p.workers[w]
	scale := complex(1/float64(g.RealLen()), 0)
	lo, hi := span(nk, w, p.threads)
	for i := lo; i < hi; i++ {
		for j := range wk.colIn {
			wk.colIn[j] = p.work[j*nk+i]
		}
		wk.col.Coefficients(wk.colOut, wk.colIn)
		for j, v := range wk.colOut {
			p.cdst[j*nk+i] = v * scale
		}
	}
}

func (p *gonumPlan) inverseCols(w int) {
	nk := p.g.nkx
	wk := &p.workers[w]
	lo, hi := span(nk, w, p.threads)
	for i := lo; i < hi; i++ {
		for j := range wk.colIn {
			wk.colIn[j] = p.csrc[j*nk+i]
		}
		wk.col.Sequence(wk.colOut, wk.colIn)
		for j, v := range wk.colOut {
			p.work[j*nk+i] = v
		}
	}
}

func (p *gonumPlan) inverseRows(w int) {
	g, nk := p.g, p.g.nkx
	lo, hi := span(g.Ny, w, p.threads)
	for j := lo; j < hi; j++ {
		p.workers[w].row.Sequence(p.rdst[j*g.Nx:(j+1)*g.Nx], p.work[j*nk:(j+1)*nk])
	}
}
