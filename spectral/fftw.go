//go:build cgo && !nofftw

package spectral

/*
#cgo CFLAGS: -O3
#cgo LDFLAGS: -lfftw3 -lm
#include <fftw3.h>

static void memix_r2c_scaled(fftw_plan p, double *in, fftw_complex *out, size_t nc, double scale) {
	fftw_execute_dft_r2c(p, in, out);
	double *o = (double *)out;
	for (size_t i = 0; i < 2 * nc; i++) {
		o[i] *= scale;
	}
}

static void memix_c2c(fftw_plan p, fftw_complex *in, fftw_complex *out) { fftw_execute_dft(p, in, out); }
static void memix_c2r(fftw_plan p, fftw_complex *in, double *out) { fftw_execute_dft_c2r(p, in, out); }
static int memix_aligned(void *p) { return fftw_alignment_of((double *)p) == 0; }

static fftw_plan memix_plan_rows_r2c(int nx, int rows, double *in, fftw_complex *out, unsigned flags) {
	int n[1] = {nx};
	return fftw_plan_many_dft_r2c(1, n, rows, in, NULL, 1, nx, out, NULL, 1, nx / 2 + 1, flags);
}

static fftw_plan memix_plan_rows_c2r(int nx, int rows, fftw_complex *in, double *out, unsigned flags) {
	int n[1] = {nx};
	return fftw_plan_many_dft_c2r(1, n, rows, in, NULL, 1, nx / 2 + 1, out, NULL, 1, nx, flags);
}

static fftw_plan memix_plan_cols(int ny, int nkx, int cols, fftw_complex *a, int sign, unsigned flags) {
	int n[1] = {ny};
	return fftw_plan_many_dft(1, n, cols, a, NULL, nkx, 1, a, NULL, nkx, 1, sign, flags);
}

// memix_bare_pair executes a plain 2D forward and inverse plan on their own
// buffers: the benchmark baseline.
static void memix_bare_pair(fftw_plan f, fftw_plan i) {
	fftw_execute(f);
	fftw_execute(i);
}
*/
import "C"

import (
	"fmt"
	"runtime"
	"sync"
	"unsafe"
)

const haveFFTW = true

// fftwMu serialises FFTW's planner, which is not thread-safe; executing
// plans, even the same plan on different arrays, concurrently is safe.
var fftwMu sync.Mutex

// The 2D transform is composed of batched 1D FFTW plans so that memix can
// spread it over its own workers and fold the normalisation into a pass
// that is already in cache:
//
//	forward: real-to-complex along x, a block of rowBlock rows at a time,
//	         each block scaled by 1/(Nx·Ny) right after its transform; then
//	         complex along y, in place, each worker on its range of columns.
//	inverse: complex along y, in place on a scratch copy of the input (a
//	         multi-dimensional complex-to-real transform cannot preserve its
//	         input), then complex-to-real along x, a block of rows at a time.
//
// Every sub-plan is made on the plan's FFTW-allocated buffers at the offset
// where it later runs. Row blocks start at multiples of an even rowBlock,
// so caller arrays with FFTW's SIMD alignment meet every sub-plan with the
// alignment it was made for; other arrays go through the plan's buffers.
const rowBlock = 16

type fftwMem struct {
	rowFwd, rowFwdLast C.fftw_plan     // r2c of rowBlock rows; of the last, partial block
	rowInv, rowInvLast C.fftw_plan     // c2r of the same blocks
	colFwd, colInv     []C.fftw_plan   // per worker: its columns, in place
	rbuf               *C.double       // real planning array; fallback for unaligned arrays
	cbuf               *C.fftw_complex // spectral planning array; fallback
	cwork              *C.fftw_complex // scratch of the inverse transform
}

