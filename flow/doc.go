// Package flow solves the in-plane hydrodynamics of a flat, incompressible
// membrane coupled to a subphase on each side and, optionally, to a
// substrate by uniform friction:
//
//	∇·[η_m (∇u + ∇uᵀ)] − ∇Π + t₊ + t₋ − ξu + f = 0,   ∇·u = 0.
//
// For uniform membrane viscosity the Fourier transform diagonalises it:
// û(k) = P(k) f̂(k) / D(k) with P = I − k̂k̂ and
// D(k) = η_m k² + Γ₊(k) + Γ₋(k) + ξ, where Γ is the traction coefficient of
// one subphase for the transverse (divergence-free) membrane mode.
//
// # Units
//
// The package has no unit system of its own: every quantity must be given
// in one consistent system (SI, or the reduced units memix solves in).
// Membrane viscosity η_m is a 2D (surface) viscosity [viscosity·length, e.g.
// Pa·s·m], subphase viscosity η a bulk viscosity [Pa·s], friction ξ a
// viscosity per length [Pa·s/m], lengths and depths lengths, and D(k) a
// force per area per velocity [Pa·s/m].
package flow
