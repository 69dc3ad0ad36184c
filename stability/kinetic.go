package stability

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Linearisation of the kinetic model (MODEL.md §2.1, §2.3) [derived; the
// bulk form is Saintillan & Shelley, Phys. Fluids 20, 123304 (2008)].
//
// Angular modes m_n(x, t) = ∫ Ψ e^{inθ} dθ, so m_0 = c, m_{−n} = conj(m_n),
// m_1 = m_x + i m_y (polarity) and m_2/2 = Q_11 + i Q_12 with
// Q = ∫ Ψ (pp − I/2) dθ, because pp − I/2 = ½[[cos2θ, sin2θ], [sin2θ, −cos2θ]].
// Multiplying the Smoluchowski equation
//
//	∂tΨ + ∇·[(u + V₀p)Ψ] + ∂θ[(ω/2 + β p⊥·E·p)Ψ] = D_t∇²Ψ + D_r∂θ²Ψ
//
// by e^{inθ} and integrating over θ (by parts in θ: ∫∂θ(gΨ)e^{inθ} =
// −in∫gΨe^{inθ}; ∫cosθ Ψ e^{inθ} = (m_{n+1} + m_{n−1})/2, ∫sinθ Ψ e^{inθ} =
// (m_{n+1} − m_{n−1})/(2i)) gives, with e = E_11 + iE_12 and
// p⊥·E·p = −E_11 sin2θ + E_12 cos2θ = (i/2)(ē e^{2iθ} − e e^{−2iθ}):
//
//	∂t m_n + u·∇m_n + (V₀/2)[∂x(m_{n+1} + m_{n−1}) − i∂y(m_{n+1} − m_{n−1})]
//	  = i n (ω/2) m_n − (nβ/2)(ē m_{n+2} − e m_{n−2}) − n²D_r m_n + D_t∇²m_n.
//
// About the uniform isotropic state Ψ₀ = c₀/2π (m_n = c₀ δ_{n0}) the flow is
// first order, so u·∇m_n, the vorticity term and every product of E with a
// perturbation drop out; only −(nβ/2)(ē m_{n+2} − e m_{n−2}) with the
// unperturbed m_0 = c₀ survives, at n = ±2: β c₀ e for n = 2 and β c₀ ē for
// n = −2. For a perturbation ∝ e^{ikx} (k along x; the problem is isotropic)
// ∂x → ik and ∂y → 0, and ē, e are the amplitudes of the fields E_11 ∓ iE_12
// (not complex conjugates of amplitudes).
//
// Flow: f = σ₀∇·Q has f_x = ik σ₀ Q_11, f_y = ik σ₀ Q_12, and û = P f̂/D(k)
// with P = I − x̂x̂ keeps u_y = ik σ₀ Q_12/D only. Hence E_11 = ∂x u_x = 0,
// E_12 = ik u_y/2 = −σ₀k² Q_12/(2D), and with Q_12 = (m_2 − m_{−2})/(4i):
//
//	β c₀ e = iβc₀E_12 = −a (m_2 − m_{−2}),  β c₀ ē = +a (m_2 − m_{−2}),
//	a = βσ₀c₀k²/(8D(k)).
//
// The linear system is therefore
//
//	∂t m_n = −(ikV₀/2)(m_{n+1} + m_{n−1}) − (n²D_r + D_t k²) m_n
//	         − a (m_2 − m_{−2}) (δ_{n,2} − δ_{n,−2}),
//
// truncated at |n| ≤ M (m_{±(M+1)} = 0). At V₀ = 0 the combination
// m_2 − m_{−2} ∝ Q_12 (director at 45° to k) grows at
// −2a − 4D_r − D_tk² = −(βσ₀c₀/4)k²/D − 4D_r − D_tk² = s_act (MODEL.md §2.3),
// m_2 + m_{−2} ∝ Q_11 is passive, and every other n decays at −n²D_r − D_tk².
//
// Real form: with m_n = iⁿ b_n the self-propulsion coupling becomes real,
// ∂t b_n = (kV₀/2)(b_{n+1} − b_{n−1}) − (n²D_r + D_tk²) b_n, and since
// i^{±2} = −1 the flow term keeps its form in b: ∂t b_{±2} ∓= a(b_2 − b_{−2}).
// This is the matrix Operator returns (index n + M).
//
// Mirror symmetry: y → −y maps θ → −θ, m_n → m_{−n}, i.e. b_n → (−1)ⁿ b_{−n},
// and commutes with the operator. The odd sector b_n = −(−1)ⁿ b_{−n}
// (b_0 = 0; variables x_n = b_n, n = 1…M) holds Q_12 and is the only one the
// flow acts on:
//
//	∂t x_n = (kV₀/2)(x_{n+1} − x_{n−1}) − (n²D_r + D_tk²) x_n − 2a δ_{n2} x_n,  x_0 = 0.
//
// The even sector b_n = (−1)ⁿ b_{−n} (y_n = b_n, n = 0…M) is passive:
// ∂t y_0 = kV₀ y_1 − D_tk² y_0 and, for n ≥ 1, the same recursion without
// the flow term. It is the linearised Fokker–Planck operator of free active
// Brownian particles, whose L² norm never grows (the V₀ term is
// antisymmetric), so its eigenvalues have Re s ≤ 0: instabilities live in
// the odd sector, and Rate reports that sector.

// Kinetic is the linear operator of the kinetic model about the uniform
// isotropic state at a fixed angular truncation M, for any V₀. It owns
// scratch matrices and is not safe for concurrent use; eigenvalue calls
// allocate inside gonum/mat.
type Kinetic struct {
	p   Active
	m   int
	odd *mat.Dense // M × M
	evn *mat.Dense // (M+1) × (M+1)
	eig mat.Eigen
	val []complex128
}

// NewKinetic returns the kinetic operator of p truncated at |n| ≤ modes,
// 2 ≤ modes ≤ MaxModes (modes = 2 is the moment truncation; p.Modes is
// ignored). It returns an error if p or modes is invalid.
func NewKinetic(p Active, modes int) (*Kinetic, error) {
	q := p
	q.Modes = 0
	if err := q.Validate(); err != nil {
		return nil, err
	}
	if modes < 2 || modes > MaxModes {
		return nil, fmt.Errorf("stability: angular modes M = %d: must be in [2, %d]", modes, MaxModes)
	}
	return &Kinetic{
		p: p, m: modes,
		odd: mat.NewDense(modes, modes, nil),
		evn: mat.NewDense(modes+1, modes+1, nil),
		val: make([]complex128, modes+1),
	}, nil
}

// Modes returns the truncation M.
func (o *Kinetic) Modes() int { return o.m }

// Params returns the parameters of the operator.
func (o *Kinetic) Params() Active { return o.p }

// Operator sets dst to the full (2M+1) × (2M+1) real operator in the
// variables b_n = i^{−n} m_n, row and column n + M for −M ≤ n ≤ M, at
// wavenumber k ≥ 0 (see the derivation above). dst must be (2M+1) × (2M+1)
// or empty (it is then allocated); any other shape panics.
func (o *Kinetic) Operator(dst *mat.Dense, k float64) {
	n := 2*o.m + 1
	if dst.IsEmpty() {
		dst.ReuseAs(n, n)
	}
	if r, c := dst.Dims(); r != n || c != n {
		panic(fmt.Sprintf("stability: kinetic operator is %d×%d, dst is %d×%d", n, n, r, c))
	}
	dst.Zero()
	h := k * o.p.Speed / 2
	for i := -o.m; i <= o.m; i++ {
		r := i + o.m
		dst.Set(r, r, o.p.passive(i, k))
		if i < o.m {
			dst.Set(r, r+1, h)
		}
		if i > -o.m {
			dst.Set(r, r-1, -h)
		}
	}
	a := -o.p.ActiveDrive(k) / 2
	p2, m2 := o.m+2, o.m-2
	dst.Set(p2, p2, dst.At(p2, p2)-a)
	dst.Set(p2, m2, a)
	dst.Set(m2, p2, a)
	dst.Set(m2, m2, dst.At(m2, m2)-a)
}

// fillOdd and fillEven build the two mirror sectors at wavenumber k for
// active stress stress.
func (o *Kinetic) fillOdd(k, stress float64) {
	h := k * o.p.Speed / 2
	q := o.p
	q.Stress = stress
	o.odd.Zero()
	for n := 1; n <= o.m; n++ {
		r := n - 1
		d := o.p.passive(n, k)
		if n == 2 {
			d += q.ActiveDrive(k)
		}
		o.odd.Set(r, r, d)
		if n < o.m {
			o.odd.Set(r, r+1, h)
		}
		if n > 1 {
			o.odd.Set(r, r-1, -h)
		}
	}
}

func (o *Kinetic) fillEven(k float64) {
	h := k * o.p.Speed / 2
	o.evn.Zero()
	o.evn.Set(0, 0, o.p.passive(0, k))
	o.evn.Set(0, 1, 2*h)
	for n := 1; n <= o.m; n++ {
		o.evn.Set(n, n, o.p.passive(n, k))
		o.evn.Set(n, n-1, -h)
		if n < o.m {
			o.evn.Set(n, n+1, h)
		}
	}
}

// Eigenvalues sets dst to the 2M+1 growth rates at wavenumber k: dst[:M]
// from the odd (flow-coupled) sector, dst[M:] from the even (passive) one,
// each in the order gonum returns them. If dst is nil a new slice is
// allocated; otherwise it must have length 2M+1. It panics if the
// eigenvalue decomposition fails.
func (o *Kinetic) Eigenvalues(dst []complex128, k float64) []complex128 {
	if dst == nil {
		dst = make([]complex128, 2*o.m+1)
	}
	if len(dst) != 2*o.m+1 {
		panic(fmt.Sprintf("stability: Eigenvalues dst has length %d, want %d", len(dst), 2*o.m+1))
	}
	o.fillOdd(k, o.p.Stress)
	o.values(dst[:o.m], o.odd)
	o.fillEven(k)
	o.values(dst[o.m:], o.evn)
	return dst
}

func (o *Kinetic) values(dst []complex128, a *mat.Dense) {
	if !o.eig.Factorize(a, mat.EigenNone) {
		panic("stability: eigenvalue decomposition did not converge")
	}
	o.eig.Values(dst)
}

// Rate returns the leading growth rate at wavenumber k: the largest real
// part of the odd sector's eigenvalues, the only sector that can grow. At
// V₀ = 0 it is max(s_act, −D_r − D_tk²): where the active mode decays
// faster than the n = 1 mode, the latter leads. To search a wavenumber
// interval (Fastest, UnstableBands, CriticalStress) use a truncation that
// Rates found converged on that interval.
func (o *Kinetic) Rate(k float64) float64 { return o.rate(o.p.Stress, k) }

func (o *Kinetic) rate(stress, k float64) float64 {
	o.fillOdd(k, stress)
	v := o.val[:o.m]
	o.values(v, o.odd)
	s := math.Inf(-1)
	for _, z := range v {
		s = math.Max(s, real(z))
	}
	return s
}

// Curve sets dst[i] = Rate(ks[i]). It panics if the lengths differ.
func (o *Kinetic) Curve(dst, ks []float64) {
	if len(dst) != len(ks) {
		panic(fmt.Sprintf("stability: Curve lengths %d and %d differ", len(dst), len(ks)))
	}
	for i, k := range ks {
		dst[i] = o.Rate(k)
	}
}

// CriticalStress returns the threshold activity of the kinetic operator at
// its truncation for wavenumbers in [kMin, kMax]; see Active.CriticalStress.
func (o *Kinetic) CriticalStress(kMin, kMax float64) (Critical, error) {
	return criticalStress(o.rate, o.p, kMin, kMax)
}

// Convergence reports how the angular truncation of Rates was settled.
type Convergence struct {
	Modes    int     // truncation M whose rates were returned
	Previous int     // the truncation compared with, M/2
	Change   float64 // max over k of |s_M(k) − s_{M/2}(k)|
}

// DefaultTol is the relative convergence tolerance Rates uses for tol ≤ 0.
// The eigenvalue round-off of an M×M operator with entries up to M²D_r is
// of order ε·M²D_r ≈ 6×10⁻¹¹ D_r at M = MaxModes, so tighter tolerances
// cannot be met at the largest truncations.
const DefaultTol = 1e-8

// Rates sets dst[i] to the leading growth rate at ks[i] from the kinetic
// operator. With p.Modes = 0 it starts at M = 4 and doubles M until, for
// every k, |s_M(k) − s_{M/2}(k)| ≤ tol·(|s_M(k)| + D_r), returning an
// error if M would exceed MaxModes; with p.Modes > 0 it uses that M and
// reports the change from M/2 without judging it. tol ≤ 0 means
// DefaultTol. Because the n-th mode is damped at n²D_r while V₀ couples
// neighbours at kV₀/2, the error falls faster than geometrically once
// n²D_r ≫ kV₀; at V₀ = 0 every M ≥ 2 is exact. It panics if the lengths
// differ.
func Rates(dst []float64, p Active, ks []float64, tol float64) (Convergence, error) {
	if len(dst) != len(ks) {
		panic(fmt.Sprintf("stability: Rates lengths %d and %d differ", len(dst), len(ks)))
	}
	if err := p.Validate(); err != nil {
		return Convergence{}, err
	}
	if tol <= 0 {
		tol = DefaultTol
	}
	m := 4
	if p.Modes > 0 {
		m = p.Modes
	}
	prev := make([]float64, len(ks))
	run := func(m int, out []float64) {
		o, err := NewKinetic(p, m)
		if err != nil {
			panic(err) // p was validated and m is in range
		}
		o.Curve(out, ks)
	}
	run(m/2, prev)
	for {
		run(m, dst)
		c := Convergence{Modes: m, Previous: m / 2}
		ok := true
		for i := range dst {
			d := math.Abs(dst[i] - prev[i])
			c.Change = math.Max(c.Change, d)
			if !(d <= tol*(math.Abs(dst[i])+p.RotDiff)) {
				ok = false
			}
		}
		if ok || p.Modes > 0 {
			return c, nil
		}
		if 2*m > MaxModes {
			return c, fmt.Errorf("stability: growth rates not converged at the largest angular truncation M = %d: change %g from M = %d exceeds the tolerance %g·(|s| + D_r)", m, c.Change, m/2, tol)
		}
		copy(prev, dst)
		m *= 2
	}
}
