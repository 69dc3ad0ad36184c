package flow_test

import (
	"math"
	"testing"

	"github.com/memix-sim/memix/flow"
)

// TestVarSolverDissipationParts checks VarSolver.DissipationParts against
// three references:
//   - an independent evaluation (vvDissipation: all four velocity
//     gradients, the full strain rate with its trace, the grid average;
//     vvTractionPower for Σ(Γ + ξ)|û|²), for a velocity that is not
//     divergence-free (so that E₂₂ ≠ −E₁₁ is exercised) and for a
//     divergence-free one;
//   - for the divergence-free velocity, the energy form ⟨u, Au⟩ of the
//     solver's own operator (Apply), which it must equal (see VarSolver);
//   - with a uniform viscosity, flow.PowerBudget, part by part.
//
// Round-off: each side takes up to four transforms of the velocity
// gradients, each with relative error vvFFTTol in the L² norm. An error δE
// with ‖δE‖ ≤ τ‖E‖ changes ⟨2η E:E⟩ by at most 2·2η_max‖E‖‖δE‖ ≤
// 2τ·(η_max/η_min)·⟨2η E:E⟩, so a budget of 8·vvFFTTol·contrast relative to
// the total covers both sides.
func TestVarSolverDissipationParts(t *testing.T) {
	g := vvGrid(t, 48, 40, 1.2, 1.0)
	p := vvPlan(t, g, "")
	const contrast = 50
	eta := vvDomainEta(g, contrast)
	rt := 8 * vvFFTTol(g.RealLen()) * contrast
	var worst float64
	for _, c := range vvMembranes() {
		s := vvVarSolver(t, p, c.m, flow.PCGOptions{})
		if err := s.SetViscosity(eta); err != nil {
			t.Fatal(err)
		}
		sx, sy := vvSolenoidal(g, p, 5)
		rx, ry := vvRandomForce(g, p, 6)
		for _, u := range []struct {
			name   string
			ux, uy []complex128
		}{{"solenoidal", sx, sy}, {"random", rx, ry}} {
			mem, sub, fr := s.DissipationParts(u.ux, u.uy)
			got := mem + sub + fr
			want := vvDissipation(g, p, eta, u.ux, u.uy) + vvTractionPower(g, c.m, u.ux, u.uy)
			e := math.Abs(got-want) / want
			worst = math.Max(worst, e)
			if !(e <= rt) {
				t.Errorf("%s/%s: dissipation %.17g, independent %.17g: relative %.2g > %.2g", c.name, u.name, got, want, e, rt)
			}
			if u.name != "solenoidal" {
				continue
			}
			ax, ay := g.NewSpectral(), g.NewSpectral()
			s.Apply(ax, ay, u.ux, u.uy)
			form := vvDot(g, u.ux, u.uy, ax, ay)
			if e := math.Abs(got-form) / form; !(e <= rt) {
				t.Errorf("%s: dissipation %.17g, ⟨u, Au⟩ %.17g: relative %.2g > %.2g", c.name, got, form, e, rt)
			} else {
				worst = math.Max(worst, e)
			}
		}
		// Uniform viscosity 0.37: the parts of flow.PowerBudget.
		uni := g.NewReal()
		for i := range uni {
			uni[i] = 0.37
		}
		if err := s.SetViscosity(uni); err != nil {
			t.Fatal(err)
		}
		m := c.m
		m.Viscosity = 0.37
		ref, err := flow.NewSolver(g, m)
		if err != nil {
			t.Fatal(err)
		}
		b := flow.NewPowerBudget(ref)
		gm, gs, gf := s.DissipationParts(rx, ry)
		wm, ws, wf := b.DissipationParts(rx, ry)
		rtu := 8 * vvFFTTol(g.RealLen()) // contrast 1
		for _, part := range []struct {
			name      string
			got, want float64
		}{{"membrane", gm, wm}, {"subphase", gs, ws}, {"friction", gf, wf}} {
			d := math.Abs(part.got - part.want)
			if !(d <= rtu*(wm+ws+wf)) {
				t.Errorf("%s uniform: %s part %.17g, PowerBudget %.17g", c.name, part.name, part.got, part.want)
			}
			worst = math.Max(worst, d/(wm+ws+wf))
		}
	}
	t.Logf("largest relative difference %.2g (allowed %.2g at contrast %d)", worst, rt, contrast)
}

// TestVarSolverDissipationAllocs: DissipationParts allocates nothing.
func TestVarSolverDissipationAllocs(t *testing.T) {
	g := vvGrid(t, 32, 32, 1, 1)
	p := vvPlan(t, g, "")
	s := vvVarSolver(t, p, flow.Membrane{Viscosity: 1, Friction: 1}, flow.PCGOptions{})
	if err := s.SetViscosity(vvDomainEta(g, 10)); err != nil {
		t.Fatal(err)
	}
	ux, uy := vvSolenoidal(g, p, 1)
	if a := testing.AllocsPerRun(5, func() { s.DissipationParts(ux, uy) }); a != 0 {
		t.Errorf("DissipationParts allocates %g times", a)
	}
}
