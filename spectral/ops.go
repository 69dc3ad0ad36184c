package spectral

// Dx sets dst to the spectral coefficients of ∂x of the field whose
// coefficients are src: dst_k = i kx src_k, with the Nyquist column zeroed.
// dst and src may be the same slice.
func (g *Grid) Dx(dst, src []complex128) {
	g.checkSpec(dst, "Dx dst")
	g.checkSpec(src, "Dx src")
	ny := g.Nx / 2
	for j := 0; j < g.Ny; j++ {
		row := j * g.nkx
		for i := 0; i < g.nkx; i++ {
			if i == ny {
				dst[row+i] = 0
				continue
			}
			v := src[row+i]
			k := g.kx[i]
			dst[row+i] = complex(-k*imag(v), k*real(v))
		}
	}
}

// Dy sets dst to the spectral coefficients of ∂y of src: dst_k = i ky src_k,
// with the Nyquist row zeroed. dst and src may be the same slice.
func (g *Grid) Dy(dst, src []complex128) {
	g.checkSpec(dst, "Dy dst")
	g.checkSpec(src, "Dy src")
	for j := 0; j < g.Ny; j++ {
		row := j * g.nkx
		k := g.ky[j]
		if j == g.Ny/2 {
			k = 0
		}
		for i := 0; i < g.nkx; i++ {
			v := src[row+i]
			dst[row+i] = complex(-k*imag(v), k*real(v))
		}
	}
}

// Laplacian sets dst to the coefficients of ∇² src: dst_k = −k² src_k.
// dst and src may be the same slice.
func (g *Grid) Laplacian(dst, src []complex128) {
	g.checkSpec(dst, "Laplacian dst")
	g.checkSpec(src, "Laplacian src")
	for idx, v := range src {
		dst[idx] = complex(-g.k2[idx], 0) * v
	}
}

// InvLaplacian sets dst to the mean-free solution of ∇² dst = src − ⟨src⟩:
// dst_k = −src_k/k² for k ≠ 0 and dst_0 = 0 (the box mean is not
// invertible and is dropped). dst and src may be the same slice.
func (g *Grid) InvLaplacian(dst, src []complex128) {
	g.checkSpec(dst, "InvLaplacian dst")
	g.checkSpec(src, "InvLaplacian src")
	dst[0] = 0
	for idx := 1; idx < len(src); idx++ {
		dst[idx] = src[idx] * complex(-1/g.k2[idx], 0)
	}
}

// Dealias zeroes, in place, every mode of s that the 2/3 rule removes
// (|nx| > (Nx−1)/3 or |ny| > (Ny−1)/3).
func (g *Grid) Dealias(s []complex128) {
	g.checkSpec(s, "Dealias field")
	for idx, k := range g.keep {
		if !k {
			s[idx] = 0
		}
	}
}

// Dot returns the box average ⟨f g⟩ of two real fields from their
// box-normalised coefficients a and b, summing a_k conj(b_k) over the full
// spectrum (Parseval's identity in this package's normalisation).
func (g *Grid) Dot(a, b []complex128) float64 {
	g.checkSpec(a, "Dot a")
	g.checkSpec(b, "Dot b")
	var s float64
	for j := 0; j < g.Ny; j++ {
		row := j * g.nkx
		for i := 0; i < g.nkx; i++ {
			x, y := a[row+i], b[row+i]
			s += g.weight[i] * (real(x)*real(y) + imag(x)*imag(y))
		}
	}
	return s
}

// MeanSquare returns the box average ⟨f²⟩ of the real field whose
// coefficients are s.
func (g *Grid) MeanSquare(s []complex128) float64 { return g.Dot(s, s) }
