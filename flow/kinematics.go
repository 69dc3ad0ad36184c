package flow

import (
	"fmt"

	"github.com/memix-sim/memix/spectral"
)

// Velocity-gradient fields of a spectral velocity field (û_x, û_y), built
// from spectral.Grid.Dx and Dy (so they share the grid's Nyquist rule: the
// odd derivative of a Nyquist mode is zero):
//
//	vorticity  ω   = ∂x u_y − ∂y u_x
//	strain     E₁₁ = ∂x u_x,  E₁₂ = (∂y u_x + ∂x u_y)/2,  E₂₂ = ∂y u_y (= −E₁₁ when ∇·u = 0)
//
// None of them allocates. A length that does not match the grid panics.

// Gradients sets omega, e11 and e12 to the spectral coefficients of the
// vorticity ω and the strain-rate components E₁₁ and E₁₂ of the velocity
// (ux, uy), using no scratch. The three outputs must be distinct slices and
// must not alias ux or uy.
func Gradients(g *spectral.Grid, omega, e11, e12, ux, uy []complex128) {
	checkDistinct("Gradients", omega, e11, e12, ux, uy)
	n := g.SpecLen()
	if len(omega) != n || len(e11) != n || len(e12) != n || len(ux) != n || len(uy) != n {
		panic(fmt.Sprintf("flow: Gradients lengths %d, %d, %d, %d, %d, want %d", len(omega), len(e11), len(e12), len(ux), len(uy), n))
	}
	// One pass with i·k folded in (the same operations as Grid.Dx and Dy,
	// including their Nyquist rule: the odd derivative of a Nyquist mode
	// is zero), so the three fields cost one read of the velocity.
	kx, ky, nk := g.Kx(), g.Ky(), g.Nkx()
	for j := 0; j < g.Ny; j++ {
		qy := ky[j]
		if j == g.Ny/2 {
			qy = 0
		}
		row := j * nk
		for i := 0; i < nk; i++ {
			qx := kx[i]
			if i == nk-1 {
				qx = 0
			}
			a, b := ux[row+i], uy[row+i]
			// i q v = (−q·Im v, q·Re v)
			dxuy := complex(-qx*imag(b), qx*real(b))
			dyux := complex(-qy*imag(a), qy*real(a))
			omega[row+i] = dxuy - dyux
			e12[row+i] = (dxuy + dyux) * 0.5
			e11[row+i] = complex(-qx*imag(a), qx*real(a))
		}
	}
}

// StrainRate sets e11 = ∂x u_x and e12 = (∂y u_x + ∂x u_y)/2 from the
// velocity coefficients (ux, uy), using no scratch. e11 and e12 must be
// distinct and must not alias ux or uy.
func StrainRate(g *spectral.Grid, e11, e12, ux, uy []complex128) {
	checkDistinct("StrainRate", e11, e12, ux, uy)
	g.Dx(e11, uy) // ∂x u_y, held in e11 for a moment
	g.Dy(e12, ux) // ∂y u_x
	for idx, a := range e11 {
		e12[idx] = (a + e12[idx]) * 0.5
	}
	g.Dx(e11, ux)
}

// Vorticity sets dst = ∂x u_y − ∂y u_x from the velocity coefficients
// (ux, uy). work is a spectral scratch field whose contents are
// overwritten. dst and work must be distinct and must not alias ux or uy.
func Vorticity(g *spectral.Grid, dst, ux, uy, work []complex128) {
	checkDistinct("Vorticity", dst, work, ux, uy)
	g.Dx(dst, uy)
	g.Dy(work, ux)
	for idx, w := range work {
		dst[idx] -= w
	}
}

// checkDistinct panics if two of the slices share their first element (the
// aliasing the kernels above forbid). Empty slices are left to the grid's
// length check.
func checkDistinct(name string, s ...[]complex128) {
	for i := range s {
		for j := i + 1; j < len(s); j++ {
			if len(s[i]) > 0 && len(s[j]) > 0 && &s[i][0] == &s[j][0] {
				panic(fmt.Sprintf("flow: %s arguments %d and %d are the same slice", name, i, j))
			}
		}
	}
}
