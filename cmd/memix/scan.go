package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"time"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/scan"
	"github.com/memix-sim/memix/sim"
)

func init() { register(newScanCmd) }

// sweepError is a sweep file that cannot be read or is invalid. It exits
// with status 2 like a bad configuration file, which it is for a scan: it
// unwraps to a *config.FileError, which exitCode maps to 2.
type sweepError struct{ fe *config.FileError }

func (e sweepError) Error() string { return e.fe.Path + ": " + e.fe.Err.Error() }
func (e sweepError) Unwrap() error { return e.fe }

// loadSweep reads a sweep file with the config package's unit parser for
// its ranges.
func loadSweep(path string) (*scan.Sweep, error) {
	text, err := os.ReadFile(path)
	if err != nil {
		return nil, sweepError{&config.FileError{Path: path, Err: err}}
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	s, err := scan.ParseSweep(text, filepath.Dir(abs), scan.ConfigConverter)
	if err != nil {
		return nil, sweepError{&config.FileError{Path: path, Err: err}}
	}
	// Points that coincide are a mistake in the file, too.
	if _, err := s.Points(); err != nil {
		return nil, sweepError{&config.FileError{Path: path, Err: err}}
	}
	return s, nil
}

// memixProgram is the memix that runs the points: the given path, or this
// very program.
func memixProgram(given string) (string, error) {
	p := given
	if p == "" {
		exe, err := os.Executable()
		if err != nil {
			return "", fmt.Errorf("cannot find this program's path for the runs (%v); give it with --memix", err)
		}
		p = exe
	}
	p, err := filepath.Abs(p)
	if err != nil {
		return "", err
	}
	if real, err := filepath.EvalSymlinks(p); err == nil {
		p = real
	}
	return p, nil
}

func newScanCmd(e *env) *cobra.Command {
	var (
		out         report.Flags
		dir         string
		workers     int
		threads     int
		dryRun      bool
		slurm       bool
		partition   string
		limit       string
		cpus        int
		mem         string
		maxParallel int
		jobName     string
		slurmExtra  []string
		program     string
	)
	c := &cobra.Command{
		Use:   "scan SWEEP -o SCANDIR [--workers N] [--threads T] [--dry-run] | scan SWEEP -o SCANDIR --slurm [--partition P --time T --cpus C --mem M --max-parallel K] [--dry-run]",
		Short: "Run a parameter sweep of memix runs on this machine or as a Slurm job array",
		Long: `scan expands the sweep file SWEEP (a base configuration and the keys it varies; see
examples/sweeps/README.md) into SCANDIR: one folder per point with its configuration.
Every point is validated first, as memix run would; nothing runs if one is invalid.

Without --slurm the points run here, --workers at a time, each with --threads FFT
threads (default: the cores shared out between the workers). Finished points are
skipped, a point interrupted with a checkpoint is resumed, and a failed point is
recorded (points/ID/failure.txt) while the others go on. Progress goes to stderr.
SIGINT or SIGTERM stop the running points with a checkpoint (exit status 3); the
same command later resumes them.

With --slurm, scan writes SCANDIR/slurm/array.sh, a job array with one task per
point that is not finished, queued or running, and submits it with sbatch. Each
task runs exactly its point and resumes it after a pre-emption or time-limit
warning. Running the command again submits only what is not done.

The runs are "memix run" of this program (or of --memix, whose path must be valid
on the compute nodes). --dry-run expands and validates, and with --slurm writes
the script, but runs and submits nothing. memix scan status and memix gather
report on SCANDIR. Results are model predictions.`,
		Example: "  memix scan examples/sweeps/deep-vs-wall.yaml -o deep-vs-wall --workers 2\n" +
			"  memix scan examples/sweeps/deep-vs-wall.yaml -o deep-vs-wall --slurm --time 00:10:00 --cpus 1\n" +
			"  memix scan status deep-vs-wall\n  memix gather deep-vs-wall",
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			if dir == "" {
				return usageError{errors.New("scan needs the scan folder: -o SCANDIR")}
			}
			fl := cmd.Flags()
			if !slurm {
				for _, name := range []string{"partition", "time", "cpus", "mem", "max-parallel", "job-name", "slurm-option"} {
					if fl.Changed(name) {
						return usageError{fmt.Errorf("--%s is an option of --slurm", name)}
					}
				}
			} else {
				for _, name := range []string{"workers", "threads"} {
					if fl.Changed(name) {
						return usageError{fmt.Errorf("--%s is for local runs; with --slurm each task runs one point with --cpus threads", name)}
					}
				}
			}
			if workers < 1 || threads < 0 || cpus < 1 || maxParallel < 0 {
				return usageError{fmt.Errorf("--workers %d, --threads %d, --cpus %d, --max-parallel %d: need workers and cpus ≥ 1, threads and max-parallel ≥ 0", workers, threads, cpus, maxParallel)}
			}
			exe, err := memixProgram(program)
			if err != nil {
				return err
			}
			runner := scan.Runner{Command: []string{exe}}
			var sopt scan.SlurmOptions
			if slurm {
				sopt = scan.SlurmOptions{Runner: runner, JobName: jobName, Partition: partition, Time: limit,
					CPUsPerTask: cpus, Mem: mem, MaxRunning: maxParallel, Extra: slurmExtra}
				if err := sopt.Validate(); err != nil {
					return usageError{err}
				}
			}

			s, err := loadSweep(args[0])
			if err != nil {
				return err
			}
			sc, err := scan.Expand(s, dir, scan.ExpandOptions{Validate: scan.ValidateConfig})
			if err != nil {
				return err
			}
			if slurm {
				return slurmScan(cmd.Context(), e, f, sc, sopt, dryRun)
			}
			if threads == 0 {
				threads = max(1, runtime.NumCPU()/workers)
			}
			return localScan(cmd.Context(), e, f, sc, scan.LocalOptions{Workers: workers, Threads: threads, Runner: runner, Progress: e.stderr}, dryRun)
		},
	}
	fl := c.Flags()
	out.Bind(fl)
	fl.StringVarP(&dir, "output", "o", "", "scan `folder` (created; an existing scan there is extended and resumed)")
	fl.IntVar(&workers, "workers", 1, "points run at once on this machine")
	fl.IntVar(&threads, "threads", 0, "FFT threads per run (default: the cores divided by --workers, at least 1)")
	fl.BoolVar(&dryRun, "dry-run", false, "expand and validate (and with --slurm write the script) but run and submit nothing")
	fl.BoolVar(&slurm, "slurm", false, "submit the points to Slurm as a job array instead of running them here")
	fl.StringVar(&partition, "partition", "", "Slurm partition (default: the cluster's)")
	fl.StringVar(&limit, "time", "", "Slurm time limit per point, e.g. 00:30:00 or 1-00:00:00 (default: the partition's)")
	fl.IntVar(&cpus, "cpus", 1, "Slurm CPUs per task, also the FFT threads of each run")
	fl.StringVar(&mem, "mem", "", "Slurm memory per task, e.g. 2G (default: the partition's)")
	fl.IntVar(&maxParallel, "max-parallel", 0, "at most this many tasks of the array at once (0: no limit)")
	fl.StringVar(&jobName, "job-name", "", "Slurm job name (default memix-scan)")
	fl.StringArrayVar(&slurmExtra, "slurm-option", nil, "a further sbatch `option`, e.g. --slurm-option=--account=proj42 (repeatable)")
	fl.StringVar(&program, "memix", "", "the memix `program` the runs use (default: this one)")
	c.AddCommand(newScanStatusCmd(e))
	return c
}

