package flow

import (
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"

	"github.com/memix-sim/memix/internal/special"
)

// This file solves the rigid-disk problem numerically: a disk of radius a
// in the membrane moves rigidly (translation U x̂ or rotation Ω ẑ), and we
// seek the in-plane force density f, supported on r ≤ a, whose membrane
// velocity u = G*f (û = P f̂/D) equals the rigid motion on the disk. The
// drag is λ = F/U (or torque/Ω).
//
// Variational form. G is symmetric positive definite, so the exact force
// density maximises 2⟨f, U⟩ − ⟨f, G f⟩ over densities supported on the
// disk, and the maximum is λU². The Galerkin approximation in a finite
// basis is the same maximum over the basis span: it is a lower bound on λ
// that increases monotonically as the basis grows. With f = Σ cᵢ φᵢ,
//
//	Mᵢⱼ = ⟨φᵢ, G φⱼ⟩,  Lᵢ = ⟨φᵢ, rigid motion⟩,  λ = Lᵀ M⁻¹ L.
//
// Translation. By symmetry f has angular order 1. Only its transverse part
// P f̂ produces flow, and every such density has the same P f̂ as a density
// A(r) x̂ with A supported on the disk (the difference is the gradient of a
// function vanishing at r = a, absorbed by the surface pressure, which
// does no work against a rigid translation). With
// S(k) = 2π ∫₀^a A(r) J₀(kr) r dr, |P f̂|² = sin²θ_k S², so
//
//	⟨f, G f⟩ = (1/4π) ∫₀^∞ S(k)² k/D(k) dk,   F = S(0).
//
// Rotation. f = h(r) φ̂ is divergence-free (P f̂ = f̂); with
// T(k) = 2π ∫₀^a h(r) J₁(kr) r dr,
//
//	⟨f, G f⟩ = (1/2π) ∫₀^∞ T(k)² k/D(k) dk,   torque = lim_{k→0} 2T(k)/k.
//
// Basis. Each basis function is given by its transform, c·J_ν(ka)/(ka)^m.
// With s = 0 for translation and s = 1 for rotation:
//
//   - the ring, ν = s, m = 0: a line force on the rim r = a, δ(r − a)/(2πa)
//     (the membrane's viscous stress jumps there); present when η_m > 0;
//   - the family μ = −1/2, ν = 2n + s + 1/2, m = 1/2: the density
//     ρ^s (1 − ρ²)^{−1/2} P_n^{(s, −1/2)}(1 − 2ρ²), ρ = r/a, the inverse
//     square-root edge singularity of a thin rigid disk in a 3D fluid
//     (exact alone when η_m → 0 over deep subphases);
//   - the family μ = 0, ν = 2n + s + 1, m = 1: ρ^s P_n^{(s, 0)}(1 − 2ρ²),
//     bounded at the edge (the friction on the disk itself is uniform for
//     translation and ∝ r for rotation: exactly its first member).
//
// The transforms follow from Sonine's integral with Jacobi polynomials
// P_n^{(α,β)} (orthogonal for the weight ρ^{2s}(1−ρ²)^μ on the disk):
// 2π∫₀^a ρ^s(1−ρ²)^μ P_n^{(s,μ)}(1−2ρ²) J_s(kr) r dr
// = 2πa² 2^μ Γ(μ+n+1)/n! · J_{2n+s+μ+1}(ka)/(ka)^{μ+1} (checked by numerical
// Hankel transforms in the tests). Half-integer orders are spherical Bessel
// functions, J_{n+1/2}(x) = sqrt(2x/π) j_n(x).
//
// k-integrals. ∫₀^∞ Bᵢ Bⱼ k/D dk with oscillatory, algebraically decaying
// integrands is split at K (Ka ≥ 64 and beyond the orders used):
//   - [0, K]: composite Gauss–Legendre on panels no longer than half an
//     oscillation period π/(2a), refined geometrically towards k = 0 to
//     resolve the scales of D (Saffman–Delbrück, depth, friction);
//   - [K, ∞): Hankel's asymptotic expansion writes
//     J_μ(x)J_ν(x) = (1/πx){Re[Pᵢ P̄ⱼ] + Re[e^{i(2x−π/2)} Pᵢ Pⱼ]} with
//     P(x) = x^{−m} e^{−iνπ/2} Σ_q i^q a_q(ν) x^{−q} (exact and finite for
//     half-integer ν). The non-oscillatory part is integrated along the
//     real axis in s = ln(k/K); the oscillatory part along the contour
//     k = K + iy, where it decays like e^{−2ay}. The rotation of the
//     contour is legitimate because D(k) is analytic and non-zero for
//     Re k > 0: D(k)/k = η_m k + Σ η·{1, coth kH, tanh kH} + ξ/k is a sum of
//     positive-real functions.
//
// Every piece converges exponentially with its number of nodes; the tests
// check that doubling them changes the Galerkin matrix by round-off only.
//
// Conditioning. Together the two families span (1−ρ²)^{−1/2} times the
// polynomials in sqrt(1−ρ²), which is why convergence is fast (geometric,
// a factor 10–300 per added pair while ε ≲ 100), but they are nearly
// dependent: the solve drops eigendirections below eigCut of the largest,
// and round-off in the matrix then limits the relative accuracy to about
// 1e-11 at ε = 10² and 1e-8 at ε = 10⁴, where the edge layer of width
// a/ε also slows convergence to a factor 1.5–3 per pair.

