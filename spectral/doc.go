// Package spectral holds the periodic grid, its wavenumbers, the Fourier
// transforms between real and spectral fields, and the spectral operators
// (derivatives, inverse Laplacian, dealiasing) that every field equation of
// memix shares. Kernels used by more than one package live here once.
//
// # Grid and layouts
//
// The box is [0, Lx) × [0, Ly) with Nx × Ny points, Nx and Ny even. Lengths
// are in whatever unit the caller uses consistently (memix passes reduced,
// dimensionless lengths); wavenumbers are in the inverse of that unit.
//
// A real field is a []float64 of length Nx·Ny: the value at grid point
// (i, j), x = i·Lx/Nx, y = j·Ly/Ny, is Data[j*Nx+i].
//
// A spectral field is a []complex128 of length Ny·(Nx/2+1), the half
// spectrum of a real field: the coefficient of wavevector
// (kx, ky) = 2π (i/Lx, m(j)/Ly) is Data[j*(Nx/2+1)+i] for 0 ≤ i ≤ Nx/2 and
// 0 ≤ j < Ny, where m(j) = j for j ≤ Ny/2 and j − Ny otherwise. The
// coefficients with kx < 0 are the complex conjugates of those stored.
//
// # Normalisation (stated once, used everywhere)
//
// Coefficients are box-normalised:
//
//	c_k = (1/(Lx·Ly)) ∫ c(x) e^{−ik·x} d²x = (1/(Nx·Ny)) Σ_x c(x) e^{−ik·x},
//
// so [Plan.Forward] divides the unnormalised DFT by Nx·Ny and
// [Plan.Inverse] is the unnormalised inverse sum c(x) = Σ_k c_k e^{ik·x}.
// With this choice the box average of a product is ⟨f g⟩ = Σ_k f_k conj(g_k)
// over the full spectrum (see [Grid.Dot]), independent of the box size.
//
// # Nyquist modes
//
// First derivatives set the Nyquist column (i = Nx/2) of ∂x and the Nyquist
// row (j = Ny/2) of ∂y to zero, because a single real Nyquist mode has no
// well-defined odd derivative on the grid [practice; see Trefethen,
// Spectral Methods in MATLAB, SIAM 2000, ch. 3]. Even operators (∇², ∇⁻²)
// use k² with the Nyquist wavenumber N/2·2π/L.
//
// # Aliasing of arguments
//
// Every operator takes its destination first. Operators on spectral fields
// (Dx, Dy, Laplacian, InvLaplacian) allow dst and src to be the same slice.
// Transforms never alias: the real and spectral slices have different types.
// A length that does not match the grid is a programmer error and panics.
package spectral
