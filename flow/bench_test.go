package flow_test

import (
	"fmt"
	"testing"

	"github.com/memix-sim/memix/flow"
)

// BenchmarkSolve: one constant-viscosity solve (both components) per
// iteration, out of place so that repeated solves do not shrink the data
// into subnormal numbers.
func BenchmarkSolve(b *testing.B) {
	m := membranesForTest()["wall/slip+friction"]
	for _, n := range []int{256, 512} {
		b.Run(fmt.Sprintf("%d²", n), func(b *testing.B) {
			g := gridForTest(b, n, n, 1, 1)
			s := solverForTest(b, g, m)
			fx, fy, ux, uy := g.NewSpectral(), g.NewSpectral(), g.NewSpectral(), g.NewSpectral()
			for i := range fx {
				fx[i], fy[i] = complex(1, 0.5), complex(-0.5, 1)
			}
			b.ReportAllocs()
			b.SetBytes(int64(4 * 16 * g.SpecLen())) // two fields read, two written
			for b.Loop() {
				s.Solve(ux, uy, fx, fy)
			}
		})
		// Baseline for ratios: one forward FFT of one real field.
		b.Run(fmt.Sprintf("%d²/forward-fft", n), func(b *testing.B) {
			g := gridForTest(b, n, n, 1, 1)
			p := planForTest(b, g)
			r, c := g.NewReal(), g.NewSpectral()
			b.ReportAllocs()
			for b.Loop() {
				p.Forward(c, r)
			}
		})
	}
}

// BenchmarkDissipation: the power budget's dissipation of one flow.
func BenchmarkDissipation(b *testing.B) {
	g := gridForTest(b, 256, 256, 1, 1)
	s := solverForTest(b, g, membranesForTest()["wall/slip+friction"])
	bud := flow.NewPowerBudget(s)
	ux, uy := g.NewSpectral(), g.NewSpectral()
	for i := range ux {
		ux[i], uy[i] = complex(1, 0.5), complex(-0.5, 1)
	}
	b.ReportAllocs()
	for b.Loop() {
		_ = bud.Dissipation(ux, uy)
	}
}

// BenchmarkResponse: the Hankel-transform response at one distance, for
// distances in units of the crossover length (the cost grows with r, the
// number of Bessel half-periods summed before the tail extrapolation).
func BenchmarkResponse(b *testing.B) {
	for _, name := range []string{"deep", "mixed"} {
		m := responseCases[name]
		lc := m.CrossoverLength()
		for _, x := range []float64{1e-3, 1, 1e3} {
			b.Run(fmt.Sprintf("%s/r=%g", name, x), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, _, err := m.Response(x * lc); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

// BenchmarkPointForceMap: one flow map (force, solve, three inverse FFTs).
func BenchmarkPointForceMap(b *testing.B) {
	g := gridForTest(b, 256, 256, 32, 32)
	fm := flow.NewFlowMap(solverForTest(b, g, flow.Membrane{Viscosity: 1, Friction: 1}), planForTest(b, g))
	ux, uy, om := g.NewReal(), g.NewReal(), g.NewReal()
	f := flow.PointForce{X: 16, Y: 16, Fx: 1, Width: 0.5}
	b.ReportAllocs()
	for b.Loop() {
		_ = fm.PointForce(ux, uy, om, f)
	}
}
