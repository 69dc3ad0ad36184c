package flow

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/spectral"
)

// VarSolver solves the membrane flow when the membrane viscosity varies in
// space, η_m = η_m(x) (for instance through the lipid composition, see
// ViscosityLaw):
//
//	−P∇·[η_m(x)(∇u + ∇uᵀ)] + Γ(k)u + ξu = P f,   ∇·u = 0,
//
// on the periodic grid, with Γ = Γ₊ + Γ₋ the subphase tractions (applied
// per Fourier mode) and ξ the substrate friction.
//
// # Method
//
// Preconditioned conjugate gradients on divergence-free fields in Fourier
// space. The operator A is applied pseudo-spectrally: the strain rate is
// formed spectrally, taken to real space, multiplied there by 2η_m(x),
// brought back, and its divergence projected. Because u is divergence-free
// the strain rate is traceless, so only E_xx = (∂x ux − ∂y uy)/2 and E_xy
// are transformed (four FFTs per iteration). The preconditioner is the
// constant-viscosity inverse P/(η̄k² + Γ + ξ) with η̄ chosen by
// PCGOptions.Mean.
//
// # Solution space, symmetry and aliasing
//
// The unknowns are the velocity coefficients with P(k)û = û, the Nyquist
// row and column zero (as in Solver), the k = 0 mode zero when D(0) = 0 and
// real otherwise, and the self-conjugate column kx = 0 Hermitian. On that
// space A = Gᵀ M G + diag(Γ + ξ), where G maps u to (2E_xx, 2E_xy) by
// spectral differentiation, M multiplies by η_m at the grid points, and Gᵀ
// is the adjoint of G in the grid inner product ⟨a, b⟩ = Σ_k a_k·conj(b_k)
// (= the box average of a·b). So
//
//	⟨v, Au⟩ = ⟨2η_m E(v):E(u)⟩_grid + Σ_k (Γ(k) + ξ) v̂_k·conj(û_k),
//
// which is symmetric, and positive on the solution space (E(u) = 0 only
// for a uniform u, on which the Γ + ξ term acts when D(0) > 0 and which is
// excluded when D(0) = 0): CG applies. The product η_m·E is not dealiased.
// Dealiasing it (truncating the product to the 2/3 set) on one side only
// would make A unsymmetric (Gᵀ T M G ≠ Gᵀ M T G) and break CG (measured on
// a domain-like field of contrast 50: ⟨v, Au⟩ − ⟨Av, u⟩ is 0.3–1 % of
// ‖v‖‖Au‖ + ‖Av‖‖u‖, against 1e-17 without truncation); truncating
// the velocity too would restore symmetry but discard the top third of the
// velocity's modes and make A differ from Solver's operator at uniform
// viscosity. Without dealiasing, A is exactly the Galerkin operator of the
// dissipation functional evaluated with the grid (trapezoidal) rule, which
// is spectrally accurate for a smooth η_m, and is exact when η_m and u are
// trigonometric polynomials whose product the grid resolves.
//
// At k = 0 the viscous term vanishes (a divergence has zero mean), so the
// uniform mode decouples and is solved exactly as by Solver: û(0) =
// f̂(0)/D(0) if D(0) > 0, else 0. With uniform viscosity the
// preconditioner is A⁻¹ itself and a solve takes one iteration.
//
// CG stops when the recursively updated residual meets the tolerance; the
// residual is then recomputed from the velocity, and CG restarted from it
// in the rare case that round-off made the two drift apart, so the
// residual reported is that of the returned velocity.
//
// The preconditioned operator's spectrum lies within [min(1, η_min/η̄),
// max(1, η_max/η̄)], so its condition number is at most the viscosity
// contrast η_max/η_min for any η̄ between the extremes, and CG needs
// O(sqrt(contrast)) iterations. Without subphase or friction, η̄ only
// scales the preconditioner, which leaves the CG iterates unchanged.
//
// A VarSolver owns all its scratch: Solve, SetViscosity, SetGuess, Apply
// and DissipationParts allocate nothing. It is not safe for concurrent use, and the plan it was
// given must not be used concurrently with its methods.
type VarSolver struct {
	g    *spectral.Grid
	plan spectral.Plan
	m    Membrane
	opt  PCGOptions

	damp  []float64 // Γ₊(|k|) + Γ₋(|k|) + ξ per spectral index; D(0) at k = 0
	gamma []float64 // Γ₊(|k|) + Γ₋(|k|) per spectral index (dissipation)
	hasD0 bool      // D(0) > 0: the uniform mode belongs to the solution space

	twoEta         []float64 // 2η_m at each grid point
	etaMin, etaMax float64
	etaBar         float64   // preconditioner viscosity η̄
	invDbar        []float64 // 1/(η̄k² + Γ + ξ); at k = 0, 1/D(0) or 0
	invK2          []float64 // 1/k² per spectral index; 0 at k = 0

	bx, by []complex128 // projected right-hand side P f
	xx, xy []complex128 // iterate; between solves the warm-start guess
	rx, ry []complex128 // residual
	zx, zy []complex128 // preconditioned residual
	px, py []complex128 // search direction
	qx, qy []complex128 // A p
	sxx    []complex128 // spectral E_xx, then 2η_m E_xx
	sxy    []complex128 // spectral E_xy, then 2η_m E_xy
	exx    []float64    // real E_xx, then 2η_m E_xx
	exy    []float64    // real E_xy, then 2η_m E_xy

	haveGuess bool
}

