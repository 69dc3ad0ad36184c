package flow

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/integrate/quad"
)

// Point-force response of the infinite membrane (MODEL.md §1.1).
//
// A point force F at the origin drives u(x) = G(x)·F with
//
//	G(x) = ∫ d²k/(2π)² e^{ik·x} P(k)/D(k) = G∥(r) r̂r̂ + G⊥(r)(I − r̂r̂).
//
// The angular integrals ∫dφ e^{ikr cos φ}{1, cos²φ} = 2π J0, π(J0 − J2) and
// J0 + J2 = 2J1(kr)/(kr) give the one-dimensional Hankel forms [derived]
//
//	G∥(r) = (1/(2πr)) ∫₀^∞ J1(kr)/D(k) dk,
//	G⊥(r) = (1/(2π)) ∫₀^∞ k J0(kr)/D(k) dk − G∥(r)
//	      = −(1/(2πr)) ∫₀^∞ J1(kr) (k/D(k))′ dk,
//
// the last line by parts with k J0(kr) = (1/r) d/dk[k J1(kr)] (the boundary
// terms vanish when D(k)/k is bounded below near 0 and D ~ η_m k² at large
// k). The by-parts form has the same kernel J1 as G∥ (one set of Bessel
// evaluations serves both) and avoids the cancellation between two O(1/r)
// terms that would otherwise make up the O(1/r²) far field of G⊥. Both
// integrands decay as k^{−5/2} (amplitude of J1 times k^{−2}).
//
// A force spread as the Gaussian exp(−|x|²/(2w²))/(2πw²) multiplies D⁻¹
// by s(k) = exp(−k²w²/2), so (k s/D)′ = s[(k/D)′ − k²w²/D].
//
// Quadrature: with x = kr the integrals are ∫₀^∞ J1(x) φ(x) dx. They are
// split at the zeros of J1 (McMahon's expansion polished by a Newton step);
// each piece is integrated by Gauss–Legendre with adaptive bisection
// (gonum's nodes), which resolves the structure of D at small x when r is
// far below the membrane's lengths. Once x/r is ten times past every
// wavenumber at which D changes form (so φ has a convergent expansion in
// 1/x and the exponentially small parts of coth/tanh are below 1e−17), the
// alternating sequence of partial sums is accelerated with Wynn's epsilon
// algorithm [Wynn, MTAC 10, 91 (1956)], the acceleration QUADPACK's QAWF
// uses for Fourier integrals [Piessens et al., QUADPACK, Springer 1983].
// Integrating between zeros with such extrapolation is standard practice for
// Sommerfeld/Hankel integrals [practice; e.g. Michalski & Mosig, J.
// Electromagn. Waves Appl. 30, 295 (2016), from memory].

// ErrNoPlaneResponse is returned (wrapped) when the infinite membrane has
// no point-force response: with no deep or wall subphase and no friction,
// D(k)/k² stays bounded as k → 0 and the integrals diverge logarithmically
// (the 2D Stokes paradox).
var ErrNoPlaneResponse = errors.New("no point-force response on the infinite plane")

// responseTol is the relative accuracy the response quadrature aims at,
// relative to max(|G∥|, |G⊥|) at the same r.
const responseTol = 1e-12

// CheckResponse returns nil if the infinite membrane m has a point-force
// response, and an error wrapping ErrNoPlaneResponse otherwise.
func (m Membrane) CheckResponse() error {
	if err := m.Validate(); err != nil {
		return err
	}
	if m.Friction > 0 || m.Upper.Kind == Deep || m.Upper.Kind == Wall || m.Lower.Kind == Deep || m.Lower.Kind == Wall {
		return nil
	}
	return fmt.Errorf("flow: %w: friction = 0 and neither subphase is deep or wall (upper %s, lower %s), so D(k)/k² stays bounded as k → 0 (the 2D Stokes paradox); add friction > 0 or a deep or wall subphase",
		ErrNoPlaneResponse, m.Upper.Kind, m.Lower.Kind)
}

