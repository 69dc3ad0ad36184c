package flow

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/spectral"
)

// Solver solves the membrane flow for uniform membrane viscosity on a
// periodic grid: û(k) = P(k) f̂(k)/D(k). It precomputes 1/D(k) once; Solve
// allocates nothing. A Solver is read-only after construction and may be
// shared between goroutines.
type Solver struct {
	g     *spectral.Grid
	m     Membrane
	invD  []float64 // 1/D(|k|) per spectral index; at k = 0, 1/D(0) or 0 if D(0) = 0
	gamma []float64 // Γ₊(|k|) + Γ₋(|k|) per spectral index; at k = 0 the limit
}

// NewSolver returns the solver for membrane m on grid g. It returns an
// error if m is invalid.
func NewSolver(g *spectral.Grid, m Membrane) (*Solver, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	s := &Solver{g: g, m: m, invD: make([]float64, g.SpecLen()), gamma: make([]float64, g.SpecLen())}
	k2 := g.K2()
	for idx := range s.invD {
		k := math.Sqrt(k2[idx])
		s.gamma[idx] = m.Upper.Gamma(k) + m.Lower.Gamma(k)
		d := m.D(k)
		if d > 0 {
			s.invD[idx] = 1 / d
		}
	}
	if !(s.invD[0] >= 0) {
		return nil, fmt.Errorf("flow: D(0) = %g is not usable", m.D0())
	}
	return s, nil
}

// Grid returns the solver's grid.
func (s *Solver) Grid() *spectral.Grid { return s.g }

// Membrane returns the membrane the solver was made for.
func (s *Solver) Membrane() Membrane { return s.m }

// InvD returns 1/D(k) per spectral index (0 where D = 0). The slice is
// shared and must not be modified.
func (s *Solver) InvD() []float64 { return s.invD }

// GammaSum returns the subphase traction Γ₊(|k|) + Γ₋(|k|) of both sides
// per spectral index, with the k → 0 limit (η/H of each Wall side) at
// index 0. Together with η_m k² (from [spectral.Grid.K2]) and ξ it makes
// up D(k); a preconditioner or an energy budget reads it instead of
// re-evaluating the hyperbolic functions. The slice is shared and must not
// be modified.
func (s *Solver) GammaSum() []float64 { return s.gamma }

// Solve sets (ux, uy) to the velocity coefficients driven by the force
// density coefficients (fx, fy): û = P f̂/D for k ≠ 0. The k = 0 mode is
// not projected (a uniform flow is divergence-free): û(0) = f̂(0)/D(0)
// when D(0) > 0 (wall or friction), and 0 when D(0) = 0, where nothing
// resists uniform translation and the net force of an active stress
// vanishes anyway. The Nyquist row and column are set to zero: a real
// Nyquist mode stands for both signs of its wavenumber, for which the
// projector's kx·ky term differs. ux may alias fx and uy may alias fy.
// Lengths must match the grid.
func (s *Solver) Solve(ux, uy, fx, fy []complex128) {
	n := s.g.SpecLen()
	if len(ux) != n || len(uy) != n || len(fx) != n || len(fy) != n {
		panic(fmt.Sprintf("flow: Solve lengths %d, %d, %d, %d, want %d", len(ux), len(uy), len(fx), len(fy), n))
	}
	kx, ky := s.g.Kx(), s.g.Ky()
	nk := s.g.Nkx()
	k2 := s.g.K2()
	ux[0], uy[0] = fx[0]*complex(s.invD[0], 0), fy[0]*complex(s.invD[0], 0)
	for j := 0; j < s.g.Ny; j++ {
		row := j * nk
		if j == s.g.Ny/2 {
			clear(ux[row : row+nk])
			clear(uy[row : row+nk])
			continue
		}
		qy := ky[j]
		i0 := 0
		if j == 0 {
			i0 = 1 // k = 0 is done above
		}
		// Reslicing to the row lets the compiler drop bounds checks.
		fxr, fyr, uxr, uyr := fx[row:row+nk], fy[row:row+nk], ux[row:row+nk], uy[row:row+nk]
		invD, k2r := s.invD[row:row+nk], k2[row:row+nk]
		for i := i0; i < nk-1; i++ {
			qx := kx[i]
			a, b := fxr[i], fyr[i]
			// P f/D = (f − k̂ (k̂·f))/D = (k² f − k (k·f))/(k² D).
			inv := invD[i] / k2r[i]
			kk := k2r[i]
			dr := qx*real(a) + qy*real(b)
			di := qx*imag(a) + qy*imag(b)
			uxr[i] = complex((kk*real(a)-qx*dr)*inv, (kk*imag(a)-qx*di)*inv)
			uyr[i] = complex((kk*real(b)-qy*dr)*inv, (kk*imag(b)-qy*di)*inv)
		}
		uxr[nk-1], uyr[nk-1] = 0, 0
	}
}
