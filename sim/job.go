package sim

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/mixing"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

// The files of an output directory that the run writes itself (see package
// outputs for the others).
const (
	ResolvedFile   = "config.resolved.yaml"
	CheckpointFile = "checkpoint.h5"
	SeriesFile     = "series.csv"
	SummaryFile    = "summary.json"
	LogFile        = "run.log"
	FiguresDir     = "figures"
)

// JobOptions configures Start and Resume.
type JobOptions struct {
	Version string    // program version stamped on every file
	Threads int       // FFT threads; > 0 overrides grid.threads
	Force   bool      // Start: replace an existing output directory
	Quiet   bool      // no progress on Stderr (run.log still gets it)
	Stderr  io.Writer // progress and messages; nil discards them
	// ProgressEvery is the interval of plain progress lines (run.log, and
	// Stderr when it is not a terminal); 0 means 10 s.
	ProgressEvery time.Duration
	// Set overrides configuration keys ("key=value"). On Resume only the
	// keys of the time and output sections may change.
	Set []string
	// ForceResolution lets Start run a configuration whose grid does not
	// resolve the interface or the fastest-growing wavelength
	// (config.ResolutionWarnings); without it Start refuses with those
	// problems, as configuration errors.
	ForceResolution bool
}

// ErrOutputExists is returned by Start for an existing, non-empty output
// directory without JobOptions.Force.
var ErrOutputExists = errors.New("output directory exists")

// Start runs the configuration c from its initial state, writing into dir.
// dir must not exist or be empty, unless o.Force is set, which replaces it.
// The returned summary is also written to dir/summary.json; on an
// interrupted run the error is ErrInterrupted and the summary says so.
//
// Everything that can fail before the first step (the configuration, the
// resolution check, the model, the initial state, an initial.file) is
// done before dir is created or replaced: when Start fails there, dir is
// left as it was (absent, empty, or the run that --force would replace).
// Errors from bad input are configuration errors (config.IsConfigError).
func Start(ctx context.Context, c config.Config, dir string, o JobOptions) (*Summary, error) {
	c, err := applySet(c, o.Set, false)
	if err != nil {
		return nil, err
	}
	var errs []error
	for _, p := range c.RunProblems() {
		errs = append(errs, p)
	}
	if !o.ForceResolution {
		errs = append(errs, resolutionErrors(c)...)
	}
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	if err := checkDir(dir, o.Force); err != nil {
		return nil, err
	}
	j, err := newJob(c, dir, o)
	if err != nil {
		return nil, err
	}
	defer j.close()
	if err := j.initialState(); err != nil {
		return nil, err
	}
	if err := prepareDir(dir, o.Force); err != nil {
		return nil, err
	}
	if err := j.writeResolved(); err != nil {
		return nil, err
	}
	if err := j.openOutputs(false, 0); err != nil {
		return nil, err
	}
	return j.run(ctx, false)
}

// ForceResolutionFlag is the memix run flag that sets
// JobOptions.ForceResolution; messages name it.
const ForceResolutionFlag = "--force-resolution"

// resolutionErrors returns the resolution problems of c, each with a note
// that the flag overrides it.
func resolutionErrors(c config.Config) []error {
	var errs []error
	for _, p := range c.ResolutionWarnings() {
		q := *p
		q.Err = fmt.Errorf("%w; results on this grid are unreliable (run anyway with %s)", p.Err, ForceResolutionFlag)
		errs = append(errs, &q)
	}
	return errs
}

// Resume continues the run in dir from its checkpoint, with the
// configuration recorded in dir/config.resolved.yaml. The continuation is
// bit for bit the same as an uninterrupted run with the same thread count:
// the checkpoint holds the exact spectral state and the step controller.
func Resume(ctx context.Context, dir string, o JobOptions) (*Summary, error) {
	for _, k := range config.Keys() {
		if val, ok := os.LookupEnv(k.Env); ok {
			return nil, &config.FieldError{Key: k.Env, Value: val, Err: fmt.Errorf("%w: resuming %s, this environment variable would change the recorded configuration; unset it (use --set for time.* and output.* keys)", config.ErrConflict, dir)}
		}
	}
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		if err == nil {
			err = errors.New("not a directory")
		}
		return nil, fmt.Errorf("resume %s: %w", dir, err)
	}
	c, err := config.Load(filepath.Join(dir, ResolvedFile))
	if err != nil {
		return nil, fmt.Errorf("resume %s: %w", dir, err)
	}
	if c, err = applySet(c, o.Set, true); err != nil {
		return nil, err
	}
	j, err := newJob(c, dir, o)
	if err != nil {
		return nil, err
	}
	defer j.close()
	step, err := j.readCheckpoint()
	if err != nil {
		return nil, err
	}
	if err := outputs.RemoveStaleTemps(dir); err != nil {
		return nil, err
	}
	if len(o.Set) > 0 {
		if err := j.writeResolved(); err != nil {
			return nil, err
		}
	}
	if err := j.openOutputs(true, step); err != nil {
		return nil, err
	}
	return j.run(ctx, true)
}

