package mixing

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/spectral"
)

// Spectrum computes the radially averaged structure factor and the
// characteristic domain length on one grid (normalisation in the package
// documentation). A Spectrum is read-only after construction and may be
// shared between goroutines.
type Spectrum struct {
	g     *spectral.Grid
	dk    float64   // shell width 2π/max(Lx, Ly)
	shell []int32   // shell[idx]: 0-based shell of spectral index idx (b−1), −1 for k = 0
	count []float64 // count[s]: modes of the full spectrum in shell s
	// mom[0][idx] = multiplicity·|k|, mom[1][idx] = multiplicity (0 at k = 0):
	// the weights of the numerator and denominator of ⟨k⟩.
	mom [2][]float64
}

// NewSpectrum returns the Spectrum of grid g.
func NewSpectrum(g *spectral.Grid) *Spectrum {
	s := &Spectrum{
		g:     g,
		dk:    2 * math.Pi / math.Max(g.Lx, g.Ly),
		shell: make([]int32, g.SpecLen()),
	}
	s.mom[0] = make([]float64, g.SpecLen())
	s.mom[1] = make([]float64, g.SpecLen())
	k2 := g.K2()
	nk := g.Nkx()
	maxShell := 0
	s.shell[0] = -1
	for idx := 1; idx < len(k2); idx++ {
		q := math.Sqrt(k2[idx])
		b := int(math.Floor(q/s.dk + 0.5)) // shell b holds (b−½)Δk ≤ |k| < (b+½)Δk
		s.shell[idx] = int32(b - 1)
		maxShell = max(maxShell, b)
		mult := g.Weight(idx % nk)
		s.mom[0][idx] = mult * q
		s.mom[1][idx] = mult
	}
	s.count = make([]float64, maxShell)
	for idx := 1; idx < len(k2); idx++ {
		s.count[s.shell[idx]] += g.Weight(idx % nk)
	}
	return s
}

// Grid returns the grid of the Spectrum.
func (s *Spectrum) Grid() *spectral.Grid { return s.g }

// Shells returns the number of shells B; shell b = 1 … B is stored at
// index b − 1 of a structure-factor slice.
func (s *Spectrum) Shells() int { return len(s.count) }

// Width returns the shell width Δk = 2π/max(Lx, Ly).
func (s *Spectrum) Width() float64 { return s.dk }

// K returns the centre (i+1)·Δk of the shell stored at index i.
func (s *Spectrum) K(i int) float64 { return float64(i+1) * s.dk }

// Count returns the number of modes of the full spectrum in the shell
// stored at index i (0 for an empty shell of a rectangular box).
func (s *Spectrum) Count(i int) int { return int(s.count[i]) }

// StructureFactor sets dst[b−1] = S_b for every shell b = 1 … Shells() of
// the field whose box-normalised half spectrum is phi. The k = 0 mode is
// excluded; an empty shell gets 0. It allocates nothing and panics if a
// length is wrong.
func (s *Spectrum) StructureFactor(dst []float64, phi []complex128) {
	if len(dst) != len(s.count) {
		panic(fmt.Sprintf("mixing: structure factor has length %d, want %d shells", len(dst), len(s.count)))
	}
	s.check(phi)
	for i := range dst {
		dst[i] = 0
	}
	for idx := 1; idx < len(phi); idx++ {
		c := phi[idx]
		dst[s.shell[idx]] += s.mom[1][idx] * (real(c)*real(c) + imag(c)*imag(c))
	}
	area := s.g.Lx * s.g.Ly
	for i := range dst {
		if s.count[i] > 0 {
			dst[i] *= area / s.count[i]
		}
	}
}

// MeanK returns ⟨k⟩ = Σ_{k≠0} |k| |φ_k|² / Σ_{k≠0} |φ_k|², summed over modes.
// It returns 0 for a uniform field. It allocates nothing and panics if
// len(phi) does not match the grid.
func (s *Spectrum) MeanK(phi []complex128) float64 {
	s.check(phi)
	var sums [2]float64
	weightedSums(sums[:], s.mom[:], phi)
	if sums[1] == 0 {
		return 0
	}
	return sums[0] / sums[1]
}

// DomainLength returns the characteristic domain length 2π/⟨k⟩, +Inf for
// a uniform field. It allocates nothing and panics if len(phi) does not
// match the grid.
func (s *Spectrum) DomainLength(phi []complex128) float64 {
	return 2 * math.Pi / s.MeanK(phi)
}

func (s *Spectrum) check(phi []complex128) {
	if len(phi) != s.g.SpecLen() {
		panic(fmt.Sprintf("mixing: spectral field has length %d, want %d for grid %v", len(phi), s.g.SpecLen(), s.g))
	}
}
