// Package flow solves the in-plane hydrodynamics of a flat, incompressible
// membrane coupled to a subphase on each side and, optionally, to a
// substrate by uniform friction:
//
//	∇·[η_m (∇u + ∇uᵀ)] − ∇Π + t₊ + t₋ − ξu + f = 0,   ∇·u = 0.
//
// For uniform membrane viscosity the Fourier transform diagonalises it:
// û(k) = P(k) f̂(k) / D(k) with P = I − k̂k̂ and
// D(k) = η_m k² + Γ₊(k) + Γ₋(k) + ξ, where Γ is the traction coefficient of
// one subphase for the transverse (divergence-free) membrane mode
// ([Subphase.Gamma]). [Solver] applies this on the periodic grid with the
// k = 0 rule of the model (û(0) = f̂(0)/D(0) if D(0) > 0, else 0).
//
// # What else lives here
//
//   - Velocity-gradient kernels on spectral fields: [Gradients],
//     [Vorticity], [StrainRate] (ω = ∂x u_y − ∂y u_x, E₁₁ = ∂x u_x,
//     E₁₂ = (∂y u_x + ∂x u_y)/2, E₂₂ = −E₁₁ for incompressible flow).
//   - The power balance ⟨f·u⟩ = ⟨2η_m E:E⟩ + Σ_k Γ|û_k|² + ξ⟨|u|²⟩:
//     [PowerBudget].
//   - The point-force response of the infinite membrane, G∥(r) and G⊥(r),
//     by numerical Hankel transform of P/D for any configured membrane:
//     [Membrane.Response], [Membrane.SmoothedResponse],
//     [Membrane.ResponseTable], [LogSpaced], [Membrane.CrossoverLength].
//   - Flow maps of a smoothed point force or force dipole in the periodic
//     box: [FlowMap].
//
//   - The mobility of a rigid disk inclusion: [InclusionMobility] picks the
//     Saffman–Delbrück, Petrov–Schwille or Evans–Sackmann closed form where
//     it is exact or its accuracy established, and otherwise solves the
//     rigid-disk problem with the membrane's own D(k) by a Galerkin method
//     (mobility_galerkin.go); every estimate carries its method, source,
//     validity and error.
//   - Composition-dependent membrane viscosity: [ViscosityLaw] (constant,
//     log-linear, linear in the composition φ ∈ [−1, 1]) and [VarSolver],
//     preconditioned conjugate gradients on divergence-free fields with the
//     constant-viscosity Fourier inverse as preconditioner.
//
// # Conventions
//
// Spectral fields follow package spectral: half-spectrum layout and
// box-normalised coefficients c_k = (1/(LxLy)) ∫ c e^{−ik·x} d²x, so a box
// average of a product is Σ_k a_k conj(b_k) over the full spectrum
// ([spectral.Grid.Dot]). Every power and dissipation here is such a box
// average: power per unit membrane area. Derivative kernels inherit the
// grid's Nyquist rule (odd derivatives of Nyquist modes are zero); Solve
// sets the Nyquist row and column of the velocity to zero.
//
// Kernels take their destination first and allocate nothing; which
// arguments may alias is stated on each. A slice whose length does not
// match the grid is a programmer error and panics; bad physical input
// (a non-positive viscosity, a distance r ≤ 0, a force width below the
// grid spacing) returns an error naming the value and its valid range.
//
// A force dipole ±F p separated by ℓ has strength σ = −Fℓ: σ < 0 is
// extensile (pusher), σ > 0 contractile (puller) [Saintillan & Shelley,
// Phys. Fluids 20, 123304 (2008)].
//
// # Units
//
// The package has no unit system of its own: every quantity must be given
// in one consistent system (SI, or the reduced units memix solves in).
// Membrane viscosity η_m is a 2D (surface) viscosity [viscosity·length, e.g.
// Pa·s·m], subphase viscosity η a bulk viscosity [Pa·s], friction ξ a
// viscosity per length [Pa·s/m], lengths and depths lengths, and D(k) a
// force per area per velocity [Pa·s/m]. The point-force response G is a
// velocity per force [(m/s)/N = 1/(Pa·s·m)]; 4πη_m G is dimensionless.
//
// All flows this package returns are predictions of the continuum model
// above, not measurements.
package flow