func (m *fftwMem) free() {
	fftwMu.Lock()
	defer fftwMu.Unlock()
	plans := append([]C.fftw_plan{m.rowFwd, m.rowFwdLast, m.rowInv, m.rowInvLast}, m.colFwd...)
	for _, p := range append(plans, m.colInv...) {
		if p != nil {
			C.fftw_destroy_plan(p)
		}
	}
	C.fftw_free(unsafe.Pointer(m.rbuf))
	C.fftw_free(unsafe.Pointer(m.cbuf))
	C.fftw_free(unsafe.Pointer(m.cwork))
	*m = fftwMem{}
}

type fftwPlan struct {
	g       *Grid
	threads int
	mem     *fftwMem
	cleanup runtime.Cleanup
	pool    *workerPool
	scale   C.double
	block   int // rows per block (even)
	nblocks int // ceil(Ny / block); the last block may be partial
	rview   []float64
	cview   []complex128
	wview   []complex128

	// Arguments of the transform in progress, read by the stage functions:
	// the real array, the spectral array and the complex array the inverse
	// works in.
	rptr, cptr, wptr unsafe.Pointer

	// Stage functions bound once, so that handing them to the pool
	// allocates nothing.
	fwdRows, fwdCols, invCopy, invCols, invRows func(w int)
}

func newFFTWPlan(g *Grid, threads int, measure bool) (*fftwPlan, error) {
	block := min(rowBlock, g.Ny) // even, because Ny is
	nblocks := (g.Ny + block - 1) / block
	threads = min(threads, nblocks, g.nkx)
	nr, nc := g.RealLen(), g.SpecLen()
	m := &fftwMem{
		rbuf:   C.fftw_alloc_real(C.size_t(nr)),
		cbuf:   C.fftw_alloc_complex(C.size_t(nc)),
		cwork:  C.fftw_alloc_complex(C.size_t(nc)),
		colFwd: make([]C.fftw_plan, threads),
		colInv: make([]C.fftw_plan, threads),
	}
	if m.rbuf == nil || m.cbuf == nil || m.cwork == nil {
		m.free()
		return nil, fmt.Errorf("spectral: FFTW could not allocate buffers for grid %v", g)
	}
	// FFTW_ESTIMATE picks algorithms without timing them, so every process
	// makes the same plans and results are reproducible bit for bit for a
	// given grid and thread count (a resumed run must match an uninterrupted
	// one). FFTW_MEASURE is faster per transform but may choose differently
	// from run to run.
	flags := C.uint(C.FFTW_ESTIMATE)
	if measure {
		flags = C.FFTW_MEASURE
	}
	rb, cb := unsafe.Slice(m.rbuf, nr), unsafe.Slice(m.cbuf, nc)
	nx, ny, nk := C.int(g.Nx), C.int(g.Ny), C.int(g.nkx)
	last := g.Ny - (nblocks-1)*block
	lastOff := (nblocks - 1) * block
	ok := true
	fftwMu.Lock()
	m.rowFwd = C.memix_plan_rows_r2c(nx, C.int(block), &rb[0], &cb[0], flags)
	m.rowInv = C.memix_plan_rows_c2r(nx, C.int(block), &cb[0], &rb[0], flags)
	m.rowFwdLast = C.memix_plan_rows_r2c(nx, C.int(last), &rb[lastOff*g.Nx], &cb[lastOff*g.nkx], flags)
	m.rowInvLast = C.memix_plan_rows_c2r(nx, C.int(last), &cb[lastOff*g.nkx], &rb[lastOff*g.Nx], flags)
	ok = m.rowFwd != nil && m.rowInv != nil && m.rowFwdLast != nil && m.rowInvLast != nil
	for w := 0; w < threads; w++ {
		lo, hi := span(g.nkx, w, threads)
		m.colFwd[w] = C.memix_plan_cols(ny, nk, C.int(hi-lo), &cb[lo], C.FFTW_FORWARD, flags)
		m.colInv[w] = C.memix_plan_cols(ny, nk, C.int(hi-lo), &cb[lo], C.FFTW_BACKWARD, flags)
		ok = ok && m.colFwd[w] != nil && m.colInv[w] != nil
	}
	fftwMu.Unlock()
	if !ok {
		m.free()
		return nil, fmt.Errorf("spectral: FFTW could not plan transforms for grid %v", g)
	}
	p := &fftwPlan{
		g:       g,
		threads: threads,
		mem:     m,
		scale:   C.double(1 / float64(nr)),
		block:   block,
		nblocks: nblocks,
		rview:   unsafe.Slice((*float64)(unsafe.Pointer(m.rbuf)), nr),
		cview:   unsafe.Slice((*complex128)(unsafe.Pointer(m.cbuf)), nc),
		wview:   unsafe.Slice((*complex128)(unsafe.Pointer(m.cwork)), nc),
	}
	p.fwdRows, p.fwdCols = p.forwardRows, p.forwardCols
	p.invCopy, p.invCols, p.invRows = p.inverseCopy, p.inverseCols, p.inverseRows
	if threads > 1 {
		p.pool = newWorkerPool(threads)
	}
	p.cleanup = runtime.AddCleanup(p, func(m *fftwMem) { m.free() }, m)
	return p, nil
}

