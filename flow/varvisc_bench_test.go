package flow_test

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/memix-sim/memix/flow"
)

// BenchmarkVarSolver: one cold solve (tolerance 1e-8) at 256² on a
// domain-like viscosity (12 disks of phase A in a phase-B matrix,
// log-linear rule, interface width 2 cells, deep subphases on both sides)
// for phase contrasts 1–100, against the diagonal constant-viscosity solve
// as the baseline. Reports iterations per solve and time per operator
// application (a cold solve applies the operator iterations + 1 times);
// CG theory predicts iterations ∝ sqrt(contrast).
func BenchmarkVarSolver(b *testing.B) {
	g := vvGrid(b, 256, 256, 1, 1)
	p := vvPlan(b, g, "")
	m := vvMembranes()[1].m
	fx, fy := vvSmoothForce(g, p, 5, 2*math.Pi*8)
	ux, uy := g.NewSpectral(), g.NewSpectral()
	b.Run("diagonal", func(b *testing.B) {
		s, err := flow.NewSolver(g, m)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportAllocs()
		for b.Loop() {
			s.Solve(ux, uy, fx, fy)
		}
	})
	// One operator application against one transform pair (Forward +
	// Inverse) and one diagonal solve, interleaved in the same loop so that
	// the load of a shared machine affects all three alike.
	b.Run("apply-ratio", func(b *testing.B) {
		s := vvVarSolver(b, p, m, flow.PCGOptions{})
		if err := s.SetViscosity(vvDomainEta(g, 30)); err != nil {
			b.Fatal(err)
		}
		d, err := flow.NewSolver(g, m)
		if err != nil {
			b.Fatal(err)
		}
		r := g.NewReal()
		var tApply, tPair, tDiag time.Duration
		for b.Loop() {
			t0 := time.Now()
			s.Apply(ux, uy, fx, fy)
			t1 := time.Now()
			p.Inverse(r, ux)
			p.Forward(ux, r)
			t2 := time.Now()
			d.Solve(ux, uy, fx, fy)
			tApply, tPair, tDiag = tApply+t1.Sub(t0), tPair+t2.Sub(t1), tDiag+time.Since(t2)
		}
		b.ReportMetric(float64(tApply)/float64(tPair), "apply/fftpair")
		b.ReportMetric(float64(tApply)/float64(tDiag), "apply/diagonal")
	})
	for _, contrast := range []float64{1, 3, 10, 30, 100} {
		b.Run(fmt.Sprintf("contrast=%g", contrast), func(b *testing.B) {
			s := vvVarSolver(b, p, m, flow.PCGOptions{Tolerance: 1e-8, ColdStart: true})
			if err := s.SetViscosity(vvDomainEta(g, contrast)); err != nil {
				b.Fatal(err)
			}
			var it int
			b.ReportAllocs()
			for b.Loop() {
				res, err := s.Solve(ux, uy, fx, fy)
				if err != nil {
					b.Fatal(err)
				}
				it = res.Iterations
			}
			b.ReportMetric(float64(it), "iter/solve")
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(it+1), "ns/apply")
			b.ReportMetric(s.Contrast(), "contrast")
		})
	}
}

// BenchmarkVarSolverMean: iterations per cold solve for each choice of the
// preconditioner viscosity η̄, at 128² and phase contrast 100, with deep
// subphases and with a friction-dominated substrate (friction length
// 0.01 to 0.1 of the box across the phases), where η̄ weighs the viscous
// against the friction part of the preconditioner.
func BenchmarkVarSolverMean(b *testing.B) {
	g := vvGrid(b, 128, 128, 1, 1)
	p := vvPlan(b, g, "")
	fx, fy := vvSmoothForce(g, p, 5, 2*math.Pi*8)
	ux, uy := g.NewSpectral(), g.NewSpectral()
	eta := vvDomainEta(g, 100)
	for _, c := range []struct {
		name string
		m    flow.Membrane
	}{vvMembranes()[1], {"friction", flow.Membrane{Viscosity: 1, Friction: 1e4}}} {
		for _, mean := range []flow.ViscosityMean{flow.GeometricMean, flow.ArithmeticMean, flow.HarmonicMean, flow.ExtremesMean} {
			b.Run(fmt.Sprintf("%s/mean=%s", c.name, mean), func(b *testing.B) {
				s := vvVarSolver(b, p, c.m, flow.PCGOptions{Tolerance: 1e-8, ColdStart: true, Mean: mean})
				if err := s.SetViscosity(eta); err != nil {
					b.Fatal(err)
				}
				var it int
				for b.Loop() {
					res, err := s.Solve(ux, uy, fx, fy)
					if err != nil {
						b.Fatal(err)
					}
					it = res.Iterations
				}
				b.ReportMetric(float64(it), "iter/solve")
			})
		}
	}
}