// eigCut is the relative eigenvalue below which galerkinDrag drops a
// direction of the (unit-diagonal) Galerkin matrix.
const eigCut = 1e-14

// diskMotion is the rigid motion of the disk.
type diskMotion int

const (
	diskTranslation diskMotion = iota
	diskRotation
)

func (d diskMotion) String() string {
	if d == diskRotation {
		return "rotation"
	}
	return "translation"
}

// diskFunc is one basis function, given by its transform J_ν(ka)/(ka)^m.
type diskFunc struct {
	nu, m  float64
	half   int       // spherical order n when ν = n + 1/2, else −1
	load   float64   // force (translation) or torque (rotation) of the function
	series []float64 // Hankel asymptotic coefficients a_q(ν)
}

// diskBasisSpec says which basis functions to use.
type diskBasisSpec struct {
	ring       bool // the rim line force (needs η_m > 0)
	sing, bndd int  // sizes of the μ = −1/2 and μ = 0 families
}

func (s diskBasisSpec) size() int {
	n := s.sing + s.bndd
	if s.ring {
		n++
	}
	return n
}

// diskBasis returns the basis functions for radius a, in the order ring,
// then the two families interleaved (so that a leading block of the Galerkin
// matrix is the matrix of a smaller basis of the same shape).
func diskBasis(motion diskMotion, a float64, spec diskBasisSpec) []diskFunc {
	s := 0.0
	if motion == diskRotation {
		s = 1
	}
	var fs []diskFunc
	add := func(nu, m float64) {
		f := diskFunc{nu: nu, m: m, half: -1}
		if h := nu - 0.5; h == math.Floor(h) {
			f.half = int(h)
		}
		lg, _ := math.Lgamma(nu + 1)
		c0 := math.Exp(-nu*math.Ln2 - lg) // lim J_ν(x)/x^ν = 1/(2^ν Γ(ν+1))
		switch {
		case motion == diskTranslation && nu == m:
			f.load = c0
		case motion == diskRotation && nu == m+1:
			f.load = 2 * a * c0
		}
		f.series = hankelSeries(nu)
		fs = append(fs, f)
	}
	if spec.ring {
		add(s, 0)
	}
	for n := 0; n < max(spec.sing, spec.bndd); n++ {
		if n < spec.sing {
			add(2*float64(n)+s+0.5, 0.5)
		}
		if n < spec.bndd {
			add(2*float64(n)+s+1, 1)
		}
	}
	return fs
}