// Response returns the longitudinal and transverse point-force response
// G∥(r) and G⊥(r) of the infinite membrane at distance r > 0: a force F at
// the origin drives u = G∥ (r̂·F) r̂ + G⊥ (F − (r̂·F) r̂). The values are
// velocity per force [1/(η_m units), e.g. (m/s)/N = 1/(Pa·s·m)], in the
// consistent units of m; 4πη_m G is dimensionless. They are model
// predictions of a continuum membrane, computed by numerical Hankel
// transform of P/D to a relative accuracy of about 1e−12 of
// max(|G∥|, |G⊥|).
//
// It returns an error if m is invalid, if r is not finite and positive, or
// (wrapping ErrNoPlaneResponse) if the infinite membrane has no response.
func (m Membrane) Response(r float64) (par, perp float64, err error) {
	return m.SmoothedResponse(r, 0)
}

// SmoothedResponse is Response for a force spread as the Gaussian
// F exp(−|x|²/(2w²))/(2πw²) of width w ≥ 0 centred at the origin
// (w = 0 is the point force).
func (m Membrane) SmoothedResponse(r, w float64) (par, perp float64, err error) {
	if err := m.CheckResponse(); err != nil {
		return 0, 0, err
	}
	if !(r > 0) || math.IsInf(r, 0) {
		return 0, 0, fmt.Errorf("flow: response distance r = %g: must be finite and > 0 (length units of the membrane)", r)
	}
	if !(w >= 0) || math.IsInf(w, 0) {
		return 0, 0, fmt.Errorf("flow: force width w = %g: must be finite and ≥ 0 (length units of the membrane)", w)
	}
	h := hankel{m: m, r: r, w: w}
	// Extrapolation starts once x = kr is tailFactor times past every
	// wavenumber where D changes form, or, for a smoothed force, where the
	// Gaussian factor has fallen below e^{−40}, whichever comes first.
	xStart := tailFactor * m.featureK() * r
	if w > 0 {
		xStart = math.Min(xStart, math.Sqrt(80)*r/w)
	}
	i1, i2, err := h.integrate(xStart)
	if err != nil {
		return 0, 0, err
	}
	return i1 / (2 * math.Pi * r), -i2 / (2 * math.Pi * r), nil
}

// ResponsePoint is one row of a response table.
type ResponsePoint struct {
	R          float64 // distance from the force
	Par, Perp  float64 // G∥(R), G⊥(R): velocity per force
	ParScaled  float64 // 4πη_m G∥ (dimensionless)
	PerpScaled float64 // 4πη_m G⊥ (dimensionless)
}

// ResponseTable returns the response at each distance of rs (see
// Response). It returns the first error met, naming the distance.
func (m Membrane) ResponseTable(rs []float64) ([]ResponsePoint, error) {
	out := make([]ResponsePoint, len(rs))
	s := 4 * math.Pi * m.Viscosity
	for i, r := range rs {
		par, perp, err := m.Response(r)
		if err != nil {
			return nil, err
		}
		out[i] = ResponsePoint{R: r, Par: par, Perp: perp, ParScaled: s * par, PerpScaled: s * perp}
	}
	return out, nil
}

// LogSpaced returns n ≥ 2 values from lo to hi (0 < lo < hi, both
// included) spaced evenly in log r.
func LogSpaced(lo, hi float64, n int) ([]float64, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil, fmt.Errorf("flow: log-spaced range [%g, %g]: need 0 < lo < hi < ∞", lo, hi)
	}
	if n < 2 {
		return nil, fmt.Errorf("flow: log-spaced count n = %d: must be ≥ 2", n)
	}
	out := make([]float64, n)
	a, b := math.Log(lo), math.Log(hi)
	for i := range out {
		out[i] = math.Exp(a + (b-a)*float64(i)/float64(n-1))
	}
	out[0], out[n-1] = lo, hi
	return out, nil
}

