package spectral_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"github.com/memix-sim/memix/spectral"
	dspfft "github.com/mjibson/go-dsp/fft"
)

const eps = 0x1p-52 // float64 machine epsilon

// fftTol is the pointwise tolerance, relative to the field's largest
// magnitude, of a transform of n points against an exact answer. The rms
// round-off of an FFT grows like ε·log₂ n [Schatzman, SIAM J. Sci. Comput.
// 17, 1150 (1996)]. The largest round-trip error observed on the grids of
// these tests (16² to 256², both backends) was 0.58·ε·log₂ n; the factor 2
// leaves a margin of 3.4 on that.
func fftTol(n int) float64 { return 2 * eps * math.Log2(float64(n)) }

func mustGrid(t testing.TB, nx, ny int, lx, ly float64) *spectral.Grid {
	t.Helper()
	g, err := spectral.NewGrid(nx, ny, lx, ly)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// eachPlan calls f with a plan of every compiled backend and 1 and 2 threads.
func eachPlan(t *testing.T, g *spectral.Grid, f func(t *testing.T, p spectral.Plan)) {
	for _, b := range spectral.Backends() {
		for _, th := range []int{1, 2} {
			t.Run(fmt.Sprintf("%s/threads=%d", b, th), func(t *testing.T) {
				p, err := spectral.NewPlan(g, spectral.Options{Backend: b, Threads: th})
				if err != nil {
					t.Fatal(err)
				}
				defer p.Close()
				f(t, p)
			})
		}
	}
}

func randomField(g *spectral.Grid, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 1))
	f := g.NewReal()
	for i := range f {
		f[i] = 2*r.Float64() - 1
	}
	return f
}

func maxAbs(f []float64) float64 {
	var m float64
	for _, v := range f {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

// naiveDFT is the box-normalised DFT of the package convention evaluated
// as the direct O(N²) sum, with twiddles from an exact integer phase.
func naiveDFT(g *spectral.Grid, f []float64) []complex128 {
	out := g.NewSpectral()
	nk := g.Nkx()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < nk; i++ {
			var s complex128
			for y := 0; y < g.Ny; y++ {
				for x := 0; x < g.Nx; x++ {
					// phase = 2π (i x/Nx + j y/Ny), reduced modulo the period exactly.
					num := (i*x*g.Ny + j*y*g.Nx) % (g.Nx * g.Ny)
					ph := -2 * math.Pi * float64(num) / float64(g.Nx*g.Ny)
					s += complex(f[y*g.Nx+x], 0) * cmplx.Exp(complex(0, ph))
				}
			}
			out[j*nk+i] = s / complex(float64(g.RealLen()), 0)
		}
	}
	return out
}

func TestNewGridRejectsBadSizes(t *testing.T) {
	for _, c := range []struct {
		nx, ny int
		lx, ly float64
		want   string
	}{
		{7, 8, 1, 1, "nx = 7"},
		{8, 2, 1, 1, "ny = 2"},
		{8, 8, 0, 1, "lx = 0"},
		{8, 8, 1, math.Inf(1), "ly = +Inf"},
		{8, 8, math.NaN(), 1, "lx = NaN"},
	} {
		_, err := spectral.NewGrid(c.nx, c.ny, c.lx, c.ly)
		if err == nil || !contains(err.Error(), c.want) {
			t.Errorf("NewGrid(%d, %d, %g, %g) error = %v, want one naming %q", c.nx, c.ny, c.lx, c.ly, err, c.want)
		}
	}
}

func contains(s, sub string) bool {
	for i := 0; i+len(sub) <= len(s); i++ {
		if s[i:i+len(sub)] == sub {
			return true
		}
	}
	return false
}

// TestForwardMatchesNaiveDFT checks every backend against the defining sum
// on small, rectangular grids. The naive sum itself carries round-off of
// of order ε per normalised coefficient (observed at most 0.3·ε·max|f| on
// these grids); fftTol covers both sides with a margin of 25 or more.
func TestForwardMatchesNaiveDFT(t *testing.T) {
	for _, sz := range [][2]int{{4, 4}, {8, 6}, {6, 10}, {12, 8}} {
		g := mustGrid(t, sz[0], sz[1], 2.5, 1.3)
		f := randomField(g, uint64(sz[0]*100+sz[1]))
		want := naiveDFT(g, f)
		tol := fftTol(g.RealLen()) * maxAbs(f)
		eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
			got := g.NewSpectral()
			p.Forward(got, f)
			for idx := range got {
				if d := cmplx.Abs(got[idx] - want[idx]); d > tol {
					t.Fatalf("%v: coefficient %d = %v, naive DFT %v (|diff| %.2g > %.2g)", g, idx, got[idx], want[idx], d, tol)
				}
			}
		})
	}
}

