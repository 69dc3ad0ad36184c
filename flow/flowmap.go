package flow

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/spectral"
)

// PointForce is a force F = (Fx, Fy) on the membrane, spread as the
// Gaussian exp(−|x − x₀|²/(2w²))/(2πw²) of width w = Width centred at
// x₀ = (X, Y) (periodic images included). Units: force and length of the
// membrane's consistent unit system.
type PointForce struct {
	X, Y   float64 // centre
	Fx, Fy float64 // total force
	Width  float64 // Gaussian width w > 0
}

// ForceDipole is a force-free pair of smoothed point forces ±F p at
// x₀ ± (ℓ/2) p, with p = (cos Angle, sin Angle): the force +F p acts at
// x₀ + (ℓ/2)p. Its strength is σ = −Fℓ, so that σ < 0 is extensile (the
// forces point outward along p: a "pusher") and σ > 0 contractile (a
// "puller"), the sign convention of MODEL.md §2 [Saintillan & Shelley,
// Phys. Fluids 20, 123304 (2008)].
type ForceDipole struct {
	X, Y     float64 // centre x₀
	Strength float64 // σ = −Fℓ (force × length); < 0 extensile, > 0 contractile
	Length   float64 // separation ℓ > 0
	Angle    float64 // direction of p, radians from the x axis
	Width    float64 // Gaussian width w of each force, > 0
}

// FlowMap computes the flow of a smoothed point force or force dipole in
// the periodic box of a Solver: the force density is built from its exact
// box-normalised Fourier coefficients (no sampling of the Gaussian on the
// grid), solved with Solver.Solve (including its k = 0 rule, so a net force
// gives the uniform part f̂(0)/D(0) when D(0) > 0 and none when D(0) = 0),
// and transformed back with the plan. NewFlowMap allocates all scratch;
// the methods allocate nothing. A FlowMap is not safe for concurrent use
// (it shares the plan).
type FlowMap struct {
	s              *Solver
	p              spectral.Plan
	fx, fy, om, wk []complex128
}

// NewFlowMap returns a flow map for solver s using plan p. It panics if
// the plan was made for a different grid (a programmer error).
func NewFlowMap(s *Solver, p spectral.Plan) *FlowMap {
	if !s.g.Same(p.Grid()) {
		panic(fmt.Sprintf("flow: NewFlowMap: plan grid %v differs from solver grid %v", p.Grid(), s.g))
	}
	g := s.g
	return &FlowMap{s: s, p: p, fx: g.NewSpectral(), fy: g.NewSpectral(), om: g.NewSpectral(), wk: g.NewSpectral()}
}

// checkWidth reports a Gaussian width the grid cannot resolve: below one
// grid spacing the spectrum is cut at the Nyquist wavenumber while the
// Gaussian factor exp(−k²w²/2) is still above exp(−π²/2) ≈ 0.7 %.
func (fm *FlowMap) checkWidth(name string, w float64) error {
	h := fm.s.g.MinSpacing()
	if !(w >= h) || math.IsInf(w, 0) {
		return fmt.Errorf("flow: %s width = %g: must be finite and ≥ the grid spacing %g (length units)", name, w, h)
	}
	return nil
}

// PointForce sets ux and uy to the velocity of the smoothed point force f,
// and omega, unless it is nil, to the vorticity ∂x u_y − ∂y u_x. All are
// real fields of the solver's grid (a wrong length panics). It returns an
// error, writing nothing, if the width is not finite or below the grid
// spacing, or if a coordinate or force component is not finite.
func (fm *FlowMap) PointForce(ux, uy, omega []float64, f PointForce) error {
	if err := fm.checkWidth("point force", f.Width); err != nil {
		return err
	}
	if !finite(f.X, f.Y, f.Fx, f.Fy) {
		return fmt.Errorf("flow: point force at (%g, %g) with force (%g, %g): position and force must be finite", f.X, f.Y, f.Fx, f.Fy)
	}
	fm.force(f.X, f.Y, f.Width, func(kx, ky float64) (complex128, complex128) {
		return complex(f.Fx, 0), complex(f.Fy, 0)
	})
	fm.finish(ux, uy, omega)
	return nil
}

// Dipole sets ux, uy and omega (unless nil) as PointForce does, for the
// force dipole d. It returns an error, writing nothing, if the width is
// not finite or below the grid spacing, if the length is not finite and
// positive, or if another field is not finite.
func (fm *FlowMap) Dipole(ux, uy, omega []float64, d ForceDipole) error {
	if err := fm.checkWidth("dipole force", d.Width); err != nil {
		return err
	}
	if !(d.Length > 0) || math.IsInf(d.Length, 0) {
		return fmt.Errorf("flow: dipole length = %g: must be finite and > 0 (length units)", d.Length)
	}
	if !finite(d.X, d.Y, d.Strength, d.Angle) {
		return fmt.Errorf("flow: dipole at (%g, %g), strength %g, angle %g: must be finite", d.X, d.Y, d.Strength, d.Angle)
	}
	force := -d.Strength / d.Length
	px, py := math.Cos(d.Angle), math.Sin(d.Angle)
	half := 0.5 * d.Length
	// +F p at x₀ + (ℓ/2)p and −F p at x₀ − (ℓ/2)p: relative to the centre
	// the phase factor is e^{−ik·pℓ/2} − e^{+ik·pℓ/2} = −2i sin(k·p ℓ/2).
	fm.force(d.X, d.Y, d.Width, func(kx, ky float64) (complex128, complex128) {
		c := complex(0, -2*force*math.Sin((kx*px+ky*py)*half))
		return c * complex(px, 0), c * complex(py, 0)
	})
	fm.finish(ux, uy, omega)
	return nil
}

// force fills fm.fx, fm.fy with the box-normalised coefficients of a
// Gaussian-smoothed distribution centred at (x0, y0): for each k,
// (1/(LxLy)) e^{−k²w²/2} e^{−ik·x₀} times the vector amp(k).
func (fm *FlowMap) force(x0, y0, w float64, amp func(kx, ky float64) (complex128, complex128)) {
	g := fm.s.g
	kx, ky, k2 := g.Kx(), g.Ky(), g.K2()
	nk := g.Nkx()
	inv := 1 / (g.Lx * g.Ly)
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < nk; i++ {
			idx := j*nk + i
			s, c := math.Sincos(-(kx[i]*x0 + ky[j]*y0))
			e := complex(inv*math.Exp(-0.5*k2[idx]*w*w), 0) * complex(c, s)
			ax, ay := amp(kx[i], ky[j])
			fm.fx[idx], fm.fy[idx] = e*ax, e*ay
		}
	}
}

// finish solves for the force in fm.fx, fm.fy and writes the real fields.
func (fm *FlowMap) finish(ux, uy, omega []float64) {
	g := fm.s.g
	fm.s.Solve(fm.fx, fm.fy, fm.fx, fm.fy)
	if omega != nil {
		Vorticity(g, fm.om, fm.fx, fm.fy, fm.wk)
		fm.p.InverseOverwrite(omega, fm.om)
	}
	fm.p.InverseOverwrite(ux, fm.fx)
	fm.p.InverseOverwrite(uy, fm.fy)
}

func finite(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}