// applySet applies "key=value" overrides; resume restricts them to the
// time and output sections, which do not change the physics of the state.
func applySet(c config.Config, set []string, resume bool) (config.Config, error) {
	if len(set) == 0 {
		return c, nil
	}
	kv := make([][2]string, 0, len(set))
	for _, p := range set {
		key, val, ok := strings.Cut(p, "=")
		key = strings.TrimSpace(key)
		if !ok || key == "" {
			return c, &config.FieldError{Key: p, Err: fmt.Errorf("%w: --set wants key=value, e.g. time.dt_max=1e-6", config.ErrSyntax)}
		}
		if resume && !strings.HasPrefix(key, "time.") && !strings.HasPrefix(key, "output.") {
			return c, &config.FieldError{Key: key, Value: strings.TrimSpace(val), Range: "time.* and output.* keys only on --resume",
				Err: fmt.Errorf("%w: --set on a resumed run may change only time.* and output.* keys (the state was computed with the recorded physics)", config.ErrConflict)}
		}
		kv = append(kv, [2]string{key, strings.TrimSpace(val)})
	}
	return c.SetAll(kv)
}

// checkDir reports whether dir can take a new run (see prepareDir)
// without changing anything: it does not exist, is empty, or force is set
// and it holds a memix run.
func checkDir(dir string, force bool) error {
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
		return nil
	case err != nil:
		return fmt.Errorf("output directory %s: %w", dir, err)
	case !st.IsDir():
		return fmt.Errorf("output directory %s: %w: it is a file", dir, ErrOutputExists)
	}
	entries, err := os.ReadDir(dir)
	switch {
	case err != nil:
		return fmt.Errorf("output directory %s: %w", dir, err)
	case len(entries) > 0 && !force:
		return fmt.Errorf("%w: %s holds %d entries; use --force to replace it or --resume to continue its run", ErrOutputExists, dir, len(entries))
	case len(entries) > 0:
		if _, err := os.Stat(filepath.Join(dir, ResolvedFile)); err != nil {
			// Refuse to wipe a directory that is not a memix run.
			return fmt.Errorf("output directory %s is not empty and holds no %s: not replacing a directory memix did not write", dir, ResolvedFile)
		}
	}
	return nil
}

