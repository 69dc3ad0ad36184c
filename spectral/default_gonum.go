//go:build !cgo || nofftw

package spectral

const defaultBackend = Gonum