// hankelSeries returns the coefficients a_q(ν) = Π_{j=1..q}(4ν² − (2j−1)²)/(q! 8^q)
// of Hankel's expansion, up to the last non-zero one for half-integer ν,
// or maxHankelTerms otherwise.
func hankelSeries(nu float64) []float64 {
	const maxHankelTerms = 160
	a := []float64{1}
	for q := 1; q < maxHankelTerms; q++ {
		f := 4*nu*nu - float64((2*q-1)*(2*q-1))
		if f == 0 {
			break
		}
		a = append(a, a[q-1]*f/float64(8*q))
	}
	return a
}

// hankelP returns P(x) = x^{−m} e^{−iνπ/2} Σ_q i^q a_q x^{−q} for complex x
// with Re x ≥ 64 and |x| ≥ ν²; the sum stops when a term falls below 1e-18
// of the first. It panics if the series fails to converge (a programmer
// error: K was chosen too small for the order).
func (f *diskFunc) hankelP(x complex128) complex128 {
	inv := 1 / x
	var sum complex128
	p := complex(1, 0)
	for q, aq := range f.series {
		t := complex(aq, 0) * p
		sum += t
		if math.Abs(real(t))+math.Abs(imag(t)) < 1e-18 {
			break
		}
		if q == len(f.series)-1 && f.half < 0 {
			panic(fmt.Sprintf("flow: Hankel series of J_%g does not converge at |x| = %g", f.nu, cmplx.Abs(x)))
		}
		p *= complex(0, 1) * inv
	}
	return sum * cmplx.Pow(x, complex(-f.m, 0)) * cmplx.Exp(complex(0, -f.nu*math.Pi/2))
}

// tanhC is tanh for complex z with Re z ≥ 0, safe for large Re z (the
// standard library's cmplx.Tanh overflows to NaN beyond Re z ≈ 355).
func tanhC(z complex128) complex128 {
	if real(z) > 20 {
		e := cmplx.Exp(-2 * z)
		return (1 - e) / (1 + e)
	}
	return cmplx.Tanh(z)
}

// gammaC is Subphase.Gamma continued to complex k with Re k > 0.
func gammaC(s Subphase, k complex128) complex128 {
	eta := complex(s.Viscosity, 0)
	switch s.Kind {
	case Deep:
		return eta * k
	case Wall:
		return eta * k / tanhC(k*complex(s.Depth, 0))
	case Slip:
		return eta * k * tanhC(k*complex(s.Depth, 0))
	default:
		return 0
	}
}

// resistanceC is D(k) continued to complex k with Re k > 0.
func resistanceC(m Membrane, k complex128) complex128 {
	return complex(m.Viscosity, 0)*k*k + gammaC(m.Upper, k) + gammaC(m.Lower, k) + complex(m.Friction, 0)
}

// diskQuad sets the quadrature node counts. The zero value is the default.
type diskQuad struct {
	gl     int // Gauss–Legendre points per panel (default 16)
	tailGL int // points per unit panel in s = ln(k/K) and per panel on the contour (default 12)
	refine int // subdivision of every panel (default 1)
}

func (q diskQuad) withDefaults() diskQuad {
	if q.gl == 0 {
		q.gl = 16
	}
	if q.tailGL == 0 {
		q.tailGL = 12
	}
	if q.refine == 0 {
		q.refine = 1
	}
	return q
}

// diskScales returns the wavenumbers at which D(k) changes character:
// (η₊+η₋)/η_m, sqrt(ξ/η_m), sqrt(D(0)/η_m) and 1/H of each layer.
func diskScales(m Membrane) []float64 {
	var s []float64
	if es := m.SubphaseViscosity(); es > 0 && m.Viscosity > 0 {
		s = append(s, es/m.Viscosity)
	}
	if m.Viscosity > 0 && m.D0() > 0 {
		s = append(s, math.Sqrt(m.D0()/m.Viscosity))
	}
	if m.Viscosity > 0 && m.Friction > 0 {
		s = append(s, math.Sqrt(m.Friction/m.Viscosity))
	}
	for _, side := range []Subphase{m.Upper, m.Lower} {
		if side.Kind.HasDepth() {
			s = append(s, 1/side.Depth)
		}
	}
	return s
}