// localScan runs the points here and reports what happened.
func localScan(ctx context.Context, e *env, f report.Format, sc *scan.Scan, opt scan.LocalOptions, dryRun bool) error {
	if dryRun {
		st, err := scan.Status(ctx, sc.Dir, scan.StatusOptions{})
		if err != nil {
			return err
		}
		todo := len(st.Points) - st.Counts[scan.Finished] - st.Counts[scan.Running]
		return report.Write(e.stdout, f, report.Doc{Fields: []report.Field{
			{Key: "scan", Value: sc.Dir},
			{Key: "points", Value: len(sc.Points)},
			{Key: "state", Value: st.String()},
			{Key: "to_run", Title: "to run", Value: todo},
			{Key: "workers", Value: opt.Workers},
			{Key: "threads", Title: "threads per run", Value: opt.Threads},
			{Key: "memix", Value: opt.Runner.Command[0]},
			{Key: "note", Value: "dry run: the points are expanded and valid; nothing ran"},
		}})
	}
	t0 := time.Now()
	rep, runErr := scan.RunLocal(ctx, sc.Dir, opt)
	if runErr != nil && ctx.Err() == nil {
		return runErr
	}
	finished := rep.AlreadyFinished + rep.Finished
	doc := report.Doc{Fields: []report.Field{
		{Key: "scan", Value: sc.Dir},
		{Key: "points", Value: len(sc.Points)},
		{Key: "finished", Title: "finished", Value: finished},
		{Key: "ran", Title: "finished now", Value: rep.Finished},
		{Key: "failed", Value: rep.Failed},
		{Key: "interrupted", Value: rep.Interrupted},
		{Key: "busy", Title: "run by another process", Value: rep.Busy},
		{Key: "not_started", Title: "not started", Value: rep.NotStarted},
		{Key: "wall_s", Title: "wall time", Value: report.Cell{Value: time.Since(t0).Seconds(), Text: time.Since(t0).Round(100 * time.Millisecond).String()}},
		{Key: "next", Value: "memix gather " + sc.Dir},
		{Key: "note", Value: "results are model predictions, not measurements"},
	}}
	if err := report.Write(e.stdout, f, doc); err != nil {
		return err
	}
	for _, r := range rep.Results {
		if r.State == scan.Failed {
			fmt.Fprintf(e.stderr, "memix scan: point %d (%s) failed: %s\n", r.Index, r.ID, firstLineOf(r.Error))
		}
	}
	switch {
	case ctx.Err() != nil:
		return fmt.Errorf("scan stopped: %d points interrupted with a checkpoint, %d not started; run the same command to resume: %w",
			rep.Interrupted, rep.NotStarted, sim.ErrInterrupted)
	case rep.Failed > 0:
		return fmt.Errorf("%d of %d points failed (their errors: memix scan status %s); run the same command to retry them", rep.Failed, len(sc.Points), sc.Dir)
	}
	return nil
}