// prepareDir makes sure dir exists and is empty: it must not exist or be
// empty, or, with force, hold a memix run (which is removed).
func prepareDir(dir string, force bool) error {
	if err := checkDir(dir, force); err != nil {
		return err
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) > 0 {
		if err := os.RemoveAll(dir); err != nil {
			return fmt.Errorf("replacing %s: %w", dir, err)
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("output directory %s: %w", dir, err)
	}
	return nil
}

// job is one run being executed.
type job struct {
	cfg     config.Config
	red     *config.Reduced
	params  fields.Params
	dir     string
	opt     JobOptions
	info    outputs.RunInfo
	plan    spectral.Plan
	model   *fields.Model
	stepper *fields.Stepper
	last    fields.StepInfo
	ffts    int64
	endTime float64 // reduced

	log    *os.File
	series *outputs.Series
	cols   []outputs.Column
	row    []float64
	snaps  *outputs.SnapshotWriter
	fields []outputs.Field
	meter  *mixing.Meter
	spec   *mixing.Spectrum
	iPhi   int // index of phi in the state, −1 without lipids
	iQ11   int // index of Q11 among the views, −1 without inclusions

	lastRow, lastSnap int // steps of the last series row and snapshot (−1 none)
	// Work of the iterative flow solve (composition-dependent viscosity):
	// since the last series row, and over this invocation.
	flowRow, flowRun flowWork
	diffHow          [2]string
	started          time.Time

	ckStep int            // step of the checkpoint on disk, −1 if none
	ckTime float64        // its reduced time
	prev   [][]complex128 // the spectral state before the step in progress, to locate a blow-up
	scr    []float64      // real-space scratch
}

func newJob(c config.Config, dir string, o JobOptions) (*job, error) {
	if ps := c.RunProblems(); len(ps) > 0 {
		errs := make([]error, len(ps))
		for i, p := range ps {
			errs[i] = p
		}
		return nil, errors.Join(errs...)
	}
	red, err := config.Reduce(c)
	if err != nil {
		return nil, err
	}
	j := &job{cfg: c, red: red, dir: dir, opt: o, lastRow: -1, lastSnap: -1, iPhi: -1, iQ11: -1, ckStep: -1}
	if j.params, j.diffHow, err = runParams(c, red); err != nil {
		return nil, err
	}
	j.endTime = red.Units.ToReduced(c.EndTime())
	j.info = outputs.RunInfo{Version: o.Version, Scales: outputs.Scales{
		LengthUnit: "l0", Length: float64(red.Units.Length),
		TimeUnit: "tau0", Time: float64(red.Units.Time),
	}}
	var b strings.Builder
	if err := c.WriteResolved(&b); err != nil {
		return nil, err
	}
	j.info.Config = b.String()

	popt := red.Plan
	if o.Threads > 0 {
		popt.Threads = o.Threads
	}
	if j.plan, err = spectral.NewPlan(red.Grid, popt); err != nil {
		return nil, err
	}
	if j.model, err = fields.NewModel(j.params, j.plan, nil); err != nil {
		j.plan.Close()
		return nil, err
	}
	j.stepper = fields.NewStepper(j.model)
	j.last.Dt = j.params.Stepping.DtMax
	j.prev = make([][]complex128, len(j.model.FieldNames()))
	for f := range j.prev {
		j.prev[f] = red.Grid.NewSpectral()
	}
	j.scr = red.Grid.NewReal()
	j.iPhi = j.model.FieldIndex("phi")
	if j.iPhi >= 0 {
		lx, _ := c.Grid.Lengths()
		if j.meter, err = mixing.NewMeter(red.Grid, red.Units.ToReduced(c.Output.MixLength.Or(lx))); err != nil {
			j.plan.Close()
			return nil, err
		}
		j.spec = mixing.NewSpectrum(red.Grid)
	}
	for i, v := range j.model.Views() {
		if v.Name == "Q11" {
			j.iQ11 = i
		}
	}
	return j, nil
}

// runParams reduces the run sections of c to the model's parameters.
func runParams(c config.Config, red *config.Reduced) (fields.Params, [2]string, error) {
	u := red.Units
	p := fields.Params{
		Membrane: red.Membrane,
		Grid:     fields.GridSpec{Nx: red.Grid.Nx, Ny: red.Grid.Ny, Lx: red.Grid.Lx, Ly: red.Grid.Ly},
	}
	var how [2]string
	in := c.Inclusions
	switch in.Model {
	case "none":
		p.Inclusions.Model = fields.NoInclusions
	default:
		dr, dt, h, err := c.Diffusivities()
		if err != nil {
			return p, how, err
		}
		how = h
		p.Inclusions = fields.Inclusions{
			Model:          fields.Moments,
			Harmonics:      in.Harmonics,
			Activity:       float64(c.ActiveStress()) * float64(u.Time) / float64(c.Membrane.Viscosity),
			Alignment:      in.Alignment,
			Speed:          u.ToReduced(in.Speed),
			TransDiffusion: u.ToReduced(dt),
			RotDiffusion:   u.ToReduced(dr),
			Partition:      in.Partition,
		}
		if in.Model == "kinetic" {
			p.Inclusions.Model = fields.Kinetic
		}
		if in.Closure == "truncation" {
			p.Inclusions.Closure = fields.Truncation
		} else {
			p.Inclusions.Closure = fields.Quadratic
		}
	}
	lp := c.Lipids
	switch lp.Model {
	case "none":
		p.Lipid.Model = fields.NoLipid
	case "passive":
		p.Lipid = fields.Lipid{Model: fields.Passive, Diffusivity: u.ToReduced(lp.Diffusion)}
	case "phase":
		eps := u.ToReduced(lp.Interface)
		// Line tension γ = (2√2/3)·ε·A, so A = 3γ/(2√2 ε) (fields.Lipid).
		gamma := u.ToReduced(lp.LineTension)
		p.Lipid = fields.Lipid{
			Model: fields.CahnHilliard, Mobility: u.ToReduced(lp.Diffusion), Interface: eps,
			Energy: 3 * gamma / (2 * math.Sqrt2 * eps), Backreaction: lp.Backreaction,
		}
	}
	if c.Membrane.Variable() {
		rule, err := flow.ParseViscosityRule(c.Membrane.Rule)
		if err != nil {
			return p, how, err
		}
		plus, minus := c.Membrane.PhaseViscosities()
		p.Viscosity = flow.ViscosityLaw{Rule: rule, PhaseA: u.ToReduced(plus), PhaseB: u.ToReduced(minus)}
		p.Solver = flow.PCGOptions{Tolerance: c.Membrane.Tolerance, MaxIterations: c.Membrane.MaxIter}
	}
	p.Stepping = fields.DefaultStepping(u.ToReduced(c.DtMax()))
	p.Stepping.DtMin = u.ToReduced(c.DtMin())
	p.Stepping.Courant = c.Time.Courant
	p.Stepping.RotationLimit = c.Time.Courant
	p.Stepping.ActiveLimit = c.Time.Courant
	p.Stepping.Fixed = c.Time.Fixed
	return p, how, p.Validate()
}

func (j *job) close() {
	if j.series != nil {
		j.series.Close()
	}
	if j.log != nil {
		j.log.Close()
	}
	if j.plan != nil {
		j.plan.Close()
	}
}

func (j *job) writeResolved() error {
	return outputs.WriteFileAtomic(filepath.Join(j.dir, ResolvedFile), func(w io.Writer) error {
		return j.cfg.WriteResolved(w,
			"memix run: the configuration of this run with every default filled in.",
			"Written by "+j.opt.Version+"; memix run --resume reads it back.")
	})
}

// initialState sets the fields from the initial section.
func (j *job) initialState() error {
	in := j.cfg.Initial
	m := j.model
	rng := rand.New(rand.NewPCG(uint64(in.Seed), 0x6d656d6978)) // second word: "memix"
	m.SetUniform(in.Mean)
	if j.params.Inclusions.Model != fields.NoInclusions {
		var err error
		switch in.Inclusions {
		case "isotropic", "mode":
			err = m.InitIsotropic(in.Amplitude, rng)
		case "aligned":
			err = m.InitAligned(in.Angle*math.Pi/180, in.Order)
		case "file":
			var names []string
			for _, n := range m.FieldNames() {
				if n != "phi" {
					names = append(names, n)
				}
			}
			if err := j.fromFile(in.File.V, in.FileSnapshot, names); err != nil {
				return &config.FieldError{Key: "initial.file", Value: in.File.V, Err: fmt.Errorf("%w: %w", config.ErrFile, err)}
			}
		}
		if err != nil {
			return fmt.Errorf("initial.inclusions = %s: %w", in.Inclusions, err)
		}
	}
	if j.iPhi >= 0 {
		width := m.InterfaceWidth()
		axis := fields.AxisX
		if in.Direction == "y" {
			axis = fields.AxisY
		}
		var err error
		switch in.Lipids {
		case "uniform":
			err = m.SetLipidUniform(in.Mean)
		case "stripes":
			err = m.InitStripes(in.Stripes, axis, width)
		case "halves":
			err = m.InitHalves(axis, width)
		case "disks":
			lx, _ := j.cfg.Grid.Lengths()
			r := j.red.Units.ToReduced(in.DiskRadius.Or(lx / 10))
			err = m.InitDisks(in.Disks, r, width, rng)
		case "random":
			err = m.InitLipidRandom(in.Mean, in.Amplitude, rng)
		case "mode":
			err = m.SetLipidUniform(in.Mean)
		case "file":
			if err := j.fromFile(in.File.V, in.FileSnapshot, []string{"phi"}); err != nil {
				return &config.FieldError{Key: "initial.file", Value: in.File.V, Err: fmt.Errorf("%w: %w", config.ErrFile, err)}
			}
		}
		if err != nil {
			return fmt.Errorf("initial.lipids = %s: %w", in.Lipids, err)
		}
	}
	if in.Inclusions == "mode" || in.Lipids == "mode" {
		if err := m.AddMode(in.ModeField, in.ModeX, in.ModeY, in.ModeAmp, 0); err != nil {
			return fmt.Errorf("initial.mode_field = %s: %w", in.ModeField, err)
		}
	}
	return nil
}

// fromFile sets the evolved fields called names from a memix HDF5 file.
// From a checkpoint every name must be there, and its exact spectral
// coefficients are taken. From a snapshot (a snapshot file or the index;
// snapshot snap, negative counting from the end) the first name is
// required (phi, or the density c) and each other name is read if the
// snapshot holds it; for the kinetic model Q11 and Q12 stand in for a
// missing a2 and b2 (a moment run continued as a kinetic one), and the
// other harmonics stay zero.
func (j *job) fromFile(path string, snap int, names []string) error {
	f, err := outputs.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	if err := f.CheckGrid(j.red.Grid); err != nil {
		return err
	}
	if f.Kind() == outputs.KindCheckpoint {
		ck, err := outputs.ReadCheckpoint(path, j.red.Grid, outputs.Expect{Spectral: names})
		if err != nil {
			return err
		}
		for _, name := range names {
			data := ck.SpectralByName(name).Data
			if !finite(data) {
				return fmt.Errorf("%s: the field %s of the checkpoint is not finite", path, name)
			}
			j.model.SetSpectral(j.model.FieldIndex(name), data)
		}
		return nil
	}
	n := len(f.Snapshots())
	if n == 0 {
		return fmt.Errorf("%s holds no snapshot", path)
	}
	i := snap
	if i < 0 {
		i += n
	}
	if i < 0 || i >= n {
		return fmt.Errorf("initial.file_snapshot = %d: %s holds snapshots 0 to %d (−1 is the last)", snap, path, n-1)
	}
	held := map[string]bool{}
	var list []string
	for _, fi := range f.Snapshots()[i].Fields {
		held[fi.Name] = true
		list = append(list, fi.Name)
	}
	stand := map[string]string{"a2": "Q11", "b2": "Q12"}
	for k, name := range names {
		from := name
		if !held[name] && held[stand[name]] {
			from = stand[name] // SetFromReal("Q11") sets a2 = 2·Q11
		}
		if !held[from] {
			if k == 0 {
				return fmt.Errorf("%s: snapshot %d holds no field %q (it holds %s)", path, i, name, strings.Join(list, ", "))
			}
			continue
		}
		data, err := f.ReadField(nil, from, i)
		if err != nil {
			return err
		}
		if err := j.model.SetFromReal(from, data); err != nil {
			return err
		}
	}
	return nil
}

// openOutputs opens run.log, the series and the snapshot writer, fresh or
// continuing after step.
func (j *job) openOutputs(resume bool, step int64) error {
	var err error
	flags := os.O_CREATE | os.O_WRONLY | os.O_APPEND
	if j.log, err = os.OpenFile(filepath.Join(j.dir, LogFile), flags, 0o644); err != nil {
		return fmt.Errorf("run log: %w", err)
	}
	j.cols = j.seriesColumns()
	j.row = make([]float64, len(j.cols))
	path := filepath.Join(j.dir, SeriesFile)
	if resume {
		j.series, err = outputs.ResumeSeries(path, j.cols, "step", step)
	} else {
		j.series, err = outputs.CreateSeries(path, j.cols)
	}
	if err != nil {
		return err
	}
	if j.cfg.Output.Snapshots > 0 {
		if resume {
			j.snaps, err = outputs.ResumeSnapshotWriter(j.dir, j.red.Grid, j.info, step)
		} else {
			j.snaps, err = outputs.NewSnapshotWriter(j.dir, j.red.Grid, j.info)
		}
		if err != nil {
			return err
		}
	}
	if resume {
		j.lastRow, j.lastSnap = int(step), int(step)
	}
	return nil
}

// The mixing columns of the series; the mix-norm column is called mixnorm.
var normColumns = [mixing.NumNorms]outputs.Column{
	mixing.Variance:   {Name: "var_norm", Unit: "1"},
	mixing.HMinus1:    {Name: "hminus1_norm", Unit: "l0"},
	mixing.HMinusHalf: {Name: "hminushalf_norm", Unit: "l0^0.5"},
	mixing.Mix:        {Name: "mixnorm", Unit: "1"},
}

func (j *job) seriesColumns() []outputs.Column {
	cols := []outputs.Column{
		{Name: "step", Unit: "1"}, {Name: "time", Unit: "tau0"}, {Name: "time_si", Unit: "s"},
		{Name: "dt", Unit: "tau0"},
		{Name: "kinetic_energy", Unit: "(l0/tau0)^2"}, {Name: "max_speed", Unit: "l0/tau0"},
		{Name: "active_power", Unit: "eta_m/tau0^2"}, {Name: "interface_power", Unit: "eta_m/tau0^2"},
		{Name: "dissipation", Unit: "eta_m/tau0^2"},
	}
	if j.params.VariableViscosity() {
		cols = append(cols, outputs.Column{Name: "flow_iterations", Unit: "1"}, outputs.Column{Name: "flow_residual", Unit: "1"})
	}
	if j.params.Inclusions.Model != fields.NoInclusions {
		cols = append(cols, outputs.Column{Name: "order", Unit: "1"}, outputs.Column{Name: "global_order", Unit: "1"})
	}
	if j.iPhi >= 0 {
		cols = append(cols, outputs.Column{Name: "lipid_mean", Unit: "1"}, outputs.Column{Name: "lipid_variance", Unit: "1"})
		if j.params.Lipid.Model == fields.CahnHilliard {
			cols = append(cols, outputs.Column{Name: "free_energy", Unit: "A"})
		}
		cols = append(cols, normColumns[:]...)
		cols = append(cols, outputs.Column{Name: "domain_length", Unit: "l0"})
	}
	return cols
}

// writeRow appends the diagnostics of the current state to the series.
func (j *job) writeRow() error {
	if j.model.Steps() == j.lastRow {
		return nil
	}
	d, err := j.model.Diagnostics()
	if err != nil {
		return err
	}
	r := j.row[:0]
	r = append(r, float64(d.Steps), d.Time, d.Time*float64(j.red.Units.Time), j.last.Dt,
		d.KineticEnergy, d.MaxSpeed, d.ActivePower, d.InterfacePower, d.Dissipation)
	if j.params.VariableViscosity() {
		// Mean iterations per solve and largest residual over the steps
		// since the previous row (at the first row: the diagnostics' solve).
		w := j.flowRow
		if w.solves == 0 {
			w = flowWork{solves: 1, iterations: d.FlowIterations, maxResidual: d.FlowResidual}
		}
		r = append(r, w.mean(), w.maxResidual)
		j.flowRow = flowWork{}
	}
	if j.params.Inclusions.Model != fields.NoInclusions {
		r = append(r, d.Order, d.GlobalOrder)
	}
	if j.iPhi >= 0 {
		r = append(r, d.LipidMean, d.LipidVariance)
		if j.params.Lipid.Model == fields.CahnHilliard {
			r = append(r, d.FreeEnergy)
		}
		phi := j.model.Spectral(j.iPhi)
		v := j.meter.Measure(phi)
		r = append(r, v[:]...)
		r = append(r, j.spec.DomainLength(phi))
	}
	j.lastRow = j.model.Steps()
	return j.series.Append(r...)
}

// writeSnapshot writes every real-space view of the current state.
func (j *job) writeSnapshot() error {
	if j.snaps == nil || j.model.Steps() == j.lastSnap {
		return nil
	}
	if err := j.model.UpdateViews(); err != nil {
		return err
	}
	views := j.model.Views()
	if j.fields == nil {
		j.fields = make([]outputs.Field, len(views))
	}
	for i, v := range views {
		j.fields[i] = outputs.Field{Name: v.Name, Unit: v.Unit, Data: v.Data}
	}
	j.lastSnap = j.model.Steps()
	return j.snaps.Write(j.model.Time(), int64(j.model.Steps()), j.fields)
}

// writeCheckpoint writes the exact state after syncing the series.
func (j *job) writeCheckpoint() error {
	if err := j.series.Sync(); err != nil {
		return err
	}
	names := j.model.FieldNames()
	ck := &outputs.Checkpoint{
		Info: j.info,
		Time: j.model.Time(),
		Step: int64(j.model.Steps()),
		Dt:   j.last.Dt,
		Scalars: []outputs.Scalar{
			{Name: "level", Unit: "1", Value: float64(j.stepper.Level())},
			{Name: "ffts", Unit: "1", Value: float64(j.ffts)},
		},
	}
	for f, name := range names {
		ck.Spectral = append(ck.Spectral, outputs.SpectralField{Name: name, Unit: j.model.FieldUnit(f), Data: j.model.Spectral(f)})
	}
	if ux, uy, ok := j.model.FlowGuess(); ok {
		// The warm start of the iterative flow solve: without it a resumed
		// run would depart from an uninterrupted one at the solver tolerance.
		ck.Spectral = append(ck.Spectral,
			outputs.SpectralField{Name: "flow_guess_ux", Unit: fields.UnitVelocity, Data: ux},
			outputs.SpectralField{Name: "flow_guess_uy", Unit: fields.UnitVelocity, Data: uy})
	}
	if err := outputs.WriteCheckpoint(filepath.Join(j.dir, CheckpointFile), j.red.Grid, ck); err != nil {
		return err
	}
	j.ckStep, j.ckTime = j.model.Steps(), j.model.Time()
	return nil
}

// readCheckpoint restores the state and returns its step.
func (j *job) readCheckpoint() (int64, error) {
	names := j.model.FieldNames()
	ck, err := outputs.ReadCheckpoint(filepath.Join(j.dir, CheckpointFile), j.red.Grid,
		outputs.Expect{Spectral: names, Scalars: []string{"level", "ffts"}})
	if err != nil {
		return 0, fmt.Errorf("resume %s: %w", j.dir, err)
	}
	path := filepath.Join(j.dir, CheckpointFile)
	if bad := math.IsNaN(ck.Time) || math.IsInf(ck.Time, 0) || ck.Time < 0 || ck.Step < 0 || !(ck.Dt > 0) || math.IsInf(ck.Dt, 0); bad {
		return 0, fmt.Errorf("resume %s: %s: damaged clock (t = %g, step %d, dt = %g)", j.dir, path, ck.Time, ck.Step, ck.Dt)
	}
	for _, name := range names {
		for i, v := range ck.SpectralByName(name).Data {
			if re, im := real(v), imag(v); math.IsNaN(re) || math.IsInf(re, 0) || math.IsNaN(im) || math.IsInf(im, 0) {
				return 0, fmt.Errorf("resume %s: %s: field %s holds a non-finite coefficient (index %d) at step %d: the checkpoint is not a good state to continue from",
					j.dir, path, name, i, ck.Step)
			}
		}
	}
	for f, name := range names {
		j.model.SetSpectral(f, ck.SpectralByName(name).Data)
	}
	// The warm start of the iterative flow solve, present once a step of a
	// variable-viscosity run has been taken.
	if gx, gy := ck.SpectralByName("flow_guess_ux"), ck.SpectralByName("flow_guess_uy"); gx != nil && gy != nil && j.params.VariableViscosity() {
		j.model.SetFlowGuess(gx.Data, gy.Data)
	}
	j.model.SetClock(ck.Time, int(ck.Step))
	j.stepper.SetLevel(j.resumeLevel(int(ck.ScalarByName("level").Value), ck.Dt))
	j.ffts = int64(ck.ScalarByName("ffts").Value)
	j.last.Dt = ck.Dt
	j.ckStep, j.ckTime = int(ck.Step), ck.Time
	return ck.Step, nil
}

// flowWork accumulates the iterative flow solver's work.
type flowWork struct {
	solves, iterations, maxIterations int
	maxResidual                       float64
}

func (w *flowWork) add(info fields.StepInfo) {
	w.solves += info.FlowSolves
	w.iterations += info.FlowIterations
	w.maxIterations = max(w.maxIterations, info.FlowMaxIterations)
	w.maxResidual = math.Max(w.maxResidual, info.FlowResidual)
}

func (w flowWork) mean() float64 {
	if w.solves == 0 {
		return 0
	}
	return float64(w.iterations) / float64(w.solves)
}

// resumeLevel returns the ladder level to continue from: the recorded one
// when it still gives the recorded step (the same time.dt_max and
// time.dt_min: bit for bit), else the largest step of the new ladder not
// above the recorded step (--set changed the ladder).
func (j *job) resumeLevel(level int, dt float64) int {
	n := j.stepper.Levels()
	if level >= 0 && level < n && j.stepper.LevelDt(level) == dt {
		return level
	}
	for l := 0; l < n; l++ {
		if j.stepper.LevelDt(l) <= dt*(1+1e-12) {
			return l
		}
	}
	return n - 1
}

// system adapts the model and stepper to the run loop.
type system struct{ j *job }

// Step takes one step and checks that the new state is finite: a state
// that overflowed during the step must fail this step, not the next one,
// so that it is never observed, snapshotted or checkpointed.
func (s system) Step() error {
	j := s.j
	m := j.model
	for f := range j.prev {
		copy(j.prev[f], m.Spectral(f))
	}
	t0, s0, l0 := m.Time(), m.Steps(), j.stepper.Level()
	info, err := j.stepper.Step()
	if err != nil {
		return err
	}
	for f := range j.prev {
		if !finite(m.Spectral(f)) {
			// Put the state back as it was before the step (the stepper's
			// contract on error) and say where the field was largest.
			e := j.blowUp(f, info.Dt)
			for g := range j.prev {
				m.SetSpectral(g, j.prev[g])
			}
			m.SetClock(t0, s0)
			j.stepper.SetLevel(l0)
			return e
		}
	}
	j.last = info
	j.ffts += int64(info.FFTs)
	j.flowRow.add(info)
	j.flowRun.add(info)
	return nil
}

// finite reports whether every value of s is finite: v − v is NaN exactly
// for NaN and ±Inf, and a NaN propagates through the sum.
func finite(s []complex128) bool {
	var a float64
	for _, v := range s {
		a += (real(v) - real(v)) + (imag(v) - imag(v))
	}
	return a == a
}
func (s system) Time() float64 { return s.j.model.Time() }
func (s system) Steps() int    { return s.j.model.Steps() }
func (s system) Dt() float64   { return s.j.last.Dt }

// logf writes a line to run.log (and to Stderr unless quiet).
func (j *job) logf(format string, a ...any) {
	line := fmt.Sprintf(format, a...)
	fmt.Fprintln(j.log, line)
	if !j.opt.Quiet && j.opt.Stderr != nil {
		fmt.Fprintln(j.opt.Stderr, line)
	}
}

func (j *job) run(ctx context.Context, resumed bool) (*Summary, error) {
	j.started = time.Now()
	c, u := j.cfg, j.red.Units
	verb := "start"
	if resumed {
		verb = fmt.Sprintf("resume at step %d, t = %s", j.model.Steps(), config.Time(j.model.Time()*float64(u.Time)))
	}
	j.logf("memix run (%s) %s in %s: %v, end at %s, units ℓ0 = %s, τ0 = %s",
		j.opt.Version, verb, j.dir, j.red.Grid, c.EndTime(), u.Length, u.Time)
	if j.params.Inclusions.Model != fields.NoInclusions {
		j.logf("inclusions: %s, σ₀c₀ = %s, D_r = %s (%s), D_t = %s (%s)", c.Inclusions.Model,
			c.ActiveStress(), config.Rate(j.params.Inclusions.RotDiffusion/float64(u.Time)), j.diffHow[0],
			config.Diffusivity(j.params.Inclusions.TransDiffusion*float64(u.Length*u.Length)/float64(u.Time)), j.diffHow[1])
	}
	if pred, ok := j.prediction(); ok {
		j.logf("linear stability (model prediction): %s", pred.Text)
	}
	out := c.Output
	opts := Options{
		EndTime:  j.endTime,
		MaxSteps: c.Time.MaxSteps,
		Resumed:  resumed,
		Observers: []Scheduled{
			{Name: "series", Observer: ObserverFunc(func(e Event) error {
				if e.Failed || e.Interrupted {
					// No row off the time marks: a resumed run must write
					// exactly the rows of an uninterrupted one.
					return j.series.Sync()
				}
				return j.writeRow()
			}), Schedule: Schedule{EveryTime: j.endTime / float64(out.Rows)}, AtStart: true},
		},
		Checkpoint:         j.writeCheckpoint,
		CheckpointSchedule: Schedule{EveryWall: time.Duration(float64(out.CheckpointWall) * float64(time.Second))},
		CheckpointAtStart:  true,
		Progress:           j.progress(),
	}
	if out.Snapshots > 0 {
		opts.Observers = append(opts.Observers, Scheduled{Name: "snapshots", Observer: ObserverFunc(func(e Event) error {
			if e.Failed || e.Interrupted {
				return nil
			}
			return j.writeSnapshot()
		}), Schedule: Schedule{EveryTime: j.endTime / float64(out.Snapshots)}, AtStart: true})
	}
	res, runErr := Run(ctx, system{j}, opts)
	if runErr != nil && !errors.Is(runErr, ErrInterrupted) {
		runErr = j.explain(runErr)
		fmt.Fprintf(j.log, "run failed at %v\n", runErr) // the caller reports the error itself
	} else if res.Reason == Interrupted {
		j.logf("interrupted at step %d (t = %s); checkpoint written; continue with: memix run --resume %s",
			j.model.Steps(), config.Time(j.model.Time()*float64(u.Time)), j.dir)
	}
	sum := j.summarise(res, runErr)
	if c.Output.Figures && (runErr == nil || errors.Is(runErr, ErrInterrupted)) {
		if err := j.figures(); err != nil {
			runErr = errors.Join(runErr, err)
			sum.Error = joinMsg(sum.Error, err.Error())
		}
	}
	if err := outputs.WriteJSON(filepath.Join(j.dir, SummaryFile), sum); err != nil {
		runErr = errors.Join(runErr, err)
	}
	if res.Reason == Finished && runErr == nil {
		j.logf("finished: %d steps to t = %s in %s; outputs in %s", res.Steps,
			config.Time(j.model.Time()*float64(u.Time)), res.Wall.Round(time.Millisecond), j.dir)
	}
	return sum, runErr
}

func joinMsg(a, b string) string {
	if a == "" {
		return b
	}
	return a + "; " + b
}

// progress returns the progress display: plain lines into run.log, and a
// bar (terminal) or lines on Stderr unless quiet.
func (j *job) progress() Progress {
	every := j.opt.ProgressEvery
	if every <= 0 {
		every = 10 * time.Second
	}
	tau := float64(j.red.Units.Time)
	ps := multiProgress{NewProgress(j.log, every, tau, "s")}
	if !j.opt.Quiet && j.opt.Stderr != nil {
		ps = append(ps, NewProgress(j.opt.Stderr, every, tau, "s"))
	}
	return ps
}

type multiProgress []Progress

func (m multiProgress) Start(t0, tEnd float64, s0, n int) {
	for _, p := range m {
		p.Start(t0, tEnd, s0, n)
	}
}
func (m multiProgress) Update(t float64, s int, dt float64) {
	for _, p := range m {
		p.Update(t, s, dt)
	}
}
func (m multiProgress) Stop() {
	for _, p := range m {
		p.Stop()
	}
}
