package flow_test

import (
	"math"
	"testing"

	"github.com/memix-sim/memix/flow"
)

// layerTraction solves the subphase boundary-value problem for the
// transverse mode by second-order finite differences and returns
// Γ_h = η·|v'(0)|. In the layer the velocity is v(z) e^{ikx} ŷ with zero
// pressure, so Stokes' equation reduces to v” = k² v, with v(0) = 1 at the
// membrane and v(H) = 0 at a no-slip wall, v'(H) = 0 at a free-slip
// bottom; a deep layer is truncated at z = 20/k with v = 0 there, which
// changes Γ by a relative 2e^{−40} (negligible). The interior stencil
// (v_{i−1} − 2v_i + v_{i+1})/h² and the one-sided derivative
// (−3v₀ + 4v₁ − v₂)/(2h) are both second order; the free-slip condition uses
// the mirror point v_{N+1} = v_{N−1}, also second order. The tridiagonal
// system is solved by the Thomas algorithm (diagonally dominant, stable).
func layerTraction(kind flow.SubphaseKind, eta, depth, k float64, n int) float64 {
	h0 := depth
	if kind == flow.Deep {
		h0 = 20 / k
	}
	h := h0 / float64(n)
	// Unknowns v_1..v_m: m = n−1 with a Dirichlet far end, n with free slip.
	m := n - 1
	if kind == flow.Slip {
		m = n
	}
	a := make([]float64, m) // sub-diagonal
	b := make([]float64, m) // diagonal
	c := make([]float64, m) // super-diagonal
	d := make([]float64, m) // right-hand side
	for i := range b {
		a[i], b[i], c[i] = 1, -(2 + k*k*h*h), 1
	}
	d[0] = -1 // v_0 = 1 moved to the right-hand side
	if kind == flow.Slip {
		a[m-1] = 2 // mirror point
	}
	for i := 1; i < m; i++ {
		w := a[i] / b[i-1]
		b[i] -= w * c[i-1]
		d[i] -= w * d[i-1]
	}
	v := make([]float64, m+1)
	v[0] = 1
	v[m] = d[m-1] / b[m-1]
	for i := m - 2; i >= 0; i-- {
		v[i+1] = (d[i] - c[i]*v[i+2]) / b[i]
	}
	dv := (-3*v[0] + 4*v[1] - v[2]) / (2 * h)
	return eta * math.Abs(dv)
}

// TestGammaAgainstBoundaryValueProblem checks Γ(k) of the deep, wall and
// slip subphases (MODEL.md §1 table, derived from the subphase Stokes
// problem) against an independent finite-difference solution of that
// problem. Convergence is shown: the plain error falls by 4 per halving of
// h (second order; checked to lie in [3.6, 4.4]), and the Richardson value
// R(h/2) = (4Γ_{h/2} − Γ_h)/3 of the finest pair must agree with the
// closed form within |R(h/2) − R(h)|, its own error estimate times 15
// (for an h⁴ error, |R(h/2) − Γ| ≈ |R(h) − R(h/2)|/15), plus a round-off
// floor: the tridiagonal solve leaves errors of ~n·eps in v and the
// derivative stencil divides them by h, so Γ_h carries an absolute
// round-off of ~n·eps·η/h, allowed 10 times that.
func TestGammaAgainstBoundaryValueProblem(t *testing.T) {
	const eta = 1.7
	for _, kind := range []flow.SubphaseKind{flow.Deep, flow.Wall, flow.Slip} {
		for _, kh := range []float64{0.05, 0.7, 3} {
			const depth = 0.4
			k := kh / depth
			want := flow.Subphase{Kind: kind, Viscosity: eta, Depth: depth}.Gamma(k)
			ns, length := []int{25, 50, 100, 200}, depth
			if kind == flow.Deep {
				ns, length = []int{200, 400, 800, 1600}, 20/k // a longer layer: more points
			}
			last := float64(ns[len(ns)-1])
			floor := 10 * last * eps * eta * last / length
			var gam, errs []float64
			for _, n := range ns {
				g := layerTraction(kind, eta, depth, k, n)
				gam = append(gam, g)
				errs = append(errs, math.Abs(g-want))
			}
			for i := 1; i < len(errs); i++ {
				if r := errs[i-1] / errs[i]; errs[i] > 100*floor && (r < 3.6 || r > 4.4) {
					t.Errorf("%s kH=%g: error ratio %.3f at n=%d, want ≈ 4 (second order)", kind, kh, r, ns[i])
				}
			}
			r1 := (4*gam[2] - gam[1]) / 3
			r2 := (4*gam[3] - gam[2]) / 3
			tol := math.Abs(r2-r1) + floor
			t.Logf("%s kH=%g: Γ=%.12g, FD errors %.2e %.2e %.2e %.2e, Richardson error %.2e (tol %.2e)",
				kind, kh, want, errs[0], errs[1], errs[2], errs[3], math.Abs(r2-want), tol)
			if math.Abs(r2-want) > tol {
				t.Errorf("%s kH=%g: Richardson Γ %.14g, closed form %.14g: |diff| %.3g > %.3g", kind, kh, r2, want, math.Abs(r2-want), tol)
			}
		}
	}
}

// TestGammaLimits: the k → 0 limits of the MODEL.md §1 table (η/H for a
// wall, 0 otherwise) and continuity of the small-kH series branch of the
// wall with the closed form.
func TestGammaLimits(t *testing.T) {
	w := flow.Subphase{Kind: flow.Wall, Viscosity: 2, Depth: 0.5}
	if got := w.Gamma(0); got != 4 {
		t.Errorf("wall Γ(0) = %g, want η/H = 4", got)
	}
	for _, s := range []flow.Subphase{{Kind: flow.Deep, Viscosity: 1}, {Kind: flow.Slip, Viscosity: 1, Depth: 1}, {Kind: flow.None}} {
		if got := s.Gamma(0); got != 0 {
			t.Errorf("%s Γ(0) = %g, want 0", s.Kind, got)
		}
	}
	// Just below and above the series switch at kH = 1e-8 the two branches
	// agree to round-off (the series error x⁴/45 ~ 1e-34 is invisible).
	lo, hi := w.Gamma(0.999e-8/w.Depth), w.Gamma(1.001e-8/w.Depth)
	if math.Abs(lo-hi) > 8*eps*lo {
		t.Errorf("wall Γ jumps at the series switch: %.17g vs %.17g", lo, hi)
	}
}