// NewVarSolver returns a variable-viscosity solver for membrane m on the
// grid of plan p, which it uses for its transforms (it does not close it).
// The viscosity field starts uniform at m.Viscosity; set it with
// SetViscosity. It returns an error if m or opt is invalid.
func NewVarSolver(p spectral.Plan, m Membrane, opt PCGOptions) (*VarSolver, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	opt, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	g := p.Grid()
	ns, nr := g.SpecLen(), g.RealLen()
	s := &VarSolver{g: g, plan: p, m: m, opt: opt}
	s.damp = make([]float64, ns)
	s.gamma = make([]float64, ns)
	k2 := g.K2()
	for idx := range s.damp {
		k := math.Sqrt(k2[idx])
		s.gamma[idx] = m.Upper.Gamma(k) + m.Lower.Gamma(k)
		s.damp[idx] = s.gamma[idx] + m.Friction
	}
	s.hasD0 = s.damp[0] > 0
	s.twoEta = make([]float64, nr)
	s.invDbar = make([]float64, ns)
	s.invK2 = make([]float64, ns)
	for idx := 1; idx < ns; idx++ {
		s.invK2[idx] = 1 / k2[idx]
	}
	for _, v := range []*[]complex128{&s.bx, &s.by, &s.xx, &s.xy, &s.rx, &s.ry, &s.zx, &s.zy, &s.px, &s.py, &s.qx, &s.qy, &s.sxx, &s.sxy} {
		*v = make([]complex128, ns)
	}
	s.exx, s.exy = make([]float64, nr), make([]float64, nr)
	for i := range s.twoEta {
		s.twoEta[i] = 2 * m.Viscosity
	}
	s.etaMin, s.etaMax = m.Viscosity, m.Viscosity
	s.setPreconditioner(m.Viscosity)
	return s, nil
}

// Grid returns the solver's grid.
func (s *VarSolver) Grid() *spectral.Grid { return s.g }

// Membrane returns the membrane the solver was made for. Its Viscosity is
// the initial uniform viscosity, not the current field.
func (s *VarSolver) Membrane() Membrane { return s.m }

// Options returns the options in use, defaults filled in.
func (s *VarSolver) Options() PCGOptions { return s.opt }

// Contrast returns η_max/η_min of the current viscosity field.
func (s *VarSolver) Contrast() float64 { return s.etaMax / s.etaMin }

// ViscosityRange returns the smallest and largest value of the current
// viscosity field.
func (s *VarSolver) ViscosityRange() (lo, hi float64) { return s.etaMin, s.etaMax }

// PreconditionerViscosity returns η̄, the uniform viscosity of the
// preconditioner for the current field.
func (s *VarSolver) PreconditionerViscosity() float64 { return s.etaBar }

// Viscosity copies the current viscosity field into dst (length Nx·Ny, the
// real-field layout of package spectral). It panics on a wrong length.
func (s *VarSolver) Viscosity(dst []float64) {
	if len(dst) != len(s.twoEta) {
		panic(fmt.Sprintf("flow: Viscosity dst has length %d, want %d", len(dst), len(s.twoEta)))
	}
	for i, v := range s.twoEta {
		dst[i] = v / 2
	}
}

