package fields_test

import (
	"math"
	"testing"

	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

const eps = 0x1p-52 // float64 machine epsilon

// deep is a membrane between two deep subphases (L_SD = 1 in reduced
// units), wall a membrane over a thin layer on a no-slip wall.
var (
	deep = flow.Membrane{Viscosity: 1,
		Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5},
		Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}}
	wall = flow.Membrane{Viscosity: 1,
		Lower: flow.Subphase{Kind: flow.Wall, Viscosity: 1, Depth: 0.1}}
)

// baseParams returns valid parameters on an nx × ny grid of lx × ly with a
// fixed step dt.
func baseParams(nx, ny int, lx, ly, dt float64) fields.Params {
	s := fields.DefaultStepping(dt)
	s.Fixed = true
	return fields.Params{
		Membrane: deep,
		Grid:     fields.GridSpec{Nx: nx, Ny: ny, Lx: lx, Ly: ly},
		Stepping: s,
	}
}

type rig struct {
	m    *fields.Model
	s    *fields.Stepper
	plan spectral.Plan
}

func newRig(t testing.TB, p fields.Params) rig {
	t.Helper()
	g, err := p.Grid.New()
	if err != nil {
		t.Fatal(err)
	}
	plan, err := spectral.NewPlan(g, spectral.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(plan.Close)
	m, err := fields.NewModel(p, plan, nil)
	if err != nil {
		t.Fatal(err)
	}
	return rig{m: m, s: fields.NewStepper(m), plan: plan}
}

// run takes n steps and fails the test on error.
func (r rig) run(t testing.TB, n int) {
	t.Helper()
	for i := 0; i < n; i++ {
		if _, err := r.s.Step(); err != nil {
			t.Fatal(err)
		}
	}
}

// coefAt returns the coefficient of mode (nx, ny), nx ≥ 0, of field f.
func coefAt(m *fields.Model, f, nx, ny int) complex128 {
	g := m.Grid()
	return m.Spectral(f)[g.RowOfModeY(ny)*g.Nkx()+nx]
}

func field(t testing.TB, m *fields.Model, name string) int {
	t.Helper()
	f := m.FieldIndex(name)
	if f < 0 {
		t.Fatalf("no field %q in %v", name, m.FieldNames())
	}
	return f
}

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

// diag returns the diagnostics and fails the test on error.
func (r rig) diag(t testing.TB) fields.Diagnostics {
	t.Helper()
	d, err := r.m.Diagnostics()
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// views updates the views and fails the test on error.
func (r rig) views(t testing.TB) {
	t.Helper()
	if err := r.m.UpdateViews(); err != nil {
		t.Fatal(err)
	}
}
