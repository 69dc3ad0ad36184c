// Package fields holds the time-dependent model of memix: the state of the
// active inclusions (as angular modes or moments of their orientation
// distribution) and of the lipid composition, the right-hand sides of their
// equations with the membrane flow they drive, the ETDRK4 time stepper,
// initial conditions and diagnostics. The physics is that of MODEL.md §2,
// §3 and §5; results are model predictions.
//
// # Reduced units
//
// Everything in this package is dimensionless. The caller (package config)
// chooses a length unit ℓ₀, a time unit τ₀, a surface-viscosity unit η_m
// (so the reduced membrane viscosity is 1 unless the caller picks another
// unit) and the density unit c₀ = the mean inclusion number density, so
// that ⟨c⟩ = 1. Derived units: velocity ℓ₀/τ₀, force density
// η_m/(ℓ₀τ₀), stress and line tension η_m/τ₀ and η_mℓ₀/τ₀, power per area
// η_m/τ₀². The reduced inputs are:
//
//	membrane viscosity η_m/η_m-unit, subphase viscosity ηℓ₀/η_m, depth H/ℓ₀,
//	friction ξℓ₀²/η_m (Params.Membrane, a flow.Membrane)
//	active stress σ_a = σ₀c₀τ₀/η_m (σ₀ < 0 extensile/pusher, > 0 contractile
//	[Saintillan & Shelley, Phys. Fluids 20, 123304 (2008)])
//	flow alignment β ∈ [−1, 1], self-propulsion V₀τ₀/ℓ₀,
//	diffusivities D_tτ₀/ℓ₀², D_φτ₀/ℓ₀², rotational diffusion D_rτ₀
//	Cahn–Hilliard mobility M (∂tφ = M∇²μ, μ dimensionless), interface ε/ℓ₀,
//	free-energy density A τ₀/η_m (line tension (2√2/3)εA), partition χ.
//
// # Fields and equations
//
// Ψ(x, θ) is the inclusion number density per angle, p = (cos θ, sin θ),
// c = ∫Ψ dθ, m_n = ∫Ψ e^{inθ} dθ = a_n + i b_n (m_{−n} = conj m_n), and the
// density-weighted order tensor Q = ∫Ψ(pp − I/2)dθ has Q₁₁ = a₂/2,
// Q₁₂ = b₂/2; q = Q₁₁ + iQ₁₂ = m₂/2. With the velocity u, vorticity
// ω = ∂x uy − ∂y ux, strain rate E and e = E₁₁ + iE₁₂, the rotation rate
// θ̇ = ω/2 + β p⊥·E·p (Jeffery) gives, for the kinetic model (0 ≤ n ≤ M,
// m_n = 0 beyond M):
//
//	∂t m_n + ∇·(v m_n) + V₀[∂x(m_{n+1}+m_{n−1})/2 + ∂y(m_{n+1}−m_{n−1})/(2i)]
//	    = i n (ω/2) m_n + (nβ/2)(e m_{n−2} − ē m_{n+2}) + D_t∇²m_n − n²D_r m_n
//
// and for the moment model
//
//	∂t c + ∇·(v c) = D_t∇²c
//	∂t q + ∇·(v q) = iωq + (β/2)(c e − ē m₄) − 4D_r q + D_t∇²q
//
// with m₄ = 0 (Closure Truncation) or 4q²/c (Quadratic). v = u + D_tχ∇φ is
// the velocity that carries the inclusions: the partition drift makes the
// flux of every mode J_n = −D_t(∇m_n − χ m_n∇φ), so that c ∝ e^{χφ} in
// equilibrium. Advection is written in conservative form, so ∫c and ∫φ are
// conserved exactly by the discretisation (the k = 0 mode of a divergence
// is zero).
//
// The membrane flow solves the force balance for f = σ_a ∇·Q, plus, with
// Lipid.Backreaction, the Korteweg force f_φ = −Aφ∇μ, through the
// FlowSolver (û = P f̂/D for uniform viscosity). The lipid composition
// obeys ∂tφ + ∇·(uφ) = D_φ∇²φ (Passive) or M∇²μ with μ = φ³ − φ − ε²∇²φ
// (CahnHilliard [Cahn & Hilliard, J. Chem. Phys. 28, 258 (1958)]).
//
// # Composition-dependent viscosity
//
// With Params.Viscosity (a flow.ViscosityLaw: log-linear or linear mixing
// of the phase viscosities, φ clamped to [−1, 1]; MODEL.md §3) the membrane
// viscosity is η_m(φ(x)) and the flow is solved iteratively by a
// [CompositionFlow], by default a [ViscosityFlow] (flow.VarSolver:
// preconditioned conjugate gradients to a relative residual
// Params.Solver.Tolerance). Before every flow solve (one per right-hand
// side, four per step, and one for Diagnostics or UpdateViews) the
// viscosity is set from the real-space φ of the state being evaluated,
// which the right-hand side computes anyway. The solves within a step
// start from the previous stage's velocity; the first solve of a step,
// and the diagnostics' solve, start from the velocity of the last solve of
// the previous step ([Model.FlowGuess]), so a step is a function of the
// state and that velocity alone: diagnostics do not perturb a run, and a
// checkpoint holding the velocity resumes bit for bit. The solver's work
// is reported per step in [StepInfo] and a failed solve stops the step
// with a [FlowError]. The dissipation of the diagnostics is ⟨2η_m(x) E:E⟩
// + Σ_k Γ|û_k|² + ξ⟨|u|²⟩, equal to the power ⟨f·u⟩ up to the solver's
// residual. The step-size limit of the active growth rate uses the smaller
// phase viscosity.
//
// # Numerics
//
// Fields are stored as box-normalised spectral coefficients (package
// spectral's layout and normalisation); products are formed in real space
// and dealiased by the 2/3 rule: the state is kept band-limited and the
// integrator discards every mode beyond the limit. The cubic term of
// Cahn–Hilliard is not fully dealiased by the 2/3 rule [practice]. The
// diagonal stiff parts L(k) = −D_t k² − n²D_r, −D_φ k² and
// M(k² − ε²k⁴) are integrated exactly by ETDRK4 [Cox & Matthews, J. Comput.
// Phys. 176, 430 (2002)] with coefficients by contour integral [Kassam &
// Trefethen, SIAM J. Sci. Comput. 26, 1214 (2005)]; all other terms are
// explicit. See [Stepping] for the step-size control.
//
// Cost: one evaluation of the right-hand side with flow and alignment on
// takes 16 FFTs of one real field for the moment model and 8M + 8 for the
// kinetic model (each evolved field to real space, u, uy, ω, E₁₁, E₁₂,
// and the flux and rotation terms back); Cahn–Hilliard adds 4, its
// back-reaction 4 and the partition drift 2. A step takes four
// evaluations; [StepInfo.FFTs] reports the count. A composition-dependent
// viscosity adds, per solve, 4 FFTs per PCG iteration and 8 for the
// initial and final residual, which StepInfo.FFTs does not count (at
// contrast 10 and tolerance 10⁻⁸ about 20 iterations per warm-started
// solve, so a moment-model step costs about 7 times the uniform one;
// BenchmarkVariableViscosityStep). Transforms use the plan's threads; the
// pointwise kernels run on one goroutine.
//
// # Ownership and allocation
//
// A Model owns its state and scratch; a Stepper owns the stage buffers and
// coefficient tables. [Stepper.Step], [Model.Diagnostics] and
// [Model.UpdateViews] allocate nothing (given a FlowSolver or
// CompositionFlow and a Source that allocate nothing; ViscosityFlow
// does not). Views returned by the model are
// owned by it and must not be modified. Nothing here is safe for
// concurrent use.
package fields
