package fields_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"

	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
)

// TestActiveGrowthRate seeds Q₁₂ ∝ sin(kx) (director at 45° to k) about
// the uniform isotropic state and compares its measured exponential rate
// with the linear stability result of MODEL.md §2.3 (reduced units,
// c₀ = 1):
//
//	s_act(k) = −(βσ_a/4) k²/D(k) − 4D_r − D_t k²
//
// [derived; the membrane analogue of Saintillan & Shelley, Phys. Fluids 20,
// 123304 (2008)]. Q₁₁ ∝ sin(kx) (the cos 2θ mode) drives only a
// longitudinal force, which the projection removes, and must decay at
// 4D_r + D_t k². D(k) comes from flow.Membrane.D.
//
// Tolerance: the issue asks for 1 %. The error budget is far below that:
// with amplitude 10⁻⁶ the nonlinear terms change the fundamental at
// relative order 10⁻¹² (their first effect is on the second harmonic), and
// the linear part is integrated exactly while the explicit active term,
// with s·dt ≤ 0.05, carries the ETDRK4 local error O((s dt)⁵) per step,
// below 10⁻⁶ relative over the run. We assert 1 % as asked and also a
// derived 10⁻⁵ (ten times the time-discretisation bound).
func TestActiveGrowthRate(t *testing.T) {
	cases := []struct {
		name     string
		mem      flow.Membrane
		lx       float64
		activity float64
	}{
		{"deep", deep, 4 * math.Pi, -2},
		{"wall", wall, math.Pi, -20},
	}
	for _, c := range cases {
		for _, model := range []fields.InclusionModel{fields.Moments, fields.Kinetic} {
			t.Run(fmt.Sprintf("%s/%v", c.name, model), func(t *testing.T) {
				k := 2 * math.Pi / c.lx
				const beta, dr, dtr = 1.0, 0.02, 0.05
				for _, mode := range []string{"Q12", "Q11"} {
					p := baseParams(16, 8, c.lx, c.lx/2, 0.02)
					p.Membrane = c.mem
					p.Inclusions = fields.Inclusions{Model: model, Harmonics: 8, Activity: c.activity,
						Alignment: beta, RotDiffusion: dr, TransDiffusion: dtr}
					want := -4*dr - dtr*k*k
					if mode == "Q12" {
						want += -beta * c.activity / 4 * k * k / c.mem.D(k)
					}
					r := newRig(t, p)
					if err := r.m.AddMode(mode, 1, 0, 1e-6, -math.Pi/2); err != nil {
						t.Fatal(err)
					}
					f := r.m.FieldIndex(mode)
					if f < 0 { // kinetic: Q = m₂/2 is stored as a₂, b₂
						f = map[string]int{"Q11": 3, "Q12": 4}[mode]
					}
					a0 := cmplx.Abs(coefAt(r.m, f, 1, 0))
					const T = 4.0
					r.run(t, int(T/p.Stepping.DtMax+0.5))
					got := math.Log(cmplx.Abs(coefAt(r.m, f, 1, 0))/a0) / r.m.Time()
					e := relErr(got, want)
					t.Logf("%s: s = %.10g, want %.10g, relative error %.2e", mode, got, want, e)
					if e > 0.01 || e > 1e-5 {
						t.Errorf("%s: growth rate %g, want %g (relative error %.2e)", mode, got, want, e)
					}
				}
			})
		}
	}
}
