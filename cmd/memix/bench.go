package main

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/sim"
)

func init() { register(newBenchCmd) }

func newBenchCmd(e *env) *cobra.Command {
	var (
		out     report.Flags
		sizes   string
		models  string
		steps   int
		minTime time.Duration
		threads int
	)
	c := &cobra.Command{
		Use:   "bench",
		Short: "Benchmark the whole solver: time per step against the FFTs it makes, allocations and memory",
		Long: `bench times the ETDRK4 step of the active model (flow, rotation, alignment; no lipid) for
each model and grid size, and right after each step as many FFTs as the step made, so that
the ratio step/(FFTs × FFT time) is measured under the same load. It also reports heap
allocations per step and the memory of state, scratch and transform buffers per grid point.
Timings on a shared machine vary; compare ratios from one run.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			var cases []sim.BenchCase
			for _, ms := range strings.Split(models, ",") {
				ms = strings.TrimSpace(ms)
				bc := sim.BenchCase{}
				switch {
				case ms == "moments":
					bc.Model = fields.Moments
				case strings.HasPrefix(ms, "kinetic-"):
					m, err := strconv.Atoi(strings.TrimPrefix(ms, "kinetic-"))
					if err != nil || m < 2 || m > 128 {
						return usageError{fmt.Errorf("--models: %q: want moments or kinetic-M with 2 ≤ M ≤ 128", ms)}
					}
					bc.Model, bc.Harmonics = fields.Kinetic, m
				default:
					return usageError{fmt.Errorf("--models: %q: want moments or kinetic-M, e.g. kinetic-8", ms)}
				}
				for _, ns := range strings.Split(sizes, ",") {
					n, err := strconv.Atoi(strings.TrimSpace(ns))
					if err != nil || n < 8 || n%2 != 0 {
						return usageError{fmt.Errorf("--sizes: %q: want even grid sizes ≥ 8, e.g. 128,256", ns)}
					}
					bc.N = n
					cases = append(cases, bc)
				}
			}
			res, err := sim.Bench(cmd.Context(), cases, steps, minTime, threads, func(s string) { fmt.Fprintln(e.stderr, s) })
			if err != nil {
				return err
			}
			t := &report.Table{Key: "cases", Columns: []report.Column{
				{Key: "case"}, {Key: "steps"}, {Key: "step_time", Title: "time/step", Unit: "s"},
				{Key: "ffts_per_step", Title: "FFTs/step"}, {Key: "fft_time", Title: "time/FFT", Unit: "s"},
				{Key: "ratio", Title: "step/(FFTs×FFT)"}, {Key: "allocs_per_step", Title: "allocs/step"},
				{Key: "bytes_per_point", Title: "bytes/point"},
			}}
			for _, r := range res {
				t.Rows = append(t.Rows, []any{r.Case.Name(), r.Steps, r.StepTime.Seconds(), r.FFTsPerStep,
					r.FFTTime.Seconds(), r.Ratio, r.AllocsPerStep, r.BytesPerPoint})
			}
			t.Notes = []string{
				"target: step/(FFTs×FFT) ≤ 1.5 and no allocation in the step",
				"allocs/step counts every heap allocation of the process while stepping (runtime",
				"background work included); the Go tests assert that the step itself allocates nothing",
			}
			return report.Write(e.stdout, f, report.Doc{
				Fields: []report.Field{{Key: "threads", Title: "FFT threads", Value: threads}},
				Tables: []*report.Table{t},
			})
		},
	}
	fl := c.Flags()
	fl.StringVar(&sizes, "sizes", "128,256,512", "grid sizes n (n × n), comma-separated")
	fl.StringVar(&models, "models", "moments,kinetic-8,kinetic-16", "models: moments, kinetic-M (M harmonics), comma-separated")
	fl.IntVar(&steps, "steps", 20, "at least this many steps per case")
	fl.DurationVar(&minTime, "min-time", 2*time.Second, "and at least this much wall time per case")
	fl.IntVar(&threads, "threads", 1, "FFT threads")
	out.Bind(fl)
	return c
}
