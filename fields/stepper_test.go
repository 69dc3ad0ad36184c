package fields_test

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
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
		d := r.diag(t)
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

// TestInitialConditions: the aligned state has the requested order and
// director in both models (Diagnostics), the lipid patterns stay within
// their phases and keep the symmetric stripe mean at 0, and bad arguments
// are rejected with their valid range.
func TestInitialConditions(t *testing.T) {
	for _, model := range []fields.InclusionModel{fields.Moments, fields.Kinetic} {
		r := newRig(t, activeParams(model, 6))
		if err := r.m.InitAligned(0.3, 0.7); err != nil {
			t.Fatal(err)
		}
		d := r.diag(t)
		// The local order is a grid average: round-off n·ε with n points.
		tol := float64(r.m.Grid().RealLen()) * eps
		if math.Abs(d.Order-0.7) > tol || math.Abs(d.GlobalOrder-0.7) > tol || math.Abs(d.Director-0.3) > tol || d.MeanDensity != 1 {
			t.Errorf("%v aligned: order %g, global %g, director %g, ⟨c⟩ %g; want 0.7, 0.7, 0.3, 1", model, d.Order, d.GlobalOrder, d.Director, d.MeanDensity)
		}
		if d.KineticEnergy != 0 {
			t.Errorf("%v: a uniform state drives a flow (KE %g)", model, d.KineticEnergy)
		}
	}
	// Lipid patterns on a grid that resolves the interface width √2ε (1.4
	// spacings at 128²).
	r := newRig(t, lipidParams(128, 128, 2*math.Pi, 2*math.Pi, 0.01,
		fields.Lipid{Model: fields.CahnHilliard, Mobility: 1, Interface: 0.1}))
	rng := rand.New(rand.NewPCG(31, 32))
	for _, init := range []struct {
		name string
		f    func() error
	}{
		{"stripes", func() error { return r.m.InitStripes(2, fields.AxisY, 0) }},
		{"halves", func() error { return r.m.InitHalves(fields.AxisX, 0.2) }},
		{"disks", func() error { return r.m.InitDisks(4, 0.8, 0, rng) }},
	} {
		if err := init.f(); err != nil {
			t.Fatal(err)
		}
		r.views(t)
		phi := r.m.Views()[0].Data
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range phi {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		// Dealiasing the tanh profiles overshoots ±1 by their truncation
		// error, e^{−πwk_max/2} ≈ 10⁻⁴ (see TestCahnHilliardInterface); the
		// stripes' bulk value is tanh(P/(2πw)) ≥ 0.998 (InitStripes).
		if lo < -1.001 || hi > 1.001 || lo > -0.99 || hi < 0.99 {
			t.Errorf("%s: φ in [%g, %g], want both phases, within [−1, 1]", init.name, lo, hi)
		}
		if d := r.diag(t); init.name != "disks" && math.Abs(d.LipidMean) > 1e-15 {
			t.Errorf("%s: ⟨φ⟩ = %g, want 0 by symmetry", init.name, d.LipidMean)
		}
	}
	r = newRig(t, activeParams(fields.Moments, 0))
	for _, err := range []error{
		r.m.AddMode("Q11", 20, 0, 1, 0),
		r.m.AddMode("psi", 1, 0, 1, 0),
		r.m.InitAligned(0, 1.5),
		r.m.InitIsotropic(1, rand.New(rand.NewPCG(1, 1))),
		r.m.InitStripes(0, fields.AxisX, 0),
		r.m.InitDisks(1, -1, 0, rand.New(rand.NewPCG(1, 1))),
	} {
		if err == nil {
			t.Error("bad initial-condition arguments accepted")
		} else if !strings.Contains(err.Error(), "must") && !strings.Contains(err.Error(), "valid") && !strings.Contains(err.Error(), "need") {
			t.Errorf("error %q does not state the valid range", err)
		}
	}
}
