package mixing_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/memix-sim/memix/mixing"
	"github.com/memix-sim/memix/spectral"
)

const eps = 0x1p-52 // float64 machine epsilon

func mustGrid(t testing.TB, nx, ny int, lx, ly float64) *spectral.Grid {
	t.Helper()
	g, err := spectral.NewGrid(nx, ny, lx, ly)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// spectrum returns the box-normalised half spectrum of f(x, y) sampled on g.
func spectrum(t testing.TB, g *spectral.Grid, f func(x, y float64) float64) []complex128 {
	t.Helper()
	p, err := spectral.NewPlan(g, spectral.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	r := g.NewReal()
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			r[j*g.Nx+i] = f(g.X(i), g.Y(j))
		}
	}
	s := g.NewSpectral()
	p.Forward(s, r)
	return s
}

// fftRel is the relative tolerance of a norm computed from the FFT of a
// field with a few modes: coefficients carry a round-off of order
// ε·log₂N·max|f| (spectral package tests, Schatzman 1996), and the norm of
// a single mode is of order max|f|. The largest error observed on the grids
// below was 0.17·ε·log₂N (3.6×10⁻¹⁶); the factor 2 leaves a margin of 12.
func fftRel(g *spectral.Grid) float64 { return 2 * eps * math.Log2(float64(g.RealLen())) }

// weights returns the weight w(k) of each norm at wavenumber k (package
// documentation, MODEL.md §4).
func weights(k, l float64) mixing.Values {
	return mixing.Values{1, 1 / (k * k), 1 / k, 1 / math.Sqrt(1+k*k*l*l)}
}

type mode struct {
	a      float64 // amplitude
	nx, ny int     // integer wavevector
	phase  float64
}

func (m mode) k(g *spectral.Grid) (kx, ky float64) {
	return 2 * math.Pi * float64(m.nx) / g.Lx, 2 * math.Pi * float64(m.ny) / g.Ly
}

// TestNormsOfModes checks every norm of single modes and sums of modes with
// distinct wavevectors against the closed form: a mode A cos(k·x + c) has
// ⟨φ²⟩ = A²/2 and each norm is (A/√2)·√w(k) (MODEL.md §4: variance norm
// A/√2, H⁻¹ norm A/(√2 k) with the weight of Lin, Thiffeault & Doering,
// J. Fluid Mech. 675, 465 (2011), H^{−1/2} norm A/(√2√k) with that of
// Thiffeault, Nonlinearity 25, R1 (2012); the values follow from
// Parseval's identity [derived]); modes with distinct
// |k|-vectors are orthogonal, so squared norms add. A constant offset must
// not change anything (the norms see the mean-free part). Square and
// rectangular boxes, modes along x, y, oblique, and at the dealiasing edge.
func TestNormsOfModes(t *testing.T) {
	const mixL = 0.37
	for _, c := range []struct {
		nx, ny int
		lx, ly float64
		modes  []mode
	}{
		{32, 32, 2 * math.Pi, 2 * math.Pi, []mode{{1.5, 3, 0, 0}}},
		{32, 32, 2 * math.Pi, 2 * math.Pi, []mode{{0.7, 0, 5, 0.3}}},
		{64, 48, 3, 1.7, []mode{{2, 2, 0, 0}}},
		{64, 48, 3, 1.7, []mode{{1, 0, 3, 0}}},
		{64, 48, 3, 1.7, []mode{{0.4, 7, -5, 1.1}}},
		{64, 48, 3, 1.7, []mode{{1, 1, 0, 0}, {0.5, 4, 2, 0.2}, {0.25, 20, -15, 2.5}}},
		{40, 64, 0.8, 5, []mode{{3, 13, 21, 0}, {1, 2, -1, 0.7}}},
	} {
		g := mustGrid(t, c.nx, c.ny, c.lx, c.ly)
		m, err := mixing.NewMeter(g, mixL)
		if err != nil {
			t.Fatal(err)
		}
		s := spectrum(t, g, func(x, y float64) float64 {
			f := 0.9 // mean, must be ignored
			for _, md := range c.modes {
				kx, ky := md.k(g)
				f += md.a * math.Cos(kx*x+ky*y+md.phase)
			}
			return f
		})
		var want mixing.Values
		for _, md := range c.modes {
			kx, ky := md.k(g)
			w := weights(math.Hypot(kx, ky), mixL)
			for n := range want {
				want[n] += md.a * md.a / 2 * w[n]
			}
		}
		got := m.Measure(s)
		for n := range want {
			want[n] = math.Sqrt(want[n])
			rel := math.Abs(got[n]-want[n]) / want[n]
			if rel > fftRel(g) {
				t.Errorf("%v %v: %v norm %.16g, closed form %.16g (rel %.2g > %.2g)", g, c.modes, mixing.Norm(n), got[n], want[n], rel, fftRel(g))
			}
			if one := m.Norm(mixing.Norm(n), s); one != got[n] {
				t.Errorf("%v: Norm(%v) = %.17g differs from Measure %.17g", g, mixing.Norm(n), one, got[n])
			}
		}
	}
}

