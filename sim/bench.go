package sim

import (
	"context"
	"fmt"
	"math/rand/v2"
	"runtime"
	"sort"
	"time"

	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// BenchCase is one configuration of the whole-solver benchmark: the active
// model (flow, rotation and alignment on, no lipid) on an n × n grid.
type BenchCase struct {
	Model     fields.InclusionModel
	Harmonics int // kinetic model only
	N         int
}

// Name is the case's label, e.g. "kinetic-M8/256".
func (c BenchCase) Name() string {
	if c.Model == fields.Kinetic {
		return fmt.Sprintf("kinetic-M%d/%d", c.Harmonics, c.N)
	}
	return fmt.Sprintf("moments/%d", c.N)
}

// BenchResult is what Bench measured for one case.
type BenchResult struct {
	Case        BenchCase
	Steps       int
	StepTime    time.Duration // median time of one step
	FFTsPerStep int
	FFTTime     time.Duration // median time of one FFT (half a forward+inverse pair), timed right after each step
	// Ratio is the median over steps of step time/(FFTs per step × FFT
	// time), the pair timed in the same iteration so that load on a shared
	// machine affects both alike.
	Ratio         float64
	AllocsPerStep float64 // heap allocations per step (0 is the target)
	// BytesPerPoint is the memory of state, scratch and transform buffers
	// per grid point: Go heap growth while building the model and stepper
	// plus FFTW's buffers (not on the Go heap).
	BytesPerPoint float64
}

// Bench times the ETDRK4 step of each case for at least steps steps and
// minTime of wall time, with threads FFT threads (the pointwise kernels
// run on one goroutine). The parameters are reduced-unit values that keep
// the flow active without restricting the step: the figures are for the
// cost of a step, not for a physical scenario.
func Bench(ctx context.Context, cases []BenchCase, steps int, minTime time.Duration, threads int, progress func(string)) ([]BenchResult, error) {
	var out []BenchResult
	for _, c := range cases {
		if err := ctx.Err(); err != nil {
			return out, err
		}
		r, err := benchOne(c, steps, minTime, threads)
		if err != nil {
			return out, fmt.Errorf("bench %s: %w", c.Name(), err)
		}
		out = append(out, r)
		if progress != nil {
			progress(fmt.Sprintf("%-16s %8.3f ms/step  %4d FFTs  ratio %.2f", c.Name(), float64(r.StepTime)/1e6, r.FFTsPerStep, r.Ratio))
		}
	}
	return out, nil
}

func heapAlloc() uint64 {
	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	return ms.HeapAlloc
}

func benchOne(c BenchCase, steps int, minTime time.Duration, threads int) (BenchResult, error) {
	res := BenchResult{Case: c}
	g, err := spectral.NewGrid(c.N, c.N, 64, 64)
	if err != nil {
		return res, err
	}
	p := fields.Params{
		Grid: fields.GridSpec{Nx: c.N, Ny: c.N, Lx: 64, Ly: 64},
		Inclusions: fields.Inclusions{Model: c.Model, Harmonics: c.Harmonics, Activity: -2, Alignment: 0.8,
			TransDiffusion: 0.05, RotDiffusion: 0.1, Closure: fields.Quadratic},
		Lipid:    fields.Lipid{Model: fields.NoLipid},
		Stepping: fields.DefaultStepping(1e-3),
	}
	p.Membrane = flow.Membrane{Viscosity: 1,
		Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}, Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}}
	before := heapAlloc()
	plan, err := spectral.NewPlan(g, spectral.Options{Threads: threads})
	if err != nil {
		return res, err
	}
	defer plan.Close()
	m, err := fields.NewModel(p, plan, nil)
	if err != nil {
		return res, err
	}
	st := fields.NewStepper(m)
	if err := m.InitIsotropic(0.2, rand.New(rand.NewPCG(1, 1))); err != nil {
		return res, err
	}
	if _, err := st.Step(); err != nil { // coefficient tables
		return res, err
	}
	fftwBytes := 0
	if plan.Backend() == string(spectral.FFTW) {
		fftwBytes = 8*g.RealLen() + 2*16*g.SpecLen()
	}
	res.BytesPerPoint = float64(int64(heapAlloc()-before)+int64(fftwBytes)) / float64(g.RealLen())

	nf := len(m.FieldNames())
	rs, ss := make([][]float64, nf), make([][]complex128, nf)
	for k := range rs {
		rs[k], ss[k] = g.NewReal(), g.NewSpectral()
	}
	var ms0, ms1 runtime.MemStats
	var stepT, fftT, ratios []float64
	start := time.Now()
	runtime.ReadMemStats(&ms0)
	mallocs := uint64(0)
	for n := 0; n < steps || time.Since(start) < minTime; n++ {
		t0 := time.Now()
		info, err := st.Step()
		t1 := time.Now()
		if err != nil {
			return res, err
		}
		runtime.ReadMemStats(&ms1)
		mallocs += ms1.Mallocs - ms0.Mallocs
		for k := 0; k < info.FFTs/2; k++ {
			f := k % nf
			plan.Inverse(rs[f], m.Spectral(f))
			plan.Forward(ss[f], rs[f])
		}
		t2 := time.Since(t1)
		runtime.ReadMemStats(&ms0)
		res.FFTsPerStep = info.FFTs
		stepT = append(stepT, float64(t1.Sub(t0)))
		fftT = append(fftT, float64(t2)/float64(info.FFTs))
		ratios = append(ratios, float64(t1.Sub(t0))/float64(t2))
		res.Steps++
	}
	res.StepTime = time.Duration(median(stepT))
	res.FFTTime = time.Duration(median(fftT))
	res.Ratio = median(ratios)
	res.AllocsPerStep = float64(mallocs) / float64(res.Steps)
	return res, nil
}

func median(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return s[len(s)/2]
}