// TestForwardMatchesGoDSP checks every backend against the independent FFT
// of github.com/mjibson/go-dsp (full complex spectrum, unnormalised).
func TestForwardMatchesGoDSP(t *testing.T) {
	for _, sz := range [][2]int{{64, 48}, {128, 128}, {96, 160}} {
		g := mustGrid(t, sz[0], sz[1], 1, 3)
		f := randomField(g, 7)
		rows := make([][]float64, g.Ny)
		for j := range rows {
			rows[j] = f[j*g.Nx : (j+1)*g.Nx]
		}
		ref := dspfft.FFT2Real(rows)
		n := float64(g.RealLen())
		// The coefficients of a random field are of size max|f|/√n, with
		// relative rms round-off ε·log₂ n on each side. go-dsp uses radix 2
		// for powers of two (observed error 0.5·ε·log₂n·max|f|/√n at 128²)
		// and Bluestein's algorithm otherwise, whose error is larger
		// (observed 25·ε·log₂n·max|f|/√n at 96×160); 64 covers both with a
		// margin of 2.5.
		tol := 64 * eps * math.Log2(n) * maxAbs(f) / math.Sqrt(n)
		eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
			got := g.NewSpectral()
			p.Forward(got, f)
			var worst float64
			for j := 0; j < g.Ny; j++ {
				for i := 0; i < g.Nkx(); i++ {
					d := cmplx.Abs(got[j*g.Nkx()+i] - ref[j][i]/complex(n, 0))
					worst = math.Max(worst, d)
				}
			}
			if worst > tol {
				t.Fatalf("%v: largest difference from go-dsp %.3g > %.3g", g, worst, tol)
			}
		})
	}
}

// TestRoundTrip covers square and rectangular grids, row counts that are and
// are not multiples of the FFTW backend's row block, and InverseOverwrite.
func TestRoundTrip(t *testing.T) {
	for _, sz := range [][2]int{{16, 16}, {64, 32}, {40, 36}, {6, 50}, {256, 256}} {
		g := mustGrid(t, sz[0], sz[1], 1, 1)
		f := randomField(g, 3)
		tol := fftTol(g.RealLen()) * maxAbs(f)
		eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
			s := g.NewSpectral()
			back := g.NewReal()
			orig := append([]float64(nil), f...)
			p.Forward(s, f)
			sCopy := append([]complex128(nil), s...)
			p.Inverse(back, s)
			for i := range f {
				if f[i] != orig[i] {
					t.Fatal("Forward modified its source")
				}
				if d := math.Abs(back[i] - f[i]); d > tol {
					t.Fatalf("%v: point %d: round trip %v, want %v (|diff| %.2g > %.2g)", g, i, back[i], f[i], d, tol)
				}
			}
			for i := range s {
				if s[i] != sCopy[i] {
					t.Fatal("Inverse modified its source")
				}
			}
			p.InverseOverwrite(back, s)
			for i := range f {
				if d := math.Abs(back[i] - f[i]); d > tol {
					t.Fatalf("%v: point %d: InverseOverwrite round trip %v, want %v", g, i, back[i], f[i])
				}
			}
		})
	}
}