// diskMatrix returns the Galerkin matrix Mᵢⱼ = ⟨φᵢ, G φⱼ⟩ of the basis fs
// for a disk of radius a in membrane m (η_m = 0 is allowed when fs has no
// ring), as a dense symmetric n×n slice (row-major).
func diskMatrix(m Membrane, a float64, motion diskMotion, fs []diskFunc, q diskQuad) []float64 {
	q = q.withDefaults()
	n := len(fs)
	M := make([]float64, n*n)
	pref := 1 / (4 * math.Pi)
	if motion == diskRotation {
		pref = 1 / (2 * math.Pi)
	}

	// Split point K: Ka ≥ 64 and ≥ ν² for every integer order (so that
	// Hankel's series converges geometrically, ratio ≤ 1/2 at the start).
	ka := 64.0
	for _, f := range fs {
		if f.half < 0 {
			ka = math.Max(ka, f.nu*f.nu)
		}
	}
	K := ka / a

	// Breakpoints on [0, K]: uniform every π/(2a·refine), and geometric
	// (ratio 2^{1/refine}) from kLo up, kLo well below every scale of D.
	kLo := 1 / a
	for _, s := range diskScales(m) {
		kLo = math.Min(kLo, s)
	}
	kLo *= 1e-3
	var bp []float64
	step := math.Pi / (2 * a * float64(q.refine))
	ratio := math.Pow(2, 1/float64(q.refine))
	for g := kLo; g < K; g *= ratio {
		bp = append(bp, g)
	}
	bp = mergeBreakpoints(bp, step, K)

	vals := make([]float64, n)
	bufs := newBesselBufs(fs)
	xs, ws := make([]float64, q.gl), make([]float64, q.gl)
	lo := 0.0
	for _, hi := range bp {
		quad.Legendre{}.FixedLocations(xs, ws, lo, hi)
		for p, k := range xs {
			x := k * a
			evalBasis(vals, fs, x, bufs)
			w := pref * ws[p] * k / m.D(k)
			for i := 0; i < n; i++ {
				vi := w * vals[i]
				row := M[i*n : i*n+n]
				for j := i; j < n; j++ {
					row[j] += vi * vals[j]
				}
			}
		}
		lo = hi
	}

	// Tail, non-oscillatory part: ∫_K^∞ (k/D)(1/(πka)) Re[Pᵢ P̄ⱼ] dk in
	// s = ln(k/K), dk = k ds, on unit panels up to where the integrand
	// (∝ e^{−s} at worst) is below 1e-18, past every scale of D.
	sMax := 42.0
	for _, sc := range diskScales(m) {
		if sc > K {
			sMax = math.Max(sMax, 42+math.Log(sc/K))
		}
	}
	P := make([]complex128, n)
	xs, ws = make([]float64, q.tailGL), make([]float64, q.tailGL)
	for s0 := 0.0; s0 < sMax; s0 += 1 / float64(q.refine) {
		quad.Legendre{}.FixedLocations(xs, ws, s0, s0+1/float64(q.refine))
		for p, s := range xs {
			k := K * math.Exp(s)
			x := complex(k*a, 0)
			for i := range fs {
				P[i] = fs[i].hankelP(x)
			}
			w := pref * ws[p] * k * (k / m.D(k)) / (math.Pi * k * a)
			for i := 0; i < n; i++ {
				row := M[i*n : i*n+n]
				for j := i; j < n; j++ {
					row[j] += w * real(P[i]*cmplx.Conj(P[j]))
				}
			}
		}
	}

	// Tail, oscillatory part: Re ∫_K^∞ (k/D)(1/(πka)) e^{i(2ka−π/2)} Pᵢ Pⱼ dk
	// = Re[e^{2iKa} ∫₀^∞ Pᵢ Pⱼ e^{−2ay} /(πa D(K+iy)) dy] on the contour
	// k = K + iy (the factor i from dk cancels e^{−iπ/2}); t = 2ay ∈ [0, 44]
	// on panels of width 2.
	osc := make([]complex128, n*n)
	for t0 := 0.0; t0 < 44; t0 += 2 / float64(q.refine) {
		quad.Legendre{}.FixedLocations(xs, ws, t0, t0+2/float64(q.refine))
		for p, t := range xs {
			y := t / (2 * a)
			k := complex(K, y)
			for i := range fs {
				P[i] = fs[i].hankelP(k * complex(a, 0))
			}
			w := complex(pref*ws[p]/(2*a)*math.Exp(-t)/(math.Pi*a), 0) / resistanceC(m, k)
			for i := 0; i < n; i++ {
				wi := w * P[i]
				row := osc[i*n : i*n+n]
				for j := i; j < n; j++ {
					row[j] += wi * P[j]
				}
			}
		}
	}
	phase := cmplx.Exp(complex(0, 2*ka))
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			M[i*n+j] += real(phase * osc[i*n+j])
			M[j*n+i] = M[i*n+j]
		}
	}
	return M
}

