package spectral

// NewBareFFTW returns the benchmark baseline: a plain single-threaded FFTW
// 2D forward and inverse plan pair on their own buffers, and its release.
func NewBareFFTW(g *Grid) (pair func(), release func()) {
	b := newBareFFTW(g)
	return b.pair, b.close
}
