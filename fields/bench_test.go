package fields_test

import (
	"fmt"
	"math/rand/v2"
	"sort"
	"testing"
	"time"

	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
)

// BenchmarkStep times one ETDRK4 step of the active model (flow, rotation
// and alignment on, no lipid) for the moment model and the kinetic model
// with M = 8 and 16, at 128², 256² and 512², single-threaded FFTW. Inside
// the same loop, right after each step, it times as many FFTs as the step
// made (FFTs/2 inverse + forward pairs on the model's plan, cycling over
// the evolved fields into separate arrays, so that, as in the step, the
// data is not already in cache), so that drift of the shared machine
// affects both alike, and reports the FFTs per step, the time of one FFT
// and the ratio step/(FFTs × FFT time), as the median of the per-iteration
// ratios (robust to bursts of load on a shared machine; "step/FFTs-mean"
// is the ratio of the totals). The target is a ratio ≤ 1.5.
func BenchmarkStep(b *testing.B) {
	for _, c := range []struct {
		name  string
		model fields.InclusionModel
		m     int
	}{{"moments", fields.Moments, 0}, {"kinetic-M8", fields.Kinetic, 8}, {"kinetic-M16", fields.Kinetic, 16}} {
		for _, n := range []int{128, 256, 512} {
			b.Run(fmt.Sprintf("%s/n=%d", c.name, n), func(b *testing.B) {
				p := baseParams(n, n, 64, 64, 1e-3)
				p.Inclusions = fields.Inclusions{Model: c.model, Harmonics: c.m, Activity: -2, Alignment: 0.8,
					TransDiffusion: 0.05, RotDiffusion: 0.1}
				r := newRig(b, p)
				if err := r.m.InitIsotropic(0.2, rand.New(rand.NewPCG(1, 1))); err != nil {
					b.Fatal(err)
				}
				g := r.m.Grid()
				nf := len(r.m.FieldNames())
				rs, ss := make([][]float64, nf), make([][]complex128, nf)
				for k := range rs {
					rs[k], ss[k] = g.NewReal(), g.NewSpectral()
				}
				r.run(b, 1) // coefficient tables
				b.ReportAllocs()
				var tStep, tPair time.Duration
				ffts := 0
				ratios := make([]float64, 0, 1024)
				for b.Loop() {
					t0 := time.Now()
					info, err := r.s.Step()
					t1 := time.Now()
					for k := 0; k < info.FFTs/2; k++ {
						f := k % nf
						r.plan.Inverse(rs[f], r.m.Spectral(f))
						r.plan.Forward(ss[f], rs[f])
					}
					t2 := time.Since(t1)
					tPair += t2
					tStep += t1.Sub(t0)
					if len(ratios) < cap(ratios) {
						ratios = append(ratios, float64(t1.Sub(t0))/float64(t2))
					}
					if err != nil {
						b.Fatal(err)
					}
					ffts = info.FFTs
				}
				b.ReportMetric(float64(ffts), "FFTs/step")
				sort.Float64s(ratios)
				b.ReportMetric(ratios[len(ratios)/2], "step/FFTs")
				b.ReportMetric(float64(tStep)/float64(tPair), "step/FFTs-mean")
				b.ReportMetric(float64(tPair)/float64(ffts*b.N), "ns/FFT")
			})
		}
	}
}

// BenchmarkVariableViscosityStep times one step of the demo model
// (demoParams: moments, passive lipids in disk domains, log-linear
// viscosity of contrast 10, default tolerance 10⁻⁸ and warm starts) at
// 128² and 256² (box scaled with the grid, so the spacing and the domain
// size stay those of the demo), and, in the same loop, one step of the
// same model with the uniform viscosity Membrane.Viscosity, each from the
// same initial state. It reports the median of the per-iteration ratios
// variable/constant (robust to bursts of load on the shared machine), the
// mean PCG iterations per solve, and the time per step of each.
func BenchmarkVariableViscosityStep(b *testing.B) {
	for _, n := range []int{128, 256} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			p := demoParams()
			l := 8 * float64(n) / 64
			p.Grid = fields.GridSpec{Nx: n, Ny: n, Lx: l, Ly: l}
			pc := p
			pc.Viscosity = flow.ViscosityLaw{}
			rigs := []rig{newRig(b, pc), newRig(b, p)}
			for _, r := range rigs {
				rng := rand.New(rand.NewPCG(21, 22))
				if err := r.m.InitIsotropic(0.2, rng); err != nil {
					b.Fatal(err)
				}
				if err := r.m.InitDisks(5*(n/64)*(n/64), 1, 0, rng); err != nil {
					b.Fatal(err)
				}
				r.run(b, 1) // coefficient tables, warm start
			}
			b.ReportAllocs()
			var tc, tv time.Duration
			var solves, iters int
			ratios := make([]float64, 0, 1024)
			for b.Loop() {
				t0 := time.Now()
				if _, err := rigs[0].s.Step(); err != nil {
					b.Fatal(err)
				}
				t1 := time.Now()
				info, err := rigs[1].s.Step()
				if err != nil {
					b.Fatal(err)
				}
				dc, dv := t1.Sub(t0), time.Since(t1)
				tc += dc
				tv += dv
				solves += info.FlowSolves
				iters += info.FlowIterations
				if len(ratios) < cap(ratios) {
					ratios = append(ratios, float64(dv)/float64(dc))
				}
			}
			sort.Float64s(ratios)
			b.ReportMetric(ratios[len(ratios)/2], "var/const")
			b.ReportMetric(float64(iters)/float64(solves), "iters/solve")
			b.ReportMetric(float64(tc.Nanoseconds())/float64(b.N), "ns/const-step")
			b.ReportMetric(float64(tv.Nanoseconds())/float64(b.N), "ns/var-step")
		})
	}
}