// mergeBreakpoints returns the sorted union of geo (increasing) and the
// multiples of step below K, then K, dropping points closer than step/8
// to their predecessor where the uniform grid governs.
func mergeBreakpoints(geo []float64, step, K float64) []float64 {
	var out []float64
	gi := 0
	for u := step; ; u += step {
		if u > K {
			u = K
		}
		for gi < len(geo) && geo[gi] < u {
			if len(out) == 0 || geo[gi]-out[len(out)-1] > 0 {
				out = append(out, geo[gi])
			}
			gi++
		}
		if len(out) == 0 || u-out[len(out)-1] > step/8 {
			out = append(out, u)
		} else {
			out[len(out)-1] = u
		}
		if u == K {
			return out
		}
	}
}

// besselBufs holds the spherical (half-integer) and integer-order Bessel
// values of one argument for evalBasis.
type besselBufs struct{ half, whole []float64 }

func newBesselBufs(fs []diskFunc) besselBufs {
	var nh, nw int
	for _, f := range fs {
		if f.half >= 0 {
			nh = max(nh, f.half+1)
		} else {
			nw = max(nw, int(f.nu)+1)
		}
	}
	return besselBufs{make([]float64, nh), make([]float64, nw)}
}

// evalBasis sets dst[i] = J_ν(x)/x^m for each basis function, x > 0.
func evalBasis(dst []float64, fs []diskFunc, x float64, b besselBufs) {
	special.SphericalJ(b.half, x)
	special.BesselJ(b.whole, x)
	for i, f := range fs {
		if f.half >= 0 {
			// J_{n+1/2}(x) = sqrt(2x/π) j_n(x).
			dst[i] = math.Sqrt(2/math.Pi) * b.half[f.half] * math.Pow(x, 0.5-f.m)
		} else {
			dst[i] = b.whole[int(f.nu)] / math.Pow(x, f.m)
		}
	}
}

// galerkinDrag returns λ = Lᵀ M⁻¹ L for the leading nb×nb block of the
// n×n matrix M (row-major) and load L. The block is scaled to unit
// diagonal and solved through its eigendecomposition; eigenvalues below
// 1e-14 of the largest (directions the quadrature cannot resolve, where
// the basis is nearly dependent) are dropped, which can only lower λ
// (consistent with the variational bound).
func galerkinDrag(M []float64, n int, load []float64, nb int) (float64, error) {
	sym := mat.NewSymDense(nb, nil)
	d := make([]float64, nb)
	for i := 0; i < nb; i++ {
		if !(M[i*n+i] > 0) {
			return 0, fmt.Errorf("flow: Galerkin matrix diagonal %d = %g is not positive", i, M[i*n+i])
		}
		d[i] = 1 / math.Sqrt(M[i*n+i])
	}
	for i := 0; i < nb; i++ {
		for j := i; j < nb; j++ {
			sym.SetSym(i, j, M[i*n+j]*d[i]*d[j])
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(sym, true) {
		return 0, fmt.Errorf("flow: Galerkin matrix eigendecomposition failed")
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	top := vals[nb-1]
	var lam float64
	for c := 0; c < nb; c++ {
		if vals[c] < eigCut*top {
			continue
		}
		var proj float64
		for i := 0; i < nb; i++ {
			proj += vecs.At(i, c) * load[i] * d[i]
		}
		lam += proj * proj / vals[c]
	}
	return lam, nil
}