// SetViscosity replaces the viscosity field by eta (real-field layout of
// package spectral, value at grid point (i, j) in eta[j*Nx+i]) and updates
// the preconditioner. eta is copied, not retained. It returns an error
// naming the first grid point whose value is not finite and positive, and
// then leaves the solver unchanged; it panics if len(eta) ≠ Nx·Ny. It
// allocates nothing on success.
func (s *VarSolver) SetViscosity(eta []float64) error {
	if len(eta) != len(s.twoEta) {
		panic(fmt.Sprintf("flow: SetViscosity field has length %d, want %d for grid %v", len(eta), len(s.twoEta), s.g))
	}
	lo, hi := math.Inf(1), 0.0
	var sum, sumLog, sumInv float64
	for idx, v := range eta {
		if !(v > 0 && v < math.Inf(1)) {
			return fmt.Errorf("flow: membrane viscosity field at grid point (%d, %d) = %g: must be finite and > 0", idx%s.g.Nx, idx/s.g.Nx, v)
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
		switch s.opt.Mean {
		case ArithmeticMean:
			sum += v
		case GeometricMean:
			sumLog += math.Log(v)
		case HarmonicMean:
			sumInv += 1 / v
		}
	}
	for idx, v := range eta {
		s.twoEta[idx] = 2 * v
	}
	s.etaMin, s.etaMax = lo, hi
	n := float64(len(eta))
	var bar float64
	switch s.opt.Mean {
	case ArithmeticMean:
		bar = sum / n
	case GeometricMean:
		bar = math.Exp(sumLog / n)
	case HarmonicMean:
		bar = n / sumInv
	case ExtremesMean:
		bar = math.Sqrt(lo * hi)
	}
	// Round-off can push a mean of a uniform field a few ulps outside it.
	s.setPreconditioner(math.Min(hi, math.Max(lo, bar)))
	return nil
}

// setPreconditioner sets η̄ and 1/(η̄k² + Γ + ξ).
func (s *VarSolver) setPreconditioner(bar float64) {
	s.etaBar = bar
	k2 := s.g.K2()
	for idx := range s.invDbar {
		if d := bar*k2[idx] + s.damp[idx]; d > 0 {
			s.invDbar[idx] = 1 / d
		} else {
			s.invDbar[idx] = 0
		}
	}
}

// SetGuess sets the starting velocity of the next solve (unless the solver
// was made with ColdStart) to the projection of (ux, uy) onto the solution
// space. It panics if a length does not match the grid.
func (s *VarSolver) SetGuess(ux, uy []complex128) {
	s.checkSpec(ux, uy, ux, uy, "SetGuess")
	copy(s.xx, ux)
	copy(s.xy, uy)
	s.project(s.xx, s.xy)
	s.haveGuess = true
}

// ResetGuess makes the next solve start from zero.
func (s *VarSolver) ResetGuess() { s.haveGuess = false }

// Apply sets (qx, qy) to A applied to the projection of (ux, uy) onto the
// solution space: the force density −P∇·[η_m(∇u + ∇uᵀ)] + (Γ + ξ)u that
// holds the velocity u (see VarSolver for the discretisation). qx may alias
// ux and qy uy. It uses the solver's scratch, allocates nothing, and panics
// if a length does not match the grid.
func (s *VarSolver) Apply(qx, qy, ux, uy []complex128) {
	s.checkSpec(qx, qy, ux, uy, "Apply")
	copy(s.zx, ux)
	copy(s.zy, uy)
	s.project(s.zx, s.zy)
	s.apply(qx, qy, s.zx, s.zy)
}

// Solve sets (ux, uy) to the velocity coefficients driven by the force
// density coefficients (fx, fy) (box-normalised, layout of package
// spectral), and returns the iterations and the final relative residual.
// Only the transverse part P f acts; the k = 0 mode is û(0) = f̂(0)/D(0)
// when D(0) > 0 and 0 otherwise, and the Nyquist row and column are zero,
// exactly as in Solver. ux may alias fx and uy may alias fy; fx and fy are
// otherwise not modified.
//
// The solve starts from the last converged velocity (or the SetGuess one)
// unless the options say ColdStart. If the relative residual does not reach
// the tolerance within the iteration cap, or becomes non-finite, Solve
// returns a *ConvergenceError and leaves the last iterate in (ux, uy); the
// next solve then starts from zero. Solve allocates nothing. It panics if a
// length does not match the grid.
func (s *VarSolver) Solve(ux, uy, fx, fy []complex128) (PCGResult, error) {
	s.checkSpec(ux, uy, fx, fy, "Solve")
	copy(s.bx, fx)
	copy(s.by, fy)
	// Project twice: the longitudinal round-off one projection leaves is
	// relative to f, not to P f. When f is longitudinal to round-off (a
	// single mode of Q along its wavevector, say), P f is of the size of
	// that round-off, and a b with a longitudinal part of its own size,
	// which A cannot produce, would keep the relative residual near 1. The
	// second pass leaves a longitudinal part of order ε‖b‖.
	s.project(s.bx, s.by)
	s.project(s.bx, s.by)
	if !s.haveGuess || s.opt.ColdStart {
		clear(s.xx)
		clear(s.xy)
	}
	res, iters, err := s.pcg()
	copy(ux, s.xx)
	copy(uy, s.xy)
	s.haveGuess = err == nil
	return PCGResult{Iterations: iters, Residual: res}, err
}

// DissipationParts returns the dissipation rates of the velocity (ux, uy)
// with the current viscosity field, box averages as in PowerBudget: in the
// membrane, ⟨2η_m(x) E:E⟩ = ⟨2η_m (E₁₁² + 2E₁₂² + E₂₂²)⟩ with the strain
// rate of StrainRate (E₂₂ = ∂y u_y is computed, not assumed to be −E₁₁)
// taken to the grid points and the average taken over them; in the two
// subphases, Σ_k (Γ₊+Γ₋)|û_k|²; and in the substrate friction, ξ⟨|u|²⟩.
// The grid-point average is the rule the operator is built on, so for a
// velocity in the solution space the sum equals ⟨u, Au⟩ (see VarSolver) to
// round-off, and in a converged solve it equals the power ⟨f·u⟩ up to
// ⟨u, Pf − Au⟩, at most the residual times ‖u‖‖Pf‖. It uses the solver's
// transform scratch (not the warm-start velocity), allocates nothing, does
// not modify the velocity, and panics if a length does not match the grid.
func (s *VarSolver) DissipationParts(ux, uy []complex128) (membrane, subphase, friction float64) {
	s.checkSpec(ux, uy, ux, uy, "DissipationParts")
	g := s.g
	StrainRate(g, s.sxx, s.sxy, ux, uy)
	s.plan.InverseOverwrite(s.exx, s.sxx)
	s.plan.InverseOverwrite(s.exy, s.sxy)
	var sum float64
	for i, te := range s.twoEta {
		a, b := s.exx[i], s.exy[i]
		sum += te * (a*a + 2*b*b)
	}
	g.Dy(s.sxx, uy)
	s.plan.InverseOverwrite(s.exx, s.sxx)
	for i, te := range s.twoEta {
		a := s.exx[i]
		sum += te * a * a
	}
	membrane = sum / float64(len(s.twoEta))
	subphase = weightedSum(g, s.gamma, ux) + weightedSum(g, s.gamma, uy)
	friction = s.m.Friction * (g.MeanSquare(ux) + g.MeanSquare(uy))
	return membrane, subphase, friction
}

// pcg solves A x = b from the current x. It returns the true relative
// residual, the iterations and, on failure, a *ConvergenceError.
func (s *VarSolver) pcg() (res float64, iters int, err error) {
	tol, maxIter := s.opt.Tolerance, s.opt.MaxIterations
	bnorm := math.Sqrt(s.dot(s.bx, s.by, s.bx, s.by))
	if bnorm == 0 {
		clear(s.xx)
		clear(s.xy)
		return 0, 0, nil
	}
	res = s.residual(bnorm)
	// Each pass runs CG from the true residual until the recursively
	// updated residual meets the tolerance, then checks the true residual;
	// a pass is repeated only if round-off made the two drift apart.
	for res > tol && iters < maxIter && pcgFinite(res) {
		s.precondition(s.zx, s.zy, s.rx, s.ry)
		copy(s.px, s.zx)
		copy(s.py, s.zy)
		rz := s.dot(s.rx, s.ry, s.zx, s.zy)
		breakdown := false
		for iters < maxIter {
			s.apply(s.qx, s.qy, s.px, s.py)
			pq := s.dot(s.px, s.py, s.qx, s.qy)
			if !(pq > 0) || !pcgFinite(pq) || !pcgFinite(rz) {
				// p = 0 (nothing left to reduce) or a non-finite value.
				breakdown = true
				break
			}
			alpha := rz / pq
			pcgAxpy(s.xx, alpha, s.px)
			pcgAxpy(s.xy, alpha, s.py)
			pcgAxpy(s.rx, -alpha, s.qx)
			pcgAxpy(s.ry, -alpha, s.qy)
			iters++
			if math.Sqrt(s.dot(s.rx, s.ry, s.rx, s.ry)) <= tol*bnorm {
				break
			}
			s.precondition(s.zx, s.zy, s.rx, s.ry)
			rzNew := s.dot(s.rx, s.ry, s.zx, s.zy)
			beta := rzNew / rz
			rz = rzNew
			pcgXpay(s.px, s.zx, beta)
			pcgXpay(s.py, s.zy, beta)
		}
		res = s.residual(bnorm)
		if breakdown {
			break
		}
	}
	if res <= tol {
		return res, iters, nil
	}
	return res, iters, &ConvergenceError{Iterations: iters, Residual: res, Tolerance: tol, Contrast: s.Contrast()}
}

// residual sets r = b − A x and returns ‖r‖/bnorm.
func (s *VarSolver) residual(bnorm float64) float64 {
	s.apply(s.qx, s.qy, s.xx, s.xy)
	for idx := range s.rx {
		s.rx[idx] = s.bx[idx] - s.qx[idx]
		s.ry[idx] = s.by[idx] - s.qy[idx]
	}
	return math.Sqrt(s.dot(s.rx, s.ry, s.rx, s.ry)) / bnorm
}

// precondition sets z = r/(η̄k² + Γ + ξ), which maps the solution space to
// itself (the factor depends on |k| only).
func (s *VarSolver) precondition(zx, zy, rx, ry []complex128) {
	for idx, w := range s.invDbar {
		c := complex(w, 0)
		zx[idx] = rx[idx] * c
		zy[idx] = ry[idx] * c
	}
}

// apply sets q = A p for p in the solution space; q may alias p.
func (s *VarSolver) apply(qx, qy, px, py []complex128) {
	g := s.g
	nk := g.Nkx()
	kx, ky := g.Kx(), g.Ky()
	// Spectral strain rate, traceless form: E_xx = (∂x ux − ∂y uy)/2,
	// E_xy = (∂x uy + ∂y ux)/2, with ∂ → ik. p vanishes on the Nyquist
	// row and column, so their wavenumbers never enter.
	for j := 0; j < g.Ny; j++ {
		row := j * nk
		hy := 0.5 * ky[j]
		for i := 0; i < nk; i++ {
			idx := row + i
			hx := 0.5 * kx[i]
			ar, ai := real(px[idx]), imag(px[idx])
			br, bi := real(py[idx]), imag(py[idx])
			// i·(kx a − ky b)/2 and i·(kx b + ky a)/2, in real arithmetic.
			s.sxx[idx] = complex(-(hx*ai - hy*bi), hx*ar-hy*br)
			s.sxy[idx] = complex(-(hx*bi + hy*ai), hx*br+hy*ar)
		}
	}
	s.plan.InverseOverwrite(s.exx, s.sxx)
	s.plan.InverseOverwrite(s.exy, s.sxy)
	for i, te := range s.twoEta {
		s.exx[i] *= te
		s.exy[i] *= te
	}
	s.plan.Forward(s.sxx, s.exx)
	s.plan.Forward(s.sxy, s.exy)
	// −∇·σ with σ_yy = −σ_xx: (−∇·σ)_x = −i(kx σxx + ky σxy),
	// (−∇·σ)_y = −i(kx σxy − ky σxx); project it, add (Γ + ξ) p.
	half := g.Ny / 2
	for j := 0; j < g.Ny; j++ {
		row := j * nk
		ry := ky[j]
		for i := 0; i < nk; i++ {
			idx := row + i
			if i == nk-1 || j == half {
				qx[idx], qy[idx] = 0, 0
				continue
			}
			d := s.damp[idx]
			if idx == 0 {
				qx[0], qy[0] = complex(d, 0)*px[0], complex(d, 0)*py[0]
				continue
			}
			rx := kx[i]
			sar, sai := real(s.sxx[idx]), imag(s.sxx[idx])
			sbr, sbi := real(s.sxy[idx]), imag(s.sxy[idx])
			txr, txi := rx*sar+ry*sbr, rx*sai+ry*sbi
			tyr, tyi := rx*sbr-ry*sar, rx*sbi-ry*sai
			ik2 := s.invK2[idx]
			ktr, kti := (rx*txr+ry*tyr)*ik2, (rx*txi+ry*tyi)*ik2
			txr, txi = txr-rx*ktr, txi-rx*kti
			tyr, tyi = tyr-ry*ktr, tyi-ry*kti
			// −i t = (imag t, −real t)
			qx[idx] = complex(txi+d*real(px[idx]), -txr+d*imag(px[idx]))
			qy[idx] = complex(tyi+d*real(py[idx]), -tyr+d*imag(py[idx]))
		}
	}
	s.hermitianColumn(qx)
	s.hermitianColumn(qy)
}

// project maps (vx, vy) in place onto the solution space: P(k) for k ≠ 0,
// zero Nyquist row and column, the k = 0 mode real (zero if D(0) = 0), and
// the kx = 0 column Hermitian. It is the orthogonal projector of the grid
// inner product.
func (s *VarSolver) project(vx, vy []complex128) {
	g := s.g
	nk := g.Nkx()
	kx, ky := g.Kx(), g.Ky()
	half := g.Ny / 2
	for j := 0; j < g.Ny; j++ {
		row := j * nk
		ry := ky[j]
		for i := 0; i < nk; i++ {
			idx := row + i
			if i == nk-1 || j == half {
				vx[idx], vy[idx] = 0, 0
				continue
			}
			if idx == 0 {
				continue
			}
			rx := kx[i]
			ar, ai := real(vx[idx]), imag(vx[idx])
			br, bi := real(vy[idx]), imag(vy[idx])
			ik2 := s.invK2[idx]
			kr, ki := (rx*ar+ry*br)*ik2, (rx*ai+ry*bi)*ik2
			vx[idx] = complex(ar-rx*kr, ai-rx*ki)
			vy[idx] = complex(br-ry*kr, bi-ry*ki)
		}
	}
	if s.hasD0 {
		vx[0], vy[0] = complex(real(vx[0]), 0), complex(real(vy[0]), 0)
	} else {
		vx[0], vy[0] = 0, 0
	}
	s.hermitianColumn(vx)
	s.hermitianColumn(vy)
}

// hermitianColumn replaces the kx = 0 coefficients of rows j and Ny − j by
// the Hermitian mean (v_j + conj v_{Ny−j})/2 and its conjugate: the part of
// the column that a real field can hold.
func (s *VarSolver) hermitianColumn(v []complex128) {
	nk, ny := s.g.Nkx(), s.g.Ny
	for j := 1; j < ny/2; j++ {
		a, b := j*nk, (ny-j)*nk
		m := (v[a] + complex(real(v[b]), -imag(v[b]))) * 0.5
		v[a], v[b] = m, complex(real(m), -imag(m))
	}
}

// dot returns the grid inner product ⟨a, b⟩ of two vector fields.
func (s *VarSolver) dot(ax, ay, bx, by []complex128) float64 {
	return s.g.Dot(ax, bx) + s.g.Dot(ay, by)
}

func (s *VarSolver) checkSpec(ax, ay, bx, by []complex128, name string) {
	n := s.g.SpecLen()
	if len(ax) != n || len(ay) != n || len(bx) != n || len(by) != n {
		panic(fmt.Sprintf("flow: VarSolver.%s lengths %d, %d, %d, %d, want %d for grid %v", name, len(ax), len(ay), len(bx), len(by), n, s.g))
	}
}

// pcgAxpy sets y += a x.
func pcgAxpy(y []complex128, a float64, x []complex128) {
	c := complex(a, 0)
	for i, v := range x {
		y[i] += c * v
	}
}

// pcgXpay sets y = x + a y.
func pcgXpay(y, x []complex128, a float64) {
	c := complex(a, 0)
	for i, v := range x {
		y[i] = v + c*y[i]
	}
}

func pcgFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