// CrossoverLength returns 1/k_c, where k_c is the wavenumber at which the
// membrane's own resistance η_m k² equals that of subphases and friction,
// Γ₊(k) + Γ₋(k) + ξ: below this length the flow of a point force is the
// 2D Stokeslet, beyond it the subphases or the friction take over. It is
// the Saffman–Delbrück length η_m/(η₊+η₋) for deep subphases and the
// friction length sqrt(η_m/ξ) for friction alone. It returns +Inf when
// there is no crossover (no subphase, no friction, or only free-slip
// layers too thin to match η_m).
func (m Membrane) CrossoverLength() float64 {
	// (Γ(k)+ξ)/(η_m k²) decreases strictly in k for every kind (η/k, η
	// coth(kH)/k, η tanh(kH)/k and ξ/k² all do), so the crossing is unique.
	ratio := func(k float64) float64 {
		return (m.Upper.Gamma(k) + m.Lower.Gamma(k) + m.Friction) / (m.Viscosity * k * k)
	}
	if m.Friction == 0 && m.Upper.Kind != Deep && m.Upper.Kind != Wall && m.Lower.Kind != Deep && m.Lower.Kind != Wall {
		// Only free-slip layers (or none): the ratio rises to Σ ηH/η_m as
		// k → 0, and there is a crossover only if that exceeds 1.
		var lim float64
		for _, s := range []Subphase{m.Upper, m.Lower} {
			if s.Kind == Slip {
				lim += s.Viscosity * s.Depth / m.Viscosity
			}
		}
		if lim <= 1 {
			return math.Inf(1)
		}
	}
	lo, hi := 1.0, 1.0
	for ratio(lo) < 1 {
		lo /= 2
	}
	for ratio(hi) > 1 {
		hi *= 2
	}
	for i := 0; i < 200 && hi-lo > 1e-15*hi; i++ {
		mid := 0.5 * (lo + hi)
		if ratio(mid) > 1 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return 2 / (lo + hi)
}

// tailFactor: the Bessel tail is extrapolated from x = tailFactor·k_f·r on,
// k_f from featureK. Past k_f the integrands are smooth on the scale of x
// itself, which is all the extrapolation of an alternating sequence needs;
// starting at 0.1 or 10 times this changed no value of the reference table
// by more than 1e−13 of its scale (measured), while 10 made large r ten
// times slower.
const tailFactor = 1

// featureK returns the largest wavenumber at which D(k) changes form.
func (m Membrane) featureK() float64 {
	k := math.Sqrt(m.Friction / m.Viscosity)
	for _, s := range []Subphase{m.Upper, m.Lower} {
		if s.Kind == None {
			continue
		}
		k = math.Max(k, s.Viscosity/m.Viscosity) // η k meets η_m k²
		if s.Kind.HasDepth() {
			k = math.Max(k, 2/s.Depth) // coth, tanh within e^{−40} of 1 at kH = 20
		}
	}
	return k
}

// GammaPrime returns dΓ/dk of the subphase at k ≥ 0.
func (s Subphase) GammaPrime(k float64) float64 {
	switch s.Kind {
	case Deep:
		return s.Viscosity
	case Wall:
		x := k * s.Depth
		if x < 1e-3 {
			// coth x − x/sinh² x = 2x/3 − 4x³/45 + O(x⁵).
			return s.Viscosity * (2*x/3 - 4*x*x*x/45)
		}
		if x > 20 {
			return s.Viscosity * (1/math.Tanh(x) - 4*x*math.Exp(-2*x))
		}
		sh := math.Sinh(x)
		return s.Viscosity * (1/math.Tanh(x) - x/(sh*sh))
	case Slip:
		x := k * s.Depth
		if x > 20 {
			return s.Viscosity * (math.Tanh(x) + 4*x*math.Exp(-2*x))
		}
		ch := math.Cosh(x)
		return s.Viscosity * (math.Tanh(x) + x/(ch*ch))
	default:
		return 0
	}
}

// DPrime returns dD/dk = 2η_m k + Γ₊′(k) + Γ₋′(k).
func (m Membrane) DPrime(k float64) float64 {
	return 2*m.Viscosity*k + m.Upper.GammaPrime(k) + m.Lower.GammaPrime(k)
}

// hankel evaluates ∫₀^∞ J1(x) φ(x) dx for the two integrands of the
// response at distance r with smoothing width w.
type hankel struct {
	m    Membrane
	r, w float64
}

// phi returns the two integrands at x = kr, divided by r (dk = dx/r):
// s/D and (k s/D)′.
func (h *hankel) phi(x float64) (a, b float64) {
	k := x / h.r
	d := h.m.D(k)
	dp := h.m.DPrime(k)
	s := 1.0
	if h.w > 0 {
		s = math.Exp(-0.5 * k * k * h.w * h.w)
	}
	a = s / d
	b = s * ((d-k*dp)/(d*d) - k*k*h.w*h.w/d)
	return a / h.r, b / h.r
}

// glNodes are the Gauss–Legendre nodes and weights on [−1, 1] used on each
// piece; 12 points integrate J1 times a smooth factor over half a period
// to round-off.
var glNodes = sync.OnceValues(func() (x, w []float64) {
	x, w = make([]float64, 12), make([]float64, 12)
	quad.Legendre{}.FixedLocations(x, w, -1, 1)
	return x, w
})

// gl integrates J1·φ over [a, b] with the fixed rule.
func (h *hankel) gl(a, b float64) (s1, s2 float64) {
	x, w := glNodes()
	c, hw := 0.5*(a+b), 0.5*(b-a)
	for i, t := range x {
		xi := c + hw*t
		j := math.J1(xi)
		p, q := h.phi(xi)
		s1 += w[i] * j * p
		s2 += w[i] * j * q
	}
	return s1 * hw, s2 * hw
}

// adapt integrates over [a, b] by bisection until the whole-interval rule
// and the sum over its halves agree to tol (absolute, on both integrands).
// The tolerance never drops below 64 eps of the halves' magnitudes, which
// round-off can always meet, and the depth is capped, so the bisection
// stays finite.
func (h *hankel) adapt(a, b float64, whole1, whole2, tol float64, depth int) (float64, float64) {
	m := 0.5 * (a + b)
	l1, l2 := h.gl(a, m)
	r1, r2 := h.gl(m, b)
	s1, s2 := l1+r1, l2+r2
	tol = math.Max(tol, 64*eps*(math.Abs(l1)+math.Abs(r1)+math.Abs(l2)+math.Abs(r2)))
	if depth >= 40 || (math.Abs(s1-whole1) <= tol && math.Abs(s2-whole2) <= tol) {
		return s1, s2
	}
	a1, a2 := h.adapt(a, m, l1, l2, tol/2, depth+1)
	b1, b2 := h.adapt(m, b, r1, r2, tol/2, depth+1)
	return a1 + b1, a2 + b2
}

// piece integrates over [a, b] to a relative accuracy of responseTol of the
// piece's own size (floored by floor).
func (h *hankel) piece(a, b, floor float64) (float64, float64) {
	w1, w2 := h.gl(a, b)
	tol := math.Max(0.1*responseTol*math.Max(math.Abs(w1), math.Abs(w2)), floor)
	return h.adapt(a, b, w1, w2, tol, 0)
}

// besselJ1Zero returns the n-th positive zero of J1 (n ≥ 1): McMahon's
// expansion β − 3/(8β) + 3/(128β³), β = (n + 1/4)π [Abramowitz & Stegun
// 9.5.12], polished by two Newton steps with J1′ = J0 − J1/x.
func besselJ1Zero(n int) float64 {
	b := (float64(n) + 0.25) * math.Pi
	x := b - 3/(8*b) + 3/(128*b*b*b)
	for range 2 {
		j1 := math.J1(x)
		x -= j1 / (math.J0(x) - j1/x)
	}
	return x
}

const eps = 0x1p-52 // float64 machine epsilon

// maxPieces bounds the number of half-periods before the result is declared
// unconverged.
const maxPieces = 2_000_000

// integrate returns ∫₀^∞ J1(x) φ_i(x) dx for both integrands, summing the
// half-periods up to xStart directly and extrapolating the rest.
func (h *hankel) integrate(xStart float64) (i1, i2 float64, err error) {
	// First piece [0, j1,1]: the structure of D at x ≪ 1 when r is small.
	z := besselJ1Zero(1)
	s1, s2 := h.piece(0, z, 0)
	n := 1
	// Pieces up to xStart are summed directly.
	for z < xStart {
		if n >= maxPieces {
			return 0, 0, fmt.Errorf("flow: response at r = %g needs more than %d Bessel half-periods; r is too large for the membrane's lengths", h.r, maxPieces)
		}
		zn := besselJ1Zero(n + 1)
		floor := 0.01 * responseTol * math.Max(math.Abs(s1), math.Abs(s2))
		p1, p2 := h.piece(z, zn, floor)
		s1, s2 = s1+p1, s2+p2
		z, n = zn, n+1
	}
	// The tail: Wynn's epsilon algorithm on the partial sums.
	var w1, w2 wynn
	w1.add(s1)
	w2.add(s2)
	var prev1, prev2 float64
	agree := 0
	for k := 0; k < 200; k++ {
		zn := besselJ1Zero(n + 1)
		floor := 0.01 * responseTol * math.Max(math.Abs(s1), math.Abs(s2))
		p1, p2 := h.piece(z, zn, floor)
		s1, s2 = s1+p1, s2+p2
		z, n = zn, n+1
		e1, e2 := w1.add(s1), w2.add(s2)
		scale := math.Max(math.Abs(e1), math.Abs(e2))
		if k >= 6 && math.Abs(e1-prev1) <= responseTol*scale && math.Abs(e2-prev2) <= responseTol*scale {
			agree++
			if agree >= 3 {
				return e1, e2, nil
			}
		} else {
			agree = 0
		}
		prev1, prev2 = e1, e2
	}
	return 0, 0, fmt.Errorf("flow: response at r = %g: the Bessel-tail extrapolation did not converge to %g", h.r, responseTol)
}

// wynn holds the last partial sums of a sequence and returns Wynn's
// epsilon-algorithm estimate of its limit after each new term.
type wynn struct {
	s [wynnLen]float64
	n int
}

const wynnLen = 20

// add appends the partial sum v and returns the extrapolated limit from the
// last (at most wynnLen) partial sums: the highest even column of the
// epsilon table, ε_{2K}, built on the oldest retained sums.
func (w *wynn) add(v float64) float64 {
	if w.n < wynnLen {
		w.s[w.n] = v
		w.n++
	} else {
		copy(w.s[:], w.s[1:])
		w.s[wynnLen-1] = v
	}
	m := w.n
	var prev, cur [wynnLen]float64 // ε_{k−1} and ε_k columns
	copy(cur[:m], w.s[:m])
	best := cur[m-1]
	for k := 1; k < m; k++ {
		var next [wynnLen]float64
		for i := 0; i+k < m; i++ {
			d := cur[i+1] - cur[i]
			if d == 0 {
				// The sequence is already stationary here: its value is the limit.
				return cur[i+1]
			}
			next[i] = prev[i+1] + 1/d
		}
		prev, cur = cur, next
		if k%2 == 0 {
			best = cur[m-1-k]
		}
	}
	return best
}