// slurmScan writes the array script and, unless dryRun, submits it.
func slurmScan(ctx context.Context, e *env, f report.Format, sc *scan.Scan, opt scan.SlurmOptions, dryRun bool) error {
	fields := []report.Field{{Key: "scan", Value: sc.Dir}, {Key: "points", Value: len(sc.Points)}}
	if dryRun {
		path, idx, err := scan.WriteSlurmScript(ctx, sc.Dir, opt)
		if errors.Is(err, scan.ErrNothingToSubmit) {
			fields = append(fields, report.Field{Key: "note", Value: "nothing to submit: every point is finished, queued or running"})
			return report.Write(e.stdout, f, report.Doc{Fields: fields})
		}
		if err != nil {
			return err
		}
		fields = append(fields,
			report.Field{Key: "script", Value: path},
			report.Field{Key: "tasks", Value: len(idx)},
			report.Field{Key: "memix", Value: opt.Runner.Command[0]},
			report.Field{Key: "note", Value: "dry run: not submitted; submit with memix scan again without --dry-run (or sbatch " + path + ")"})
		return report.Write(e.stdout, f, report.Doc{Fields: fields})
	}
	rec, err := scan.Submit(ctx, sc.Dir, opt)
	if errors.Is(err, scan.ErrNothingToSubmit) {
		fields = append(fields, report.Field{Key: "note", Value: "nothing to submit: every point is finished, queued or running"})
		return report.Write(e.stdout, f, report.Doc{Fields: fields})
	}
	if err != nil {
		return err
	}
	fields = append(fields,
		report.Field{Key: "job", Title: "Slurm job", Value: rec.JobID},
		report.Field{Key: "tasks", Value: len(rec.Tasks)},
		report.Field{Key: "script", Value: filepath.Join(sc.Dir, rec.Script)},
		report.Field{Key: "next", Value: "memix scan status " + sc.Dir + "; memix gather " + sc.Dir})
	return report.Write(e.stdout, f, report.Doc{Fields: fields})
}

