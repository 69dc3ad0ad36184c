package main

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/sim"
)

func init() { register(newRunCmd) }

func newRunCmd(e *env) *cobra.Command {
	var (
		out     string
		resume  string
		force   bool
		quiet   bool
		threads int
		set     []string
		coarse  bool
	)
	c := &cobra.Command{
		Use:   "run CONFIG [-o OUTDIR] | run --resume OUTDIR",
		Short: "Simulate the membrane flow driven by active inclusions and the lipid mixing it causes",
		Long: `run advances the model of CONFIG in time and writes OUTDIR: config.resolved.yaml,
snapshots.h5 (+ snapshots.xdmf, snapshots.d/), series.csv, checkpoint.h5,
summary.json, figures/ and run.log (see docs/outputs.md).

SIGINT or SIGTERM finish the current step, write a checkpoint and the outputs
so far, and exit with status 3; --resume OUTDIR continues bit for bit. A run
whose fields stop being finite, or whose step falls below time.dt_min, stops
with status 1, keeps its last good checkpoint and prints the command that
continues it with a smaller step; so does a run whose outputs cannot be
written (a full disk), once space is freed. An existing OUTDIR is never
replaced without --force, and nothing is written to OUTDIR before the
initial state is built: a run that cannot start leaves OUTDIR as it was.

A configuration whose grid does not resolve the lipid interface (fewer than
2 points across ε√2) or the fastest-growing wavelength of the linear
instability (fewer than 4 points per wavelength) is refused with exit status
2, like any configuration error; --force-resolution runs it anyway (for a
quick look or a convergence study).`,
		Args: func(cmd *cobra.Command, args []string) error {
			if resume != "" {
				if len(args) != 0 {
					return usageError{errors.New("run --resume OUTDIR takes no CONFIG (the recorded config.resolved.yaml is used)")}
				}
				if out != "" || force || coarse {
					return usageError{errors.New("run --resume cannot be combined with -o, --force or --force-resolution")}
				}
				return nil
			}
			if len(args) != 1 {
				return usageError{fmt.Errorf("run takes one CONFIG file, got %d arguments", len(args))}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			opt := sim.JobOptions{
				Version: "memix " + version, Threads: threads, Force: force, Quiet: quiet,
				Stderr: e.stderr, Set: set, ForceResolution: coarse,
			}
			var (
				sum *sim.Summary
				err error
				dir = resume
			)
			if resume != "" {
				sum, err = sim.Resume(cmd.Context(), resume, opt)
			} else {
				cfg, cerr := loadConfig(args[0])
				if cerr != nil {
					return cerr
				}
				dir = out
				if dir == "" {
					dir = strings.TrimSuffix(filepath.Base(args[0]), filepath.Ext(args[0])) + "-out"
				}
				sum, err = sim.Start(cmd.Context(), cfg, dir, opt)
			}
			if sum != nil && !quiet {
				printRunSummary(e, dir, sum)
			}
			if len(config.Problems(err)) > 0 {
				src := filepath.Join(dir, sim.ResolvedFile)
				if resume == "" {
					src = args[0]
				}
				if len(set) > 0 {
					src += " with --set"
				}
				return configError{src, err}
			}
			return err
		},
	}
	f := c.Flags()
	f.StringVarP(&out, "output", "o", "", "output directory (default: CONFIG's name with -out)")
	f.StringVar(&resume, "resume", "", "continue the run in `OUTDIR` from its checkpoint")
	f.BoolVar(&force, "force", false, "replace an existing output directory")
	f.BoolVar(&coarse, "force-resolution", false, "run even if the grid does not resolve the lipid interface or the fastest-growing wavelength")
	f.BoolVar(&quiet, "quiet", false, "no progress or summary on the terminal (run.log still records it)")
	f.IntVar(&threads, "threads", 0, "FFT threads (default: grid.threads)")
	f.StringArrayVar(&set, "set", nil, "override a configuration key, `key=value` (repeatable; with --resume only time.* and output.*)")
	return c
}

// printRunSummary prints where the outputs are and the main results.
func printRunSummary(e *env, dir string, s *sim.Summary) {
	doc := report.Doc{Fields: []report.Field{
		{Key: "status", Value: s.Status},
		{Key: "output", Value: dir},
		{Key: "figures", Value: filepath.Join(dir, sim.FiguresDir)},
		{Key: "steps", Value: s.Steps},
		{Key: "time", Title: "simulated time", Value: fmt.Sprintf("%.4g s of %.4g s", s.TimeS, s.EndTimeS)},
		{Key: "wall", Title: "wall time", Value: fmt.Sprintf("%.1f s", s.WallTimeS)},
	}}
	if p := s.Prediction; p != nil {
		doc.Fields = append(doc.Fields, report.Field{Key: "stability", Title: "linear stability", Value: p.Text})
	}
	if m, ok := s.Mixing["mixnorm"]; ok {
		txt := fmt.Sprintf("mix-norm fell to %.3g of its initial value", m.Ratio)
		if m.ThresholdTimeS != nil {
			txt += fmt.Sprintf("; reached the threshold at %.4g s", *m.ThresholdTimeS)
		}
		doc.Fields = append(doc.Fields, report.Field{Key: "mixing", Value: txt})
	}
	doc.Fields = append(doc.Fields, report.Field{Key: "note", Value: "model predictions, not measurements"})
	_ = report.Write(e.stdout, report.Text, doc)
}