func (p *fftwPlan) Grid() *Grid     { return p.g }
func (p *fftwPlan) Threads() int    { return p.threads }
func (p *fftwPlan) Backend() string { return string(FFTW) }

func (p *fftwPlan) Close() {
	if p.mem == nil {
		return
	}
	p.cleanup.Stop()
	if p.pool != nil {
		p.pool.close()
	}
	p.mem.free()
	p.mem = nil
	p.rview, p.cview, p.wview = nil, nil, nil
}

func (p *fftwPlan) each(f func(int)) {
	if p.pool == nil {
		f(0)
		return
	}
	p.pool.run(f)
}

func (p *fftwPlan) live() {
	if p.mem == nil {
		panic("spectral: FFTW plan used after Close")
	}
}

func aligned(ptr unsafe.Pointer) bool { return C.memix_aligned(ptr) != 0 }

func (p *fftwPlan) Forward(dst []complex128, src []float64) {
	p.live()
	p.g.checkSpec(dst, "Forward dst")
	p.g.checkReal(src, "Forward src")
	p.rptr, p.cptr = unsafe.Pointer(&src[0]), unsafe.Pointer(&dst[0])
	direct := aligned(p.rptr) && aligned(p.cptr)
	if !direct {
		copy(p.rview, src)
		p.rptr, p.cptr = unsafe.Pointer(p.mem.rbuf), unsafe.Pointer(p.mem.cbuf)
	}
	p.each(p.fwdRows)
	p.each(p.fwdCols)
	if !direct {
		copy(dst, p.cview)
	}
	p.rptr, p.cptr = nil, nil
	runtime.KeepAlive(src)
	runtime.KeepAlive(dst)
}

func (p *fftwPlan) Inverse(dst []float64, src []complex128) {
	p.live()
	p.g.checkReal(dst, "Inverse dst")
	p.g.checkSpec(src, "Inverse src")
	p.cptr, p.wptr = unsafe.Pointer(&src[0]), unsafe.Pointer(p.mem.cwork)
	p.inverse(dst, true)
	runtime.KeepAlive(src)
}

func (p *fftwPlan) InverseOverwrite(dst []float64, src []complex128) {
	p.live()
	p.g.checkReal(dst, "InverseOverwrite dst")
	p.g.checkSpec(src, "InverseOverwrite src")
	p.cptr = unsafe.Pointer(&src[0])
	p.wptr = p.cptr
	copyIn := !aligned(p.cptr)
	if copyIn {
		p.wptr = unsafe.Pointer(p.mem.cwork)
	}
	p.inverse(dst, copyIn)
	runtime.KeepAlive(src)
}

// inverse runs the inverse stages from p.cptr through the work array p.wptr
// into dst, first copying p.cptr into p.wptr if copyIn is set.
func (p *fftwPlan) inverse(dst []float64, copyIn bool) {
	p.rptr = unsafe.Pointer(&dst[0])
	direct := aligned(p.rptr)
	if !direct {
		p.rptr = unsafe.Pointer(p.mem.rbuf)
	}
	if copyIn {
		p.each(p.invCopy)
	}
	p.each(p.invCols)
	p.each(p.invRows)
	if !direct {
		copy(dst, p.rview)
	}
	p.rptr, p.cptr, p.wptr = nil, nil, nil
	runtime.KeepAlive(dst)
}

