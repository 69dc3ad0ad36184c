package stability

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Linearisation of the moment model [derived] (MODEL.md §2.2 for V₀ = 0,
// extended here by the polarity m = ∫Ψp for V₀ ≠ 0). With
// ∫ p_i p_j Ψ = Q_ij + c δ_ij/2 and, in 2D,
// ∫ p_i p_j p_k Ψ = T_ijk + ¼(δ_ij m_k + δ_ik m_j + δ_jk m_i) (T traceless),
// the moments of the Smoluchowski equation linearised about c₀/2π are
//
//	∂t c = −V₀ ∇·m + D_t∇²c
//	∂t m = −V₀ (∇·Q + ∇c/2) − D_r m + D_t∇²m
//	∂t Q = −(V₀/4)(∇m + ∇mᵀ − I ∇·m) + (β/2) c₀ E − 4D_r Q + D_t∇²Q,
//
// closed by T = 0 (and m₄ = 0, which is all the quadratic closure
// 4q²/c leaves at linear order). For k = k x̂ and μ = i m (which makes the
// system real), in the variables (c, μ_x, μ_y, Q_11, Q_12):
//
//	∂t c    = −kV₀ μ_x − D_tk² c
//	∂t μ_x  =  kV₀ (Q_11 + c/2) − (D_r + D_tk²) μ_x
//	∂t μ_y  =  kV₀ Q_12 − (D_r + D_tk²) μ_y
//	∂t Q_11 = −(kV₀/4) μ_x − (4D_r + D_tk²) Q_11
//	∂t Q_12 = −(kV₀/4) μ_y − (4D_r + D_tk²) Q_12 + (β/2)c₀E_12
//
// with (β/2)c₀E_12 = −(βσ₀c₀/4)(k²/D) Q_12 from the flow (kinetic.go). The
// mirror-odd pair (μ_y, Q_12) is the flow-coupled sector; at V₀ = 0 its
// Q_12 rate is s_act.

// Moment is the linear operator of the moment model (c, m, Q; truncation
// T = 0) about the uniform isotropic state. It owns scratch and is not safe
// for concurrent use; eigenvalue calls allocate inside gonum/mat.
type Moment struct {
	p   Active
	a   *mat.Dense // 5 × 5
	odd *mat.Dense // 2 × 2: (μ_y, Q_12)
	eig mat.Eigen
	val []complex128
}

// Indices of the moment variables in Operator.
const (
	MomC   = iota // density c
	MomMx         // i·m_x
	MomMy         // i·m_y
	MomQ11        // Q_11
	MomQ12        // Q_12
	momN
)

// NewMoment returns the moment operator of p (p.Modes is ignored). It
// returns an error if p is invalid.
func NewMoment(p Active) (*Moment, error) {
	q := p
	q.Modes = 0
	if err := q.Validate(); err != nil {
		return nil, err
	}
	return &Moment{p: p, a: mat.NewDense(momN, momN, nil), odd: mat.NewDense(2, 2, nil), val: make([]complex128, momN)}, nil
}

// Operator sets dst to the 5 × 5 operator in (c, iμ_x, iμ_y, Q_11, Q_12)
// (indices MomC … MomQ12) at wavenumber k. dst must be 5 × 5 or empty.
func (o *Moment) Operator(dst *mat.Dense, k float64) { o.fill(dst, o.p.Stress, k) }

func (o *Moment) fill(dst *mat.Dense, stress, k float64) {
	if dst.IsEmpty() {
		dst.ReuseAs(momN, momN)
	}
	if r, c := dst.Dims(); r != momN || c != momN {
		panic(fmt.Sprintf("stability: moment operator is %d×%d, dst is %d×%d", momN, momN, r, c))
	}
	q := o.p
	q.Stress = stress
	v := k * o.p.Speed
	dt := o.p.TransDiff * k * k
	dr := o.p.RotDiff
	dst.Zero()
	dst.Set(MomC, MomC, -dt)
	dst.Set(MomC, MomMx, -v)
	dst.Set(MomMx, MomMx, -dr-dt)
	dst.Set(MomMx, MomQ11, v)
	dst.Set(MomMx, MomC, v/2)
	dst.Set(MomMy, MomMy, -dr-dt)
	dst.Set(MomMy, MomQ12, v)
	dst.Set(MomQ11, MomMx, -v/4)
	dst.Set(MomQ11, MomQ11, -4*dr-dt)
	dst.Set(MomQ12, MomMy, -v/4)
	dst.Set(MomQ12, MomQ12, -4*dr-dt+q.ActiveDrive(k))
}

// Eigenvalues sets dst (length 5, or nil to allocate) to the eigenvalues of
// the operator at k. It panics if the decomposition fails.
func (o *Moment) Eigenvalues(dst []complex128, k float64) []complex128 {
	if dst == nil {
		dst = make([]complex128, momN)
	}
	o.fill(o.a, o.p.Stress, k)
	if !o.eig.Factorize(o.a, mat.EigenNone) {
		panic("stability: eigenvalue decomposition did not converge")
	}
	return o.eig.Values(dst)
}

// Rate returns the leading growth rate of the flow-coupled (μ_y, Q_12)
// sector at wavenumber k.
func (o *Moment) Rate(k float64) float64 { return o.rate(o.p.Stress, k) }

func (o *Moment) rate(stress, k float64) float64 {
	o.fill(o.a, stress, k)
	for i, r := range []int{MomMy, MomQ12} {
		for j, c := range []int{MomMy, MomQ12} {
			o.odd.Set(i, j, o.a.At(r, c))
		}
	}
	if !o.eig.Factorize(o.odd, mat.EigenNone) {
		panic("stability: eigenvalue decomposition did not converge")
	}
	v := o.eig.Values(o.val[:2])
	return math.Max(real(v[0]), real(v[1]))
}

// CriticalStress returns the threshold activity of the moment model for
// wavenumbers in [kMin, kMax]; see Active.CriticalStress.
func (o *Moment) CriticalStress(kMin, kMax float64) (Critical, error) {
	return criticalStress(o.rate, o.p, kMin, kMax)
}
