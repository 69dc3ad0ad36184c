package spectral_test

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"github.com/memix-sim/memix/spectral"
)

// trigField samples f = Σ a cos(kx x + ky y + φ) on g and also returns its
// exact ∂x, ∂y and ∇² (the derivatives of a trigonometric polynomial).
type mode struct {
	nx, ny int
	a, ph  float64
}

func trigField(g *spectral.Grid, modes []mode) (f, fx, fy, lap []float64) {
	f, fx, fy, lap = g.NewReal(), g.NewReal(), g.NewReal(), g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			x, y := g.X(i), g.Y(j)
			for _, m := range modes {
				kx := 2 * math.Pi * float64(m.nx) / g.Lx
				ky := 2 * math.Pi * float64(m.ny) / g.Ly
				arg := kx*x + ky*y + m.ph
				c, s := math.Cos(arg), math.Sin(arg)
				idx := j*g.Nx + i
				f[idx] += m.a * c
				fx[idx] -= m.a * kx * s
				fy[idx] -= m.a * ky * s
				lap[idx] -= m.a * (kx*kx + ky*ky) * c
			}
		}
	}
	return
}

// TestDerivativesOfTrigPolynomials: spectral differentiation is exact for a
// trigonometric polynomial the grid resolves, so the only error is round-off:
// the transform's (fftTol, relative to Σ|a|) amplified by the largest
// derivative factor k_max^p, once for each of the two transforms, times a
// margin of 2.
func TestDerivativesOfTrigPolynomials(t *testing.T) {
	g := mustGrid(t, 32, 24, 2.0, 1.5)
	modes := []mode{{0, 0, 0.7, 0}, {1, 0, 1, 0.3}, {3, -2, 0.5, 1.1}, {-5, 7, 0.25, -0.4}, {15, 11, 0.1, 2.0}}
	f, fx, fy, lap := trigField(g, modes)
	eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
		s, d := g.NewSpectral(), g.NewSpectral()
		out := g.NewReal()
		p.Forward(s, f)
		kmax := 2 * math.Pi * 15 / 1.5
		amp := 2.575 // Σ|a|
		check := func(name string, op func(dst, src []complex128), want []float64, power float64) {
			op(d, s)
			p.Inverse(out, d)
			tol := fftTol(g.RealLen()) * amp * math.Pow(kmax, power) * 4
			for i := range out {
				if diff := math.Abs(out[i] - want[i]); diff > tol {
					t.Fatalf("%s at point %d: %v, exact %v (|diff| %.2g > %.2g)", name, i, out[i], want[i], diff, tol)
				}
			}
		}
		check("Dx", g.Dx, fx, 1)
		check("Dy", g.Dy, fy, 1)
		check("Laplacian", g.Laplacian, lap, 2)
		// In place gives the same as out of place.
		copy(d, s)
		g.Dx(d, d)
		p.Inverse(out, d)
		for i := range out {
			if math.Abs(out[i]-fx[i]) > fftTol(g.RealLen())*amp*kmax*4 {
				t.Fatal("in-place Dx differs")
			}
		}
	})
}

// TestNyquistDerivativeIsZero: the odd derivative of the lone Nyquist mode
// cos(π x/h) vanishes on the grid (the package's stated rule).
func TestNyquistDerivativeIsZero(t *testing.T) {
	g := mustGrid(t, 8, 8, 1, 1)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	f, _, _, _ := trigField(g, []mode{{4, 0, 1, 0}, {0, 4, 1, 0}})
	s := g.NewSpectral()
	p.Forward(s, f)
	dx, dy := g.NewSpectral(), g.NewSpectral()
	g.Dx(dx, s)
	g.Dy(dy, s)
	for i := range dx {
		if dx[i] != 0 || dy[i] != 0 {
			t.Fatalf("Nyquist derivative nonzero at %d: %v %v", i, dx[i], dy[i])
		}
	}
}

func TestInvLaplacian(t *testing.T) {
	g := mustGrid(t, 16, 32, 1, 3)
	f := randomField(g, 11)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	s, u := g.NewSpectral(), g.NewSpectral()
	p.Forward(s, f)
	g.InvLaplacian(u, s)
	if u[0] != 0 {
		t.Fatalf("mean of inverse Laplacian = %v, want 0", u[0])
	}
	g.Laplacian(u, u)
	s[0] = 0 // the mean is dropped by the stated rule
	for i := range s {
		if cmplx.Abs(u[i]-s[i]) > 8*eps*cmplx.Abs(s[i]) {
			t.Fatalf("∇²∇⁻² differs at %d: %v vs %v", i, u[i], s[i])
		}
	}
}