// blocks returns the range of row blocks worker w handles.
func (p *fftwPlan) blocks(w int) (lo, hi int) { return span(p.nblocks, w, p.threads) }

func (p *fftwPlan) forwardRows(w int) {
	m, nx, nk := p.mem, p.g.Nx, p.g.nkx
	lo, hi := p.blocks(w)
	for b := lo; b < hi; b++ {
		r := b * p.block
		plan, rows := m.rowFwd, p.block
		if b == p.nblocks-1 {
			plan, rows = m.rowFwdLast, p.g.Ny-r
		}
		C.memix_r2c_scaled(plan, (*C.double)(unsafe.Add(p.rptr, 8*r*nx)),
			(*C.fftw_complex)(unsafe.Add(p.cptr, 16*r*nk)), C.size_t(rows*nk), p.scale)
	}
}

func (p *fftwPlan) forwardCols(w int) {
	lo, _ := span(p.g.nkx, w, p.threads)
	a := (*C.fftw_complex)(unsafe.Add(p.cptr, 16*lo))
	C.memix_c2c(p.mem.colFwd[w], a, a)
}

func (p *fftwPlan) inverseCopy(w int) {
	lo, hi := p.blocks(w)
	n := p.g.nkx * p.block
	from := unsafe.Slice((*complex128)(p.cptr), p.g.SpecLen())
	copy(p.wview[lo*n:min(hi*n, len(from))], from[lo*n:min(hi*n, len(from))])
}

func (p *fftwPlan) inverseCols(w int) {
	lo, _ := span(p.g.nkx, w, p.threads)
	a := (*C.fftw_complex)(unsafe.Add(p.wptr, 16*lo))
	C.memix_c2c(p.mem.colInv[w], a, a)
}

func (p *fftwPlan) inverseRows(w int) {
	m, nx, nk := p.mem, p.g.Nx, p.g.nkx
	lo, hi := p.blocks(w)
	for b := lo; b < hi; b++ {
		r := b * p.block
		plan := m.rowInv
		if b == p.nblocks-1 {
			plan = m.rowInvLast
		}
		C.memix_c2r(plan, (*C.fftw_complex)(unsafe.Add(p.wptr, 16*r*nk)), (*C.double)(unsafe.Add(p.rptr, 8*r*nx)))
	}
}

// bareFFTW is a plain single-threaded FFTW 2D plan pair on its own buffers,
// used only as the benchmark baseline for the wrapper.
type bareFFTW struct {
	fwd, inv C.fftw_plan
	r        *C.double
	c        *C.fftw_complex
}

func newBareFFTW(g *Grid) *bareFFTW {
	b := &bareFFTW{r: C.fftw_alloc_real(C.size_t(g.RealLen())), c: C.fftw_alloc_complex(C.size_t(g.SpecLen()))}
	fftwMu.Lock()
	b.fwd = C.fftw_plan_dft_r2c_2d(C.int(g.Ny), C.int(g.Nx), b.r, b.c, C.FFTW_ESTIMATE)
	b.inv = C.fftw_plan_dft_c2r_2d(C.int(g.Ny), C.int(g.Nx), b.c, b.r, C.FFTW_ESTIMATE)
	fftwMu.Unlock()
	return b
}

func (b *bareFFTW) pair() { C.memix_bare_pair(b.fwd, b.inv) }

func (b *bareFFTW) close() {
	fftwMu.Lock()
	C.fftw_destroy_plan(b.fwd)
	C.fftw_destroy_plan(b.inv)
	fftwMu.Unlock()
	C.fftw_free(unsafe.Pointer(b.r))
	C.fftw_free(unsafe.Pointer(b.c))
}
