package fields_test

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/memix-sim/memix/fields"
)

// TestAdaptiveStep: every accepted step is a ladder level within the
// advective limit computed independently from the diagnostics at the
// start of the step (Courant·h/max|u|, ceiling DtMax), levels change
// rarely, and coefficients are recomputed only for levels not cached.
func TestAdaptiveStep(t *testing.T) {
	p := activeParams(fields.Moments, 0)
	p.Lipid = fields.Lipid{}
	p.Inclusions.Partition = 0
	p.Inclusions.Activity = -20
	p.Stepping = fields.DefaultStepping(0.5)
	r := newRig(t, p)
	if err := r.m.InitIsotropic(0.5, rand.New(rand.NewPCG(21, 22))); err != nil {
		t.Fatal(err)
	}
	h := r.m.Grid().MinSpacing()
	levels := map[int]bool{}
	changes, prev := 0, -1
	for i := 0; i < 60; i++ {
		d := r.m.Diagnostics()
		info, err := r.s.Step()
		if err != nil {
			t.Fatal(err)
		}
		if info.Dt != r.s.LevelDt(info.Level) || info.Dt > info.Allowed {
			t.Fatalf("step %d: dt %g at level %d (%g), allowed %g", info.Step, info.Dt, info.Level, r.s.LevelDt(info.Level), info.Allowed)
		}
		if info.Limit == fields.LimitAdvection {
			if want := p.Stepping.Courant * h / d.MaxSpeed; relErr(info.Allowed, want) > 1e-12 {
				t.Errorf("step %d: advective limit %g, want Courant·h/max|u| = %g", info.Step, info.Allowed, want)
			}
		}
		if want := math.Min(p.Stepping.DtMax, p.Stepping.Courant*h/d.MaxSpeed); info.Allowed > want*(1+1e-12) {
			t.Errorf("step %d: allowed %g exceeds the advective limit %g", info.Step, info.Allowed, want)
		}
		levels[info.Level] = true
		if info.Level != prev {
			changes++
			prev = info.Level
		}
	}
	t.Logf("levels visited %v, %d changes, %d coefficient computations, t = %.3g", levels, changes, r.s.Recomputes(), r.m.Time())
	if r.s.Recomputes() > changes {
		t.Errorf("%d coefficient computations for %d level changes", r.s.Recomputes(), changes)
	}
	if changes > 20 {
		t.Errorf("the step changed level %d times in 60 steps", changes)
	}
}

// TestStepFloor: a limit below DtMin stops the run with a StepError naming
// the step and the allowed dt, and leaves the state untouched.
func TestStepFloor(t *testing.T) {
	p := activeParams(fields.Moments, 0)
	p.Inclusions.Activity = -200
	p.Stepping = fields.DefaultStepping(1)
	p.Stepping.DtMin = 0.5
	r := newRig(t, p)
	if err := r.m.InitIsotropic(0.5, rand.New(rand.NewPCG(23, 24))); err != nil {
		t.Fatal(err)
	}
	before := append([]complex128(nil), r.m.Spectral(1)...)
	_, err := r.s.Step()
	var se *fields.StepError
	if !errors.As(err, &se) || se.Step != 0 || !(se.Dt < 0.5) {
		t.Fatalf("error %v, want a StepError at step 0 with dt < 0.5", err)
	}
	t.Log(err)
	for i, v := range r.m.Spectral(1) {
		if v != before[i] {
			t.Fatal("a failed step changed the state")
		}
	}
}

// TestFFTCount: the FFTs per step are counted, and match the count the
// right-hand side is built from (four stages): moments 3 inverse
// transforms of the fields + 5 of u, ω, E₁₁, E₁₂ + 2 for the flux of c +
// 2 rotation and 4 flux transforms for Q = 16 per stage; kinetic
// (2M+1) + 5 + 2 + 6M = 8M + 8 per stage. Cahn–Hilliard with back-reaction
// adds 1 (φ) + 1 (φ³) + 4 (Korteweg) + 2 (flux of φ), partition 2 more.
func TestFFTCount(t *testing.T) {
	cases := []struct {
		model fields.InclusionModel
		m     int
		lipid bool
		want  int
	}{
		{fields.Moments, 0, false, 4 * 16},
		{fields.Kinetic, 8, false, 4 * 72},
		{fields.Kinetic, 3, true, 4 * (32 + 8 + 2)},
	}
	for _, c := range cases {
		p := activeParams(c.model, c.m)
		if !c.lipid {
			p.Lipid = fields.Lipid{}
			p.Inclusions.Partition = 0
		}
		r := newRig(t, p)
		info, err := r.s.Step()
		if err != nil {
			t.Fatal(err)
		}
		if info.FFTs != c.want {
			t.Errorf("%v M=%d lipid=%v: %d FFTs per step, want %d", c.model, c.m, c.lipid, info.FFTs, c.want)
		}
	}
}
