//go:build !cgo || nofftw

package spectral

import "errors"

const haveFFTW = false

type fftwPlan struct{ Plan }

func newFFTWPlan(*Grid, int, bool) (*fftwPlan, error) {
	return nil, errors.New("spectral: FFTW is not compiled in")
}

type bareFFTW struct{}

func newBareFFTW(*Grid) *bareFFTW { return &bareFFTW{} }
func (b *bareFFTW) pair()         {}
func (b *bareFFTW) close()        {}