func firstLineOf(s string) string {
	for i := 0; i < len(s); i++ {
		if s[i] == '\n' {
			return s[:i]
		}
	}
	return s
}

func newScanStatusCmd(e *env) *cobra.Command {
	var out report.Flags
	c := &cobra.Command{
		Use:   "status SCANDIR",
		Short: "Report which points of a scan are finished, running, queued, failed, interrupted or pending",
		Long: `status reads the point folders of SCANDIR and, for the Slurm jobs the scan submitted,
squeue (no accounting database needed), and prints each point's state with its
parameters: finished, running (here or as a Slurm task), queued, failed (with the
first line of its error; the rest is in points/ID/failure.txt), interrupted (a
checkpoint to resume) or pending. --csv prints the table of points only.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			e.ran = true // a subcommand: run's wrapper marks only the top level
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			sc, err := scan.Open(args[0])
			if err != nil {
				return err
			}
			st, err := scan.Status(cmd.Context(), args[0], scan.StatusOptions{})
			if err != nil {
				return err
			}
			cols := []report.Column{{Key: "index"}, {Key: "id"}, {Key: "state"}}
			for _, a := range sc.Axes {
				cols = append(cols, report.Column{Key: a.Key, Title: shortAxis(a.Key)})
			}
			cols = append(cols, report.Column{Key: "detail"})
			t := &report.Table{Key: "points", Title: "Points", Columns: cols, Notes: st.Notes}
			for _, ps := range st.Points {
				row := []any{ps.Index, ps.ID, string(ps.State)}
				row = append(row, paramCells(sc.Axes, ps.Params)...)
				row = append(row, ps.Detail)
				t.Rows = append(t.Rows, row)
			}
			doc := report.Doc{Tables: []*report.Table{t}}
			if f != report.CSV {
				doc.Fields = []report.Field{{Key: "scan", Value: sc.Dir}, {Key: "total", Title: "points", Value: len(st.Points)}}
				for _, s := range scan.States() {
					doc.Fields = append(doc.Fields, report.Field{Key: string(s), Value: st.Counts[s]})
				}
			}
			return report.Write(e.stdout, f, doc)
		},
	}
	out.Bind(c.Flags())
	return c
}

// shortAxis is the last two parts of a dotted key, the column title of an
// axis in text tables ("lower.depth").
func shortAxis(k string) string {
	dots := 0
	for i := len(k) - 1; i >= 0; i-- {
		if k[i] == '.' {
			dots++
			if dots == 2 {
				return k[i+1:]
			}
		}
	}
	return k
}

// paramCells returns a point's value of each axis as report cells: strings,
// numbers and booleans as they are, null as no value, anything structured
// as its compact JSON text.
func paramCells(axes []scan.AxisInfo, params []scan.Param) []any {
	p := scan.Point{Params: params}
	out := make([]any, len(axes))
	for i, a := range axes {
		v, _ := p.Param(a.Key)
		switch v.(type) {
		case nil, string, float64, bool:
			out[i] = v
		default:
			out[i] = scan.Param{Value: v}.Text()
		}
	}
	return out
}
