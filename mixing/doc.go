// Package mixing measures how well a scalar field (the lipid composition φ,
// or any other) is mixed, and how its domains grow: mix-norms, the radially
// averaged structure factor and the characteristic domain length on one
// snapshot, and decay-rate fits and threshold times on a time series of
// such values.
//
// # Input and normalisation
//
// Snapshot measures take the box-normalised half spectrum of a real field,
// as produced by spectral.Plan.Forward: φ_k = (1/(Lx·Ly)) ∫ φ e^{−ik·x} d²x,
// stored as documented in package spectral. Every sum below runs over the
// FULL spectrum (each stored coefficient counted with spectral.Grid.Weight,
// so that a stored k stands for itself and its conjugate −k) and over
// k ≠ 0 only: the measures see the mean-free part φ − ⟨φ⟩.
//
// # Mixing norms
//
// Each norm is the square root of a weighted sum Σ_{k≠0} w(k) |φ_k|²:
//
//	Variance    w = 1                 the standard deviation of φ
//	HMinus1     w = 1/k²              Lin, Thiffeault & Doering, J. Fluid Mech. 675, 465 (2011)
//	HMinusHalf  w = 1/k               Thiffeault, Nonlinearity 25, R1 (2012)
//	Mix         w = (1 + k²L²)^{−1/2}  multiscale mix-norm, see below
//
// Mathew, Mezić & Petzold [Physica D 211, 23 (2005)] define the mix-norm by
// averaging the field over balls of every radius and show that it is
// equivalent (bounded above and below by constant multiples of) a Sobolev
// norm of order −1/2. memix implements that Sobolev norm with the weight
// (1 + k²L²)^{−1/2}, not the ball-averaging weights themselves, so values
// are equivalent to, not equal to, theirs. The length L (MixLength) is the
// caller's: on a square box of side ℓ, L = ℓ gives (1 + 4π²|n|²)^{−1/2} in
// terms of the integer wavevector n, the weight written on the unit torus.
// Structure finer than L is weighted like the H^{−1/2} norm (w ≈ 1/(kL)),
// structure coarser than L like the variance.
//
// For a single mode A cos(k·x) the norms are A/√2 times √w(k) (MODEL.md §4).
//
// # Domain statistics
//
// The structure factor is radially averaged over shells of width
// Δk = 2π/max(Lx, Ly) centred on b·Δk, b = 1, 2, …: shell b holds the
// modes with (b − 1/2)Δk ≤ |k| < (b + 1/2)Δk, and
//
//	S_b = (Lx·Ly / N_b) Σ_{k in shell b} |φ_k|²,
//
// with N_b the number of modes in the full spectrum that fall in the shell.
// This is the shell average of |φ̂(k)|²/(Lx·Ly) for the unnormalised
// continuum transform φ̂(k) = ∫ φ e^{−ik·x} d²x, the usual normalisation
// that makes S independent of the box size for a statistically homogeneous
// field; it has the units of φ² times area. The characteristic domain length
// is L(t) = 2π/⟨k⟩ with ⟨k⟩ = Σ_{k≠0} |k| |φ_k|² / Σ_{k≠0} |φ_k|² summed over
// individual modes (not shell centres), so it is exact for stripes of any
// orientation. For fields with sharp interfaces ⟨k⟩ grows logarithmically
// with the resolution (the Porod tail), so compare L(t) only between runs
// of equal grid spacing and interface width.
//
// # Time series
//
// Ratios, FitExp, FitPower and Reach work on plain slices of times and
// values. Fits are least squares on logarithms; the window is either given
// by the caller or chosen by the rule documented at Window, and the window
// used is always reported.
//
// # Units, aliasing, allocation
//
// Lengths and wavenumbers are in the unit of the grid; the norms carry the
// unit of φ times length^p (p = 0, 1, 1/2, 0). A Meter and a Spectrum are
// read-only after construction and may be shared between goroutines; their
// snapshot methods allocate nothing. A spectral field of the wrong length is
// a programmer error and panics; bad series data returns an error naming
// the index and the value.
package mixing