// TestDotIsBoxAverage checks Parseval's identity in the package's
// normalisation: Σ_k f_k conj(g_k) over the full spectrum equals the grid
// average of f·g.
func TestDotIsBoxAverage(t *testing.T) {
	g := mustGrid(t, 24, 16, 2, 5)
	a, b := randomField(g, 1), randomField(g, 2)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	sa, sb := g.NewSpectral(), g.NewSpectral()
	p.Forward(sa, a)
	p.Forward(sb, b)
	var want, want2 float64
	for i := range a {
		want += a[i] * b[i]
		want2 += a[i] * a[i]
	}
	want /= float64(len(a))
	want2 /= float64(len(a))
	if got := g.Dot(sa, sb); math.Abs(got-want) > fftTol(g.RealLen()) {
		t.Errorf("Dot = %v, grid average %v", got, want)
	}
	if got := g.MeanSquare(sa); math.Abs(got-want2) > fftTol(g.RealLen()) {
		t.Errorf("MeanSquare = %v, grid average %v", got, want2)
	}
}

// TestDealiasRemovesQuadraticAliasing: for two fields band-limited to the
// modes the 2/3 rule keeps, the kept modes of their pointwise product on the
// grid equal the exact convolution of their coefficients [Orszag, J. Atmos.
// Sci. 28, 1074 (1971)]. Without dealiasing the same check fails, which
// shows the test can fail.
func TestDealiasRemovesQuadraticAliasing(t *testing.T) {
	g := mustGrid(t, 24, 18, 1, 1)
	p, _ := spectral.NewPlan(g, spectral.Options{})
	defer p.Close()
	kxm, kym := g.DealiasLimits()
	if kxm != 7 || kym != 5 {
		t.Fatalf("2/3 limits (%d, %d), want (7, 5) for 24×18", kxm, kym)
	}
	r := rand.New(rand.NewPCG(4, 4))
	randomBand := func(full bool) []float64 {
		s := g.NewSpectral()
		for idx := range s {
			if full || g.Kept(idx) {
				s[idx] = complex(r.NormFloat64(), r.NormFloat64())
			}
		}
		f := g.NewReal()
		p.Inverse(f, s)
		return f
	}
	for _, full := range []bool{false, true} {
		a, b := randomBand(full), randomBand(full)
		sa, sb := g.NewSpectral(), g.NewSpectral()
		p.Forward(sa, a)
		p.Forward(sb, b)
		prod := g.NewReal()
		for i := range prod {
			prod[i] = a[i] * b[i]
		}
		sp := g.NewSpectral()
		p.Forward(sp, prod)
		// Exact convolution over the full (±) spectrum, evaluated on kept modes.
		coef := func(s []complex128, nx, ny int) complex128 {
			if nx < 0 {
				nx, ny = -nx, -ny
				return cmplx.Conj(coefAt(g, s, nx, ny))
			}
			return coefAt(g, s, nx, ny)
		}
		var worst float64
		for j := 0; j < g.Ny; j++ {
			my := g.ModeY(j)
			for i := 0; i <= kxm; i++ {
				if my > kym || my < -kym {
					continue
				}
				var want complex128
				for px := -g.Nx/2 + 1; px < g.Nx/2; px++ {
					for py := -g.Ny/2 + 1; py < g.Ny/2; py++ {
						qx, qy := i-px, my-py
						if qx <= -g.Nx/2 || qx >= g.Nx/2 || qy <= -g.Ny/2 || qy >= g.Ny/2 {
							continue
						}
						want += coef(sa, px, py) * coef(sb, qx, qy)
					}
				}
				worst = math.Max(worst, cmplx.Abs(sp[j*g.Nkx()+i]-want))
			}
		}
		// Coefficients are O(1) and a kept mode sums O(n) products.
		tol := 4 * eps * float64(g.RealLen())
		if !full && worst > tol {
			t.Errorf("band-limited product aliased: largest error %.3g > %.3g", worst, tol)
		}
		if full && worst < 1e-3 {
			t.Errorf("full-band product shows no aliasing (%.3g): the check cannot fail", worst)
		}
	}
}

// coefAt returns the coefficient of mode (nx ≥ 0, ny) from the half
// spectrum, or 0 for the Nyquist modes that the sums above exclude.
func coefAt(g *spectral.Grid, s []complex128, nx, ny int) complex128 {
	if nx >= g.Nx/2 || ny <= -g.Ny/2 || ny >= g.Ny/2 {
		return 0
	}
	return s[g.RowOfModeY(ny)*g.Nkx()+nx]
}

func TestDealiasZeroesOnlyHighModes(t *testing.T) {
	g := mustGrid(t, 12, 12, 1, 1)
	s := g.NewSpectral()
	for i := range s {
		s[i] = 1
	}
	g.Dealias(s)
	kxm, kym := g.DealiasLimits()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nkx(); i++ {
			my := g.ModeY(j)
			keep := i <= kxm && my <= kym && my >= -kym
			if (s[j*g.Nkx()+i] != 0) != keep {
				t.Fatalf("mode (%d, %d): kept=%v, want %v", i, my, s[j*g.Nkx()+i] != 0, keep)
			}
		}
	}
}
