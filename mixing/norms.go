package mixing

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/spectral"
)

// Norm names one of the mixing norms; see the package documentation for
// the weights and their sources.
type Norm int

// The mixing norms, in the order of a Values array.
const (
	Variance   Norm = iota // square root of the variance (standard deviation)
	HMinus1                // H⁻¹ norm, weight 1/k²
	HMinusHalf             // H^{−1/2} norm, weight 1/k
	Mix                    // multiscale mix-norm, weight (1 + k²L²)^{−1/2}
	NumNorms               // number of norms
)

var normNames = [NumNorms]string{"variance", "h-1", "h-1/2", "mix"}

// String returns the short name of the norm used in output columns.
func (n Norm) String() string {
	if n < 0 || n >= NumNorms {
		return fmt.Sprintf("Norm(%d)", int(n))
	}
	return normNames[n]
}

// Values holds one value of every norm, indexed by Norm.
type Values [NumNorms]float64

// Meter evaluates the mixing norms on one grid. It precomputes one weight
// array per norm (the norm's weight times the mode's multiplicity in the
// full spectrum, zero at k = 0) so that every norm is the same weighted-sum
// kernel. A Meter is read-only after construction and may be shared
// between goroutines.
type Meter struct {
	g      *spectral.Grid
	mixLen float64
	w      [NumNorms][]float64 // w[n][idx]: multiplicity × weight of norm n at spectral index idx
}

// NewMeter returns a Meter for fields on g with mix-norm length mixLength
// (the L of the weight (1 + k²L²)^{−1/2}, in the grid's length unit). It
// returns an error unless mixLength is finite and > 0.
func NewMeter(g *spectral.Grid, mixLength float64) (*Meter, error) {
	if !(mixLength > 0) || math.IsInf(mixLength, 0) {
		return nil, fmt.Errorf("mixing: mix-norm length L = %g (grid length unit): must be finite and > 0", mixLength)
	}
	m := &Meter{g: g, mixLen: mixLength}
	for n := range m.w {
		m.w[n] = make([]float64, g.SpecLen())
	}
	k2 := g.K2()
	nk := g.Nkx()
	l2 := mixLength * mixLength
	for idx := 1; idx < g.SpecLen(); idx++ { // idx 0 is k = 0: weight 0
		mult := g.Weight(idx % nk)
		q2 := k2[idx]
		q := math.Sqrt(q2)
		m.w[Variance][idx] = mult
		m.w[HMinus1][idx] = mult / q2
		m.w[HMinusHalf][idx] = mult / q
		m.w[Mix][idx] = mult / math.Sqrt(1+q2*l2)
	}
	return m, nil
}

// Grid returns the grid of the Meter.
func (m *Meter) Grid() *spectral.Grid { return m.g }

// MixLength returns the length L of the mix-norm weight.
func (m *Meter) MixLength() float64 { return m.mixLen }

// Measure returns every norm of the mean-free part of the field whose
// box-normalised half spectrum is phi, in one pass over phi. It allocates
// nothing and panics if len(phi) does not match the grid.
func (m *Meter) Measure(phi []complex128) Values {
	m.check(phi)
	var v Values
	weightedSums(v[:], m.w[:], phi)
	for n := range v {
		v[n] = math.Sqrt(v[n])
	}
	return v
}

// Norm returns norm n of the mean-free part of phi. It allocates nothing
// and panics if n is not a norm or len(phi) does not match the grid.
func (m *Meter) Norm(n Norm, phi []complex128) float64 {
	if n < 0 || n >= NumNorms {
		panic(fmt.Sprintf("mixing: %v is not a norm", n))
	}
	m.check(phi)
	var s [1]float64
	weightedSums(s[:], m.w[n:n+1], phi)
	return math.Sqrt(s[0])
}

func (m *Meter) check(phi []complex128) {
	if len(phi) != m.g.SpecLen() {
		panic(fmt.Sprintf("mixing: spectral field has length %d, want %d for grid %v", len(phi), m.g.SpecLen(), m.g))
	}
}

// weightedSums sets out[n] = Σ_idx w[n][idx]·|s[idx]|² for n < len(out).
// It is the one kernel behind every norm and the mean wavenumber: the
// weights carry the physics (and the full-spectrum multiplicity), the loop
// is written once. len(w) must equal len(out) and every w[n] must be as long
// as s.
func weightedSums(out []float64, w [][]float64, s []complex128) {
	for n := range out {
		out[n] = 0
	}
	for idx, c := range s {
		p := real(c)*real(c) + imag(c)*imag(c)
		for n := range out {
			out[n] += w[n][idx] * p
		}
	}
}