// TestNyquistModeMultiplicity checks the weight of the self-conjugate
// Nyquist column: A(−1)^i = A cos(π i) is a single real mode of the full
// spectrum with coefficient A (not A/2 at ±k), so ⟨φ²⟩ = A², and the
// variance norm is A, not A/√2 [common practice: discrete Fourier series].
func TestNyquistModeMultiplicity(t *testing.T) {
	g := mustGrid(t, 16, 12, 2, 3)
	m, err := mixing.NewMeter(g, 1)
	if err != nil {
		t.Fatal(err)
	}
	const a = 1.25
	s := spectrum(t, g, func(x, y float64) float64 { return a * math.Cos(math.Pi*x*float64(g.Nx)/g.Lx) })
	k := math.Pi * float64(g.Nx) / g.Lx
	got := m.Measure(s)
	for n, w := range weights(k, 1) {
		want := a * math.Sqrt(w)
		if rel := math.Abs(got[n]-want) / want; rel > fftRel(g) {
			t.Errorf("Nyquist mode: %v norm %.16g, want %.16g (rel %.2g)", mixing.Norm(n), got[n], want, rel)
		}
	}
}

// TestDiffusionDecayRates: under pure diffusion ∂tφ = D∇²φ a mode decays as
// e^{−Dk²t} exactly, so every norm of a single mode decays at the rate Dk²
// (MODEL.md §4) and the exponential fit must recover it. The field at each
// time is built in real space from the exact solution and transformed, so
// the norms carry FFT round-off. The fitted rate's error is the round-off of
// ln v (≈ fftRel) divided by the time span times the rate, i.e. relative
// error ≲ fftRel/(Dk²·T) = fftRel/8 here; the test allows fftRel.
func TestDiffusionDecayRates(t *testing.T) {
	g := mustGrid(t, 32, 24, 2, 1.5)
	m, err := mixing.NewMeter(g, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	const diff = 0.013
	md := mode{0.8, 3, -2, 0.4}
	kx, ky := md.k(g)
	rate := diff * (kx*kx + ky*ky)
	const n = 41
	T := 8 / rate // eight e-folds
	ts := make([]float64, n)
	series := make([][]float64, mixing.NumNorms)
	for i := range series {
		series[i] = make([]float64, n)
	}
	for i := range ts {
		ts[i] = T * float64(i) / (n - 1)
		amp := md.a * math.Exp(-rate*ts[i])
		s := spectrum(t, g, func(x, y float64) float64 { return amp * math.Cos(kx*x+ky*y+md.phase) })
		v := m.Measure(s)
		for k := range series {
			series[k][i] = v[k]
		}
	}
	for k, v := range series {
		for _, w := range []mixing.Window{{}, {Start: 0.2 * T, End: 0.7 * T}} {
			fit, err := mixing.FitExp(ts, v, w)
			if err != nil {
				t.Fatal(err)
			}
			if rel := math.Abs(fit.Rate-rate) / rate; rel > fftRel(g) {
				t.Errorf("%v norm, window %+v: fitted rate %.16g, Dk² = %.16g (rel %.2g)", mixing.Norm(k), w, fit.Rate, rate, rel)
			}
			wantA := md.a / math.Sqrt2 * math.Sqrt(weights(math.Sqrt(kx*kx+ky*ky), 0.5)[k])
			if rel := math.Abs(fit.Amplitude-wantA) / wantA; rel > 4*fftRel(g) {
				t.Errorf("%v norm: fitted amplitude %.16g, want %.16g (rel %.2g)", mixing.Norm(k), fit.Amplitude, wantA, rel)
			}
			if w == (mixing.Window{}) != fit.Auto {
				t.Errorf("Auto = %v for window %+v", fit.Auto, w)
			}
		}
		r := make([]float64, n)
		if err := mixing.Ratios(r, v); err != nil {
			t.Fatal(err)
		}
		for i := range r {
			if want := math.Exp(-rate * ts[i]); math.Abs(r[i]-want) > 2*fftRel(g)*want {
				t.Fatalf("%v norm ratio at t = %g: %g, want e^{−Dk²t} = %g", mixing.Norm(k), ts[i], r[i], want)
			}
		}
	}
}

// TestAutoWindowSkipsTransient: a sum of a slow and a fast exponential,
// v = e^{−λt} + r e^{−μt}, tends to the slow rate λ. On a tail starting
// at t₀ the local log-slope differs from −λ by about (μ−λ) r e^{−(μ−λ)t₀},
// so a fit over the tail that starts at half the span (t₀ = T/2) is within
// (μ−λ) r e^{−(μ−λ)T/2} of λ. The automatic rule must pick a tail (not
// the whole series, where the error is r(μ−λ)-sized) and meet that bound.
func TestAutoWindowSkipsTransient(t *testing.T) {
	const lam, mu, r, T, n = 1.0, 6.0, 2.0, 6.0, 121
	ts := make([]float64, n)
	v := make([]float64, n)
	for i := range ts {
		ts[i] = T * float64(i) / (n - 1)
		v[i] = math.Exp(-lam*ts[i]) + r*math.Exp(-mu*ts[i])
	}
	fit, err := mixing.FitExp(ts, v, mixing.Window{})
	if err != nil {
		t.Fatal(err)
	}
	bound := (mu - lam) * r * math.Exp(-(mu-lam)*T/2)
	if d := math.Abs(fit.Rate - lam); d > bound {
		t.Errorf("auto window %+v: rate %.10g, asymptotic λ = %g (|diff| %.2g > %.2g)", fit.FitWindow, fit.Rate, lam, d, bound)
	}
	if fit.Start < T/2-1e-12 {
		t.Errorf("auto window starts at %g, the latest candidate is T/2 = %g and fits best here", fit.Start, T/2)
	}
	whole, err := mixing.FitExp(ts, v, mixing.Window{Start: 0, End: T})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(whole.Rate-lam) < 100*bound {
		t.Errorf("the whole-series fit (rate %g) should be visibly biased; the test would not discriminate", whole.Rate)
	}
}

// TestAutoWindowStopsAtFloor: a decay that hits a round-off floor (here a
// constant 1e-14 added to e^{−t}) must be cut where it first falls below
// Floor times its peak, before the floor bends ln v.
func TestAutoWindowStopsAtFloor(t *testing.T) {
	const n = 81
	ts := make([]float64, n)
	v := make([]float64, n)
	for i := range ts {
		ts[i] = 40 * float64(i) / (n - 1)
		v[i] = math.Exp(-ts[i]) + 1e-14
	}
	fit, err := mixing.FitExp(ts, v, mixing.Window{})
	if err != nil {
		t.Fatal(err)
	}
	cut := -math.Log(mixing.Floor) // e^{−t} = Floor
	if fit.End > cut {
		t.Errorf("auto window ends at t = %g, past the floor crossing %g", fit.End, cut)
	}
	// Within the window the floor perturbs ln v by at most 1e-14/Floor =
	// 1e-4 at the last point, which tilts the slope by less than that over
	// a span of ≥ cut/2.
	if d := math.Abs(fit.Rate - 1); d > 1e-4 {
		t.Errorf("rate %.10g, want 1 within 1e-4", fit.Rate)
	}
}

// TestPowerFit recovers exponent and prefactor from exact power-law data
// v = C t^α. The first sample is at t = 0 and must be skipped. Each ln v
// carries one rounding (≈ ε relative), so over two decades of ln t the
// exponent is exact to a few ε: observed at most 2ε (exponent) and 5.2ε
// (prefactor, through exp of the intercept); 16ε and 32ε allowed.
func TestPowerFit(t *testing.T) {
	for _, alpha := range []float64{-1.5, 1.0 / 3, 0.5} {
		const c, n = 2.7, 60
		ts := make([]float64, n)
		v := make([]float64, n)
		for i := range ts {
			ts[i] = 0.05 * float64(i*i)
			v[i] = c * math.Pow(ts[i], alpha)
		}
		if alpha < 0 {
			v[0] = math.Inf(1)
		}
		for _, w := range []mixing.Window{{}, {Start: 1, End: 100}} {
			fit, err := mixing.FitPower(ts, v, w)
			if err != nil {
				t.Fatal(err)
			}
			if d := math.Abs(fit.Exponent - alpha); d > 16*eps {
				t.Errorf("α = %g, window %+v: fitted %.17g (|diff| %.2g)", alpha, w, fit.Exponent, d)
			}
			if d := math.Abs(fit.Prefactor-c) / c; d > 32*eps {
				t.Errorf("α = %g: prefactor %.17g, want %g", alpha, fit.Prefactor, c)
			}
			if fit.From == 0 {
				t.Errorf("α = %g: the fit used t = 0", alpha)
			}
		}
	}
}

// TestReachExponential: for v = e^{−λt} the time to reach the ratio ρ is
// ln(1/ρ)/λ, and log-linear interpolation between samples is exact for an
// exponential, so coarse sampling (here dt = 0.7/λ) costs nothing but
// round-off (observed at most 0.83ε relative; 8ε allowed).
func TestReachExponential(t *testing.T) {
	const lam, n = 0.35, 30
	ts := make([]float64, n)
	v := make([]float64, n)
	for i := range ts {
		ts[i] = 2 * float64(i)
		v[i] = 3 * math.Exp(-lam*ts[i])
	}
	r := make([]float64, n)
	if err := mixing.Ratios(r, v); err != nil {
		t.Fatal(err)
	}
	for _, rho := range []float64{0.9, 0.5, 1e-2, 1e-6} {
		got, ok := mixing.Reach(ts, r, rho)
		want := math.Log(1/rho) / lam
		if !ok || math.Abs(got-want) > 8*eps*want {
			t.Errorf("ρ = %g: Reach = %.17g, %v; ln(1/ρ)/λ = %.17g", rho, got, ok, want)
		}
	}
	if tc, ok := mixing.Reach(ts, r, 1e-9); ok || !math.IsNaN(tc) {
		t.Errorf("a level never reached gave %g, %v", tc, ok)
	}
	if tc, ok := mixing.Reach(ts, r, 1); !ok || tc != 0 {
		t.Errorf("a level reached at t[0] gave %g, %v", tc, ok)
	}
	// A zero level falls back to linear interpolation: v = 1 − t crosses
	// 0 at t = 1 exactly.
	if tc, ok := mixing.Reach([]float64{0, 0.75, 1.5}, []float64{1, 0.25, -0.5}, 0); !ok || math.Abs(tc-1) > 2*eps {
		t.Errorf("linear crossing at %g, %v, want 1", tc, ok)
	}
}

// countShell counts, by brute force over the full integer lattice of the
// grid's modes, how many fall in shell b of width dk.
func countShell(g *spectral.Grid, b int, dk float64) int {
	n := 0
	for my := -g.Ny/2 + 1; my <= g.Ny/2; my++ {
		for mx := -g.Nx/2 + 1; mx <= g.Nx/2; mx++ {
			if mx == 0 && my == 0 {
				continue
			}
			k := math.Hypot(2*math.Pi*float64(mx)/g.Lx, 2*math.Pi*float64(my)/g.Ly)
			if int(math.Floor(k/dk+0.5)) == b {
				n++
			}
		}
	}
	return n
}

// TestStructureFactorSingleMode: a mode A cos(k·x) puts A²/2 (two
// coefficients of A/2) into the shell of |k|, so S_b = Lx·Ly·A²/(2N_b) there
// (package normalisation) and zero elsewhere; the peak is in that shell.
// N_b is checked against a brute-force count over the full lattice.
func TestStructureFactorSingleMode(t *testing.T) {
	for _, c := range []struct {
		nx, ny int
		lx, ly float64
		md     mode
	}{
		{32, 32, 1, 1, mode{1, 5, 0, 0}},
		{32, 32, 1, 1, mode{2, 3, 4, 0.5}},    // |n| = 5 exactly
		{64, 32, 2, 1, mode{0.5, 3, 2, 0}},    // |k|/Δk = √(9+16) = 5
		{48, 64, 1.5, 2.5, mode{1, 4, -7, 0}}, // off-centre in its shell
	} {
		g := mustGrid(t, c.nx, c.ny, c.lx, c.ly)
		sp := mixing.NewSpectrum(g)
		dk := 2 * math.Pi / math.Max(c.lx, c.ly)
		if sp.Width() != dk {
			t.Errorf("%v: width %g, want 2π/max(Lx, Ly) = %g", g, sp.Width(), dk)
		}
		kx, ky := c.md.k(g)
		s := spectrum(t, g, func(x, y float64) float64 { return 1 + c.md.a*math.Cos(kx*x+ky*y+c.md.phase) })
		sf := make([]float64, sp.Shells())
		sp.StructureFactor(sf, s)
		b := int(math.Floor(math.Hypot(kx, ky)/dk + 0.5))
		peak := 0
		for i := range sf {
			if sf[i] > sf[peak] {
				peak = i
			}
			if want := countShell(g, i+1, dk); sp.Count(i) != want {
				t.Fatalf("%v: shell %d holds %d modes, brute-force count %d", g, i+1, sp.Count(i), want)
			}
		}
		if peak+1 != b || math.Abs(sp.K(peak)-float64(b)*dk) > 4*eps*sp.K(peak) {
			t.Errorf("%v mode %v: peak in shell %d (k = %g), want %d", g, c.md, peak+1, sp.K(peak), b)
		}
		want := c.lx * c.ly * c.md.a * c.md.a / (2 * float64(sp.Count(b-1)))
		if rel := math.Abs(sf[b-1]-want) / want; rel > fftRel(g) {
			t.Errorf("%v: S = %.16g, want %.16g (rel %.2g)", g, sf[b-1], want, rel)
		}
		for i, v := range sf {
			if i != b-1 && v > fftRel(g)*want {
				t.Errorf("%v: shell %d holds %g, should be empty to round-off", g, i+1, v)
			}
		}
	}
}

// TestStructureFactorParseval: for any field, Σ_b N_b S_b/(Lx·Ly) is the
// variance ⟨φ²⟩ − ⟨φ⟩² (every mode, Nyquist ones included, binned once);
// the reference is spectral.Grid.MeanSquare minus |φ_0|². Both sides are
// sums of the same O(N) positive terms in different order: relative error
// a few ε·log N; 64ε allowed.
func TestStructureFactorParseval(t *testing.T) {
	g := mustGrid(t, 48, 40, 1.3, 2.1)
	rng := rand.New(rand.NewPCG(11, 3))
	s := spectrum(t, g, func(x, y float64) float64 { return rng.NormFloat64() + 0.5 })
	sp := mixing.NewSpectrum(g)
	sf := make([]float64, sp.Shells())
	sp.StructureFactor(sf, s)
	var sum float64
	for i, v := range sf {
		sum += float64(sp.Count(i)) * v / (g.Lx * g.Ly)
	}
	want := g.MeanSquare(s) - real(s[0])*real(s[0])
	if rel := math.Abs(sum-want) / want; rel > 64*eps {
		t.Errorf("Σ N_b S_b/A = %.16g, variance %.16g (rel %.2g)", sum, want, rel)
	}
}

// TestDomainLengthStripes: stripes A cos(k·x) of any orientation have
// ⟨k⟩ = |k| and so L = 2π/|k|, the stripe period; two stripe families
// give ⟨k⟩ = (A₁²k₁ + A₂²k₂)/(A₁² + A₂²) (weights |φ_k|², package docs).
func TestDomainLengthStripes(t *testing.T) {
	g := mustGrid(t, 64, 48, 2, 1.5)
	sp := mixing.NewSpectrum(g)
	m1, m2 := mode{1, 4, 3, 0}, mode{0.6, 1, -2, 0.9}
	k1x, k1y := m1.k(g)
	k2x, k2y := m2.k(g)
	k1, k2 := math.Hypot(k1x, k1y), math.Hypot(k2x, k2y)
	s := spectrum(t, g, func(x, y float64) float64 { return m1.a * math.Cos(k1x*x+k1y*y) })
	if got, want := sp.DomainLength(s), 2*math.Pi/k1; math.Abs(got-want) > fftRel(g)*want {
		t.Errorf("stripes of period %.16g: L = %.16g", want, got)
	}
	s = spectrum(t, g, func(x, y float64) float64 {
		return m1.a*math.Cos(k1x*x+k1y*y) + m2.a*math.Cos(k2x*x+k2y*y+m2.phase)
	})
	a1, a2 := m1.a*m1.a, m2.a*m2.a
	if got, want := sp.MeanK(s), (a1*k1+a2*k2)/(a1+a2); math.Abs(got-want) > fftRel(g)*want {
		t.Errorf("two stripe families: ⟨k⟩ = %.16g, want %.16g", got, want)
	}
	if l := sp.DomainLength(g.NewSpectral()); !math.IsInf(l, 1) {
		t.Errorf("uniform field: L = %g, want +Inf", l)
	}
}

// TestSnapshotsAllocateNothing proves the hot snapshot calls allocate
// nothing (testing.AllocsPerRun, as in the standard library's sort tests).
func TestSnapshotsAllocateNothing(t *testing.T) {
	g := mustGrid(t, 32, 32, 1, 1)
	m, _ := mixing.NewMeter(g, 1)
	sp := mixing.NewSpectrum(g)
	s := spectrum(t, g, func(x, y float64) float64 { return math.Sin(2 * math.Pi * x) })
	sf := make([]float64, sp.Shells())
	var sink float64
	for name, f := range map[string]func(){
		"Measure":         func() { sink += m.Measure(s)[mixing.Mix] },
		"Norm":            func() { sink += m.Norm(mixing.HMinus1, s) },
		"StructureFactor": func() { sp.StructureFactor(sf, s) },
		"DomainLength":    func() { sink += sp.DomainLength(s) },
	} {
		if a := testing.AllocsPerRun(20, f); a != 0 {
			t.Errorf("%s allocates %v times per call", name, a)
		}
	}
	_ = sink
}

func TestBadInput(t *testing.T) {
	g := mustGrid(t, 8, 8, 1, 1)
	for _, l := range []float64{0, -1, math.Inf(1), math.NaN()} {
		if _, err := mixing.NewMeter(g, l); err == nil || !strings.Contains(err.Error(), "mix-norm length") {
			t.Errorf("NewMeter(L = %g): error %v", l, err)
		}
	}
	if err := mixing.Ratios(make([]float64, 2), []float64{0, 1}); err == nil || !strings.Contains(err.Error(), "v[0] = 0") {
		t.Errorf("Ratios with v[0] = 0: %v", err)
	}
	ts := []float64{0, 1, 2, 3, 4}
	for _, c := range []struct {
		t, v []float64
		w    mixing.Window
		want string
	}{
		{[]float64{0, 1, 1, 3}, []float64{1, 1, 1, 1}, mixing.Window{}, "t[2] = 1"},
		{ts, []float64{1, 0.5, -0.1, 0.1, 0.1}, mixing.Window{Start: 0, End: 4}, "v[2] = -0.1"},
		{ts, []float64{1, 0.5, 0, 0.1, 0.1}, mixing.Window{}, "2 usable samples"},
		{ts, []float64{1, 0.5, 0.2, 0.1, 0.1}, mixing.Window{Start: 3, End: 1}, "End must exceed Start"},
	} {
		if _, err := mixing.FitExp(c.t, c.v, c.w); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("FitExp(%v, %v, %+v) error %v, want one naming %q", c.t, c.v, c.w, err, c.want)
		}
	}
	if _, err := mixing.FitPower(ts, []float64{1, 1, 1, 1, 1}, mixing.Window{Start: 0, End: 4}); err == nil || !strings.Contains(err.Error(), "t[0] = 0") {
		t.Errorf("FitPower over t = 0: %v", err)
	}
	m, _ := mixing.NewMeter(g, 1)
	assertPanics(t, "Measure of a wrong length", func() { m.Measure(make([]complex128, 3)) })
	assertPanics(t, "Norm(NumNorms)", func() { m.Norm(mixing.NumNorms, g.NewSpectral()) })
	assertPanics(t, "StructureFactor dst length", func() { mixing.NewSpectrum(g).StructureFactor(nil, g.NewSpectral()) })
}

func assertPanics(t *testing.T, what string, f func()) {
	t.Helper()
	defer func() {
		if recover() == nil {
			t.Errorf("%s did not panic", what)
		}
	}()
	f()
}

func BenchmarkMeasure(b *testing.B) {
	for _, n := range []int{256, 1024} {
		g := mustGrid(b, n, n, 1, 1)
		m, _ := mixing.NewMeter(g, 0.1)
		sp := mixing.NewSpectrum(g)
		s := spectrum(b, g, func(x, y float64) float64 { return math.Sin(2*math.Pi*x) * math.Cos(4*math.Pi*y) })
		sf := make([]float64, sp.Shells())
		b.Run(fmt.Sprintf("norms/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				m.Measure(s)
			}
		})
		b.Run(fmt.Sprintf("variance-only/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				m.Norm(mixing.Variance, s)
			}
		})
		b.Run(fmt.Sprintf("structure-factor/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				sp.StructureFactor(sf, s)
			}
		})
	}
}
