package fields_test

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// A small splay–bend perturbation of extensile inclusions (σ_a < 0,
// rod-like β = 1) on a membrane between two deep subphases grows at the
// rate of linear stability theory, s = −(βσ_a/4)k²/D(k) − 4D_r − D_t k².
// The numbers are model predictions in reduced units.
func Example() {
	deep := flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}
	p := fields.Params{
		Membrane: flow.Membrane{Viscosity: 1, Upper: deep, Lower: deep},
		Inclusions: fields.Inclusions{Model: fields.Moments, Activity: -2, Alignment: 1,
			TransDiffusion: 0.05, RotDiffusion: 0.02},
		Grid:     fields.GridSpec{Nx: 16, Ny: 8, Lx: 4 * math.Pi, Ly: 2 * math.Pi},
		Stepping: fields.DefaultStepping(0.05),
	}
	g, _ := p.Grid.New()
	plan, _ := spectral.NewPlan(g, spectral.Options{})
	defer plan.Close()
	m, err := fields.NewModel(p, plan, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	s := fields.NewStepper(m)
	_ = m.AddMode("Q12", 1, 0, 1e-6, -math.Pi/2) // Q₁₂ = 10⁻⁶ sin(kx), k = 1/2
	q := m.Spectral(m.FieldIndex("Q12"))
	a0 := math.Hypot(real(q[1]), imag(q[1])) // coefficient of mode (1, 0)
	for m.Time() < 4-1e-9 {
		if _, err := s.Step(); err != nil {
			fmt.Println(err)
			return
		}
	}
	got := math.Log(math.Hypot(real(q[1]), imag(q[1]))/a0) / m.Time()
	k := 0.5
	want := 2.0/4*k*k/p.Membrane.D(k) - 4*0.02 - 0.05*k*k
	fmt.Printf("growth rate %.6f, linear theory %.6f\n", got, want)
	// Output: growth rate 0.074167, linear theory 0.074167
}

// A membrane whose φ = +1 lipid phase is ten times more viscous than the
// φ = −1 phase (log-linear mixing rule): NewModel builds the iterative
// flow solver from Params.Viscosity and Params.Solver, and every step
// reports its work. The numbers are model predictions in reduced units.
func ExampleNewModel_compositionViscosity() {
	deep := flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}
	p := fields.Params{
		Membrane:  flow.Membrane{Viscosity: 1, Upper: deep, Lower: deep},
		Viscosity: flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: 10, PhaseB: 1},
		Solver:    flow.PCGOptions{Tolerance: 1e-8},
		Inclusions: fields.Inclusions{Model: fields.Moments, Activity: -2, Alignment: 1,
			TransDiffusion: 0.05, RotDiffusion: 0.02},
		Lipid:    fields.Lipid{Model: fields.Passive, Diffusivity: 0.01},
		Grid:     fields.GridSpec{Nx: 32, Ny: 32, Lx: 8, Ly: 8},
		Stepping: fields.DefaultStepping(0.05),
	}
	g, _ := p.Grid.New()
	plan, _ := spectral.NewPlan(g, spectral.Options{})
	defer plan.Close()
	m, err := fields.NewModel(p, plan, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	_ = m.InitStripes(2, fields.AxisX, 0)
	_ = m.AddMode("Q12", 1, 0, 0.01, 0) // a shear flow along the stripes
	s := fields.NewStepper(m)
	for i := 0; i < 3; i++ {
		info, err := s.Step()
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("step %d: %d solves, residual ≤ 1e-8: %v, several iterations: %v\n",
			info.Step, info.FlowSolves, info.FlowResidual <= 1e-8, info.FlowMaxIterations > 1)
	}
	// Output:
	// step 1: 4 solves, residual ≤ 1e-8: true, several iterations: true
	// step 2: 4 solves, residual ≤ 1e-8: true, several iterations: true
	// step 3: 4 solves, residual ≤ 1e-8: true, several iterations: true
}