// TestBackendsAgreeOnNonHermitianInput documents that only the Hermitian
// part of the input of Inverse matters, identically for every backend.
func TestBackendsAgreeOnNonHermitianInput(t *testing.T) {
	g := mustGrid(t, 16, 12, 1, 1)
	r := rand.New(rand.NewPCG(5, 5))
	s := g.NewSpectral()
	for i := range s {
		s[i] = complex(r.NormFloat64(), r.NormFloat64())
	}
	var ref []float64
	for _, b := range spectral.Backends() {
		p, err := spectral.NewPlan(g, spectral.Options{Backend: b})
		if err != nil {
			t.Fatal(err)
		}
		out := g.NewReal()
		p.Inverse(out, s)
		p.Close()
		if ref == nil {
			ref = out
			continue
		}
		tol := fftTol(g.RealLen()) * maxAbs(ref)
		for i := range out {
			if math.Abs(out[i]-ref[i]) > tol {
				t.Fatalf("backend %s differs at %d: %v vs %v", b, i, out[i], ref[i])
			}
		}
	}
}

func TestTransformsAllocateNothing(t *testing.T) {
	g := mustGrid(t, 64, 64, 1, 1)
	f := randomField(g, 1)
	s := g.NewSpectral()
	eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
		if a := testing.AllocsPerRun(20, func() { p.Forward(s, f) }); a != 0 {
			t.Errorf("Forward allocates %v times per call", a)
		}
		if a := testing.AllocsPerRun(20, func() { p.Inverse(f, s) }); a != 0 {
			t.Errorf("Inverse allocates %v times per call", a)
		}
		if a := testing.AllocsPerRun(20, func() { p.InverseOverwrite(f, s) }); a != 0 {
			t.Errorf("InverseOverwrite allocates %v times per call", a)
		}
	})
}

// TestUnalignedSlices exercises the FFTW path that copies through the
// plan's aligned buffers when the caller's slices are not SIMD-aligned.
func TestUnalignedSlices(t *testing.T) {
	g := mustGrid(t, 8, 8, 1, 1)
	f := randomField(g, 9)
	want := naiveDFT(g, f)
	fOff := make([]float64, g.RealLen()+1)[1:]
	copy(fOff, f)
	sOff := make([]complex128, g.SpecLen()+1)[1:]
	tol := fftTol(g.RealLen()) * maxAbs(f)
	eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
		p.Forward(sOff, fOff)
		for i := range want {
			if cmplx.Abs(sOff[i]-want[i]) > tol {
				t.Fatalf("coefficient %d = %v, want %v", i, sOff[i], want[i])
			}
		}
		back := make([]float64, g.RealLen()+1)[1:]
		p.Inverse(back, sOff)
		for i := range f {
			if math.Abs(back[i]-f[i]) > tol {
				t.Fatalf("point %d = %v, want %v", i, back[i], f[i])
			}
		}
		p.InverseOverwrite(back, sOff)
		for i := range f {
			if math.Abs(back[i]-f[i]) > tol {
				t.Fatalf("InverseOverwrite: point %d = %v, want %v", i, back[i], f[i])
			}
		}
	})
}

func TestPlanErrors(t *testing.T) {
	g := mustGrid(t, 8, 8, 1, 1)
	if _, err := spectral.NewPlan(g, spectral.Options{Backend: "fftpack"}); err == nil {
		t.Error("unknown backend accepted")
	}
	p, err := spectral.NewPlan(g, spectral.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if p.Backend() != string(spectral.DefaultBackend()) {
		t.Errorf("default plan backend %s, want %s", p.Backend(), spectral.DefaultBackend())
	}
	p.Close()
	p.Close()
	defer func() {
		if recover() == nil {
			t.Error("use after Close did not panic")
		}
	}()
	p.Forward(g.NewSpectral(), g.NewReal())
}

func TestLengthMismatchPanics(t *testing.T) {
	g := mustGrid(t, 8, 8, 1, 1)
	eachPlan(t, g, func(t *testing.T, p spectral.Plan) {
		defer func() {
			if recover() == nil {
				t.Error("short destination did not panic")
			}
		}()
		p.Forward(make([]complex128, 3), g.NewReal())
	})
}
