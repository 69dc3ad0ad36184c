package sim

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/outputs"
)

// smallRun is a fast configuration: 32² grid, active moments, passive
// lipid stripes, a few hundred steps.
const smallRun = `
grid: {n: 32, box: 5 um}
inclusions: {model: moments, dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}
lipids: {model: passive, diffusion: 1 um^2/s}
time: {end: 10 ms}
output: {snapshots: 5, rows: 50, figures: false}
initial: {lipids: stripes, stripes: 2, seed: 3}
`

func parse(t *testing.T, yaml string, set ...string) config.Config {
	t.Helper()
	c, err := config.Parse([]byte(yaml), "test.yaml")
	if err != nil {
		t.Fatal(err)
	}
	c, err = applySet(c, set, false)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func opts() JobOptions { return JobOptions{Version: "memix test", Quiet: true, Threads: 1} }

func readSummary(t *testing.T, dir string) Summary {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, SummaryFile))
	if err != nil {
		t.Fatal(err)
	}
	var s Summary
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	return s
}

// spectralState returns the checkpoint's spectral fields by name.
func spectralState(t *testing.T, dir string, g config.Config) map[string][]complex128 {
	t.Helper()
	r, err := config.Reduce(g)
	if err != nil {
		t.Fatal(err)
	}
	ck, err := outputs.ReadCheckpoint(filepath.Join(dir, CheckpointFile), r.Grid, outputs.Expect{})
	if err != nil {
		t.Fatal(err)
	}
	m := map[string][]complex128{}
	for _, f := range ck.Spectral {
		m[f.Name] = f.Data
	}
	return m
}

// TestInterruptAndResumeBitForBit: a run cancelled part-way (as SIGINT or
// SIGTERM would) and resumed from its checkpoint ends in exactly the state,
// series and snapshots of an uninterrupted run.
func TestInterruptAndResumeBitForBit(t *testing.T) {
	c := parse(t, smallRun)
	whole, parts := t.TempDir(), filepath.Join(t.TempDir(), "run")
	if _, err := Start(context.Background(), c, whole, opts()); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	go func() { // cancel once a few series rows exist; where exactly does not matter
		for {
			b, _ := os.ReadFile(filepath.Join(parts, SeriesFile))
			if bytes.Count(b, []byte("\n")) > 15 {
				cancel()
				return
			}
			time.Sleep(time.Millisecond)
		}
	}()
	sum, err := Start(ctx, c, parts, opts())
	if !errors.Is(err, ErrInterrupted) || sum.Status != "interrupted" {
		t.Fatalf("interrupted run: status %q, err %v", sum.Status, err)
	}
	if sum.Steps >= readSummary(t, whole).Steps {
		t.Skip("the run finished before it could be interrupted; nothing to resume")
	}
	if s := readSummary(t, parts); s.Status != "interrupted" || s.LastCheckpointStep == nil {
		t.Fatalf("summary after interruption: %+v", s)
	}
	if _, err := Resume(context.Background(), parts, opts()); err != nil {
		t.Fatal(err)
	}
	a, b := spectralState(t, whole, c), spectralState(t, parts, c)
	for name, x := range a {
		y := b[name]
		for i := range x {
			if math.Float64bits(real(x[i])) != math.Float64bits(real(y[i])) || math.Float64bits(imag(x[i])) != math.Float64bits(imag(y[i])) {
				t.Fatalf("field %s differs at %d after resume: %v vs %v", name, i, x[i], y[i])
			}
		}
	}
	sa, _ := os.ReadFile(filepath.Join(whole, SeriesFile))
	sb, _ := os.ReadFile(filepath.Join(parts, SeriesFile))
	if !bytes.Equal(sa, sb) {
		t.Error("series.csv of the resumed run differs from the uninterrupted one")
	}
	fa, _ := outputs.Open(filepath.Join(whole, "snapshots.h5"))
	fb, _ := outputs.Open(filepath.Join(parts, "snapshots.h5"))
	defer fa.Close()
	defer fb.Close()
	if na, nb := len(fa.Snapshots()), len(fb.Snapshots()); na != nb {
		t.Fatalf("%d snapshots resumed, %d uninterrupted", nb, na)
	}
	last := len(fa.Snapshots()) - 1
	pa, _ := fa.ReadField(nil, "phi", last)
	pb, _ := fb.ReadField(nil, "phi", last)
	for i := range pa {
		if pa[i] != pb[i] {
			t.Fatalf("last snapshot's phi differs at %d", i)
		}
	}
	if s := readSummary(t, parts); s.Status != "finished" {
		t.Errorf("resumed summary status %q", s.Status)
	}
}

// TestFailedRunKeepsLastGoodCheckpoint: a floor on the step size that the
// growing flow must cross stops the run with an error naming the step;
// the checkpoint on disk is the last good state, from which the run can be
// resumed with a smaller floor.
func TestFailedRunKeepsLastGoodCheckpoint(t *testing.T) {
	// On 32² the step starts at the ceiling time.end/200 = 300 µs and the
	// saturated flow needs about 250 µs (observed), below this floor.
	c := parse(t, smallRun, "time.dt_min=260 us", "output.checkpoint_wall=1 ns", "time.end=60 ms")
	dir := t.TempDir()
	sum, err := Start(context.Background(), c, dir, opts())
	var se *StepError
	if !errors.As(err, &se) {
		t.Fatalf("err = %v, want a StepError", err)
	}
	if sum.Status != "failed" || !strings.Contains(sum.Error, "step") || !strings.Contains(sum.Error, "dt") {
		t.Errorf("summary %q: %q; want failed naming the step and dt", sum.Status, sum.Error)
	}
	if sum.LastCheckpointStep == nil || *sum.LastCheckpointStep != se.Step-1 {
		t.Fatalf("last checkpoint %v, want the step before the failure (%d)", sum.LastCheckpointStep, se.Step-1)
	}
	ck := spectralState(t, dir, c)
	if len(ck) == 0 {
		t.Fatal("no checkpoint kept")
	}
	log, _ := os.ReadFile(filepath.Join(dir, LogFile))
	if !strings.Contains(string(log), "memix run --resume") {
		t.Errorf("run.log does not say how to resume:\n%s", log)
	}
	o := opts()
	o.Set = []string{"time.dt_min=1 us"}
	o.Quiet = true
	if _, err := Resume(context.Background(), dir, o); err != nil {
		t.Fatalf("resume with a smaller floor: %v", err)
	}
	if s := readSummary(t, dir); s.Status != "finished" {
		t.Errorf("after resume: %q", s.Status)
	}
}

func TestOutputDirectoryPolicy(t *testing.T) {
	c := parse(t, smallRun, "time.end=1 ms")
	dir := t.TempDir()
	if _, err := Start(context.Background(), c, dir, opts()); err != nil {
		t.Fatal(err)
	}
	if _, err := Start(context.Background(), c, dir, opts()); !errors.Is(err, ErrOutputExists) || !strings.Contains(err.Error(), "--force") {
		t.Errorf("second run into the same directory: %v; want a refusal naming --force", err)
	}
	o := opts()
	o.Force = true
	if _, err := Start(context.Background(), c, dir, o); err != nil {
		t.Errorf("--force: %v", err)
	}
	foreign := t.TempDir()
	os.WriteFile(filepath.Join(foreign, "thesis.tex"), []byte("x"), 0o644)
	if _, err := Start(context.Background(), c, foreign, o); err == nil {
		t.Error("--force wiped a directory memix did not write")
	}
	if _, err := os.Stat(filepath.Join(foreign, "thesis.tex")); err != nil {
		t.Error("the foreign file is gone")
	}
}

func TestResumeRefusesPhysicsChanges(t *testing.T) {
	c := parse(t, smallRun, "time.end=1 ms")
	dir := t.TempDir()
	if _, err := Start(context.Background(), c, dir, opts()); err != nil {
		t.Fatal(err)
	}
	o := opts()
	o.Set = []string{"inclusions.dipole=30 kT"}
	if _, err := Resume(context.Background(), dir, o); err == nil || !strings.Contains(err.Error(), "inclusions.dipole") {
		t.Errorf("resume changing the dipole: %v; want a refusal naming the key", err)
	}
	t.Setenv("MEMIX_MEMBRANE_VISCOSITY", "2e-9 Pa*s*m")
	if _, err := Resume(context.Background(), dir, opts()); err == nil || !strings.Contains(err.Error(), "MEMIX_MEMBRANE_VISCOSITY") {
		t.Errorf("resume under an environment override: %v", err)
	}
}

// TestLipidsFromFile: initial.lipids = file takes φ from the last snapshot
// of another run, exactly.
func TestLipidsFromFile(t *testing.T) {
	c := parse(t, smallRun, "time.end=2 ms")
	src := t.TempDir()
	if _, err := Start(context.Background(), c, src, opts()); err != nil {
		t.Fatal(err)
	}
	idx := filepath.Join(src, "snapshots.h5")
	d := parse(t, smallRun, "time.end=1 ms", "initial.lipids=file", "initial.file="+idx)
	dst := t.TempDir()
	if _, err := Start(context.Background(), d, dst, opts()); err != nil {
		t.Fatal(err)
	}
	fa, _ := outputs.Open(idx)
	fb, _ := outputs.Open(filepath.Join(dst, "snapshots.h5"))
	defer fa.Close()
	defer fb.Close()
	want, _ := fa.ReadField(nil, "phi", len(fa.Snapshots())-1)
	got, _ := fb.ReadField(nil, "phi", 0)
	// The snapshot is band-limited already (written from dealiased
	// coefficients), so reading it back through one transform pair
	// changes it by round-off only: 2ε·log₂N relative (spectral tests).
	tol := 2 * 0x1p-52 * 10 * 4
	for i := range want {
		if math.Abs(got[i]-want[i]) > tol {
			t.Fatalf("φ at %d: %v, file %v", i, got[i], want[i])
		}
	}
	bad := parse(t, smallRun, "grid.n=64", "initial.lipids=file", "initial.file="+idx)
	if _, err := Start(context.Background(), bad, t.TempDir(), opts()); err == nil || !strings.Contains(err.Error(), "grid") {
		t.Errorf("file of another grid: %v", err)
	}
}

// TestPassiveModeDecayRate is an end-to-end check of the run and its
// summary: a single lipid mode without inclusions decays as e^{−D k² t}
// (MODEL.md §4), so every norm's fitted decay rate is D k². The
// exponential integrator is exact for this linear problem, so the only
// error is round-off in the norms and the fit (observed below 1e-12
// relative; 1e-9 allows for the least-squares conditioning).
func TestPassiveModeDecayRate(t *testing.T) {
	c := parse(t, smallRun, "inclusions.model=none", "initial.lipids=mode", "initial.mode_x=2",
		"initial.mode_amplitude=0.5", "lipids.diffusion=2 um^2/s", "time.end=250 ms")
	dir := t.TempDir()
	sum, err := Start(context.Background(), c, dir, opts())
	if err != nil {
		t.Fatal(err)
	}
	k := 2 * math.Pi * 2 / 5e-6
	want := 2e-12 * k * k
	for name, n := range sum.Mixing {
		if n.DecayRatePerS == nil || math.Abs(*n.DecayRatePerS/want-1) > 1e-9 {
			t.Errorf("%s: decay rate %v /s, want D k² = %v /s", name, n.DecayRatePerS, want)
		}
	}
	if n := sum.Mixing["mixnorm"]; n.ThresholdTimeS == nil || math.Abs(*n.ThresholdTimeS*want-math.Log(10)) > 1e-6 {
		t.Errorf("threshold time %v s, want ln(10)/(Dk²) = %v s", n.ThresholdTimeS, math.Log(10)/want)
	}
}

// TestOutputReferenceCoversSeries keeps docs/outputs.md in step with the
// series columns and snapshot fields of every model combination.
func TestOutputReferenceCoversSeries(t *testing.T) {
	doc, err := os.ReadFile("../docs/outputs.md")
	if err != nil {
		t.Fatal(err)
	}
	for _, set := range [][]string{
		{"inclusions.model=moments", "lipids.model=passive"},
		{"inclusions.model=kinetic", "inclusions.harmonics=2", "lipids.model=phase", "initial.lipids=random"},
		{"inclusions.model=none", "lipids.model=passive"},
		{"inclusions.model=moments", "lipids.model=none"},
		{"lipids.model=phase", "initial.lipids=random", "membrane.viscosity_rule=log-linear", "membrane.viscosity_plus=1e-8 Pa*s*m"},
	} {
		c := parse(t, smallRun, set...)
		j, err := newJob(c, t.TempDir(), opts())
		if err != nil {
			t.Fatal(err)
		}
		for _, col := range j.seriesColumns() {
			if !strings.Contains(string(doc), "`"+col.Name+"` | `"+col.Unit+"`") {
				t.Errorf("docs/outputs.md lacks the series column %s [%s] (%v)", col.Name, col.Unit, set)
			}
		}
		for _, v := range j.model.Views() {
			if !strings.Contains(string(doc), "`"+v.Name+"`") && !strings.HasPrefix(v.Name, "a") && !strings.HasPrefix(v.Name, "b") {
				t.Errorf("docs/outputs.md lacks the snapshot field %s", v.Name)
			}
		}
		j.close()
	}
}

// TestVariableViscosityRun: with ordered and disordered domains of
// viscosity contrast 10 the run solves the flow iteratively, records the
// solver's work in series.csv and summary.json, keeps the power balance to
// the solver tolerance, and resumes bit for bit (the checkpoint holds the
// solver's warm start).
func TestVariableViscosityRun(t *testing.T) {
	set := []string{"grid.n=64", "lipids.model=phase", "lipids.interface=120 nm", "initial.lipids=disks", "initial.disks=3",
		"initial.disk_radius=0.8 um", "membrane.viscosity_rule=log-linear", "membrane.viscosity_plus=1e-8 Pa*s*m",
		"time.end=4 ms"}
	c := parse(t, smallRun, set...)
	whole := t.TempDir()
	sum, err := Start(context.Background(), c, whole, opts())
	if err != nil {
		t.Fatal(err)
	}
	fs := sum.FlowSolver
	if fs == nil || fs.Solves == 0 || fs.MeanIterations < 1 || fs.MaxResidual > 1e-8 || math.Abs(fs.ViscosityContrast-10) > 1e-12 {
		t.Fatalf("flow solver summary %+v", fs)
	}
	// Power balance to the solver tolerance: |P − D| ≤ r‖Pf‖‖u‖ (Cauchy–
	// Schwarz), bounded here by 10·tol·max(P, D) with the factor from the
	// norms' ratios observed in the fields tests.
	if p, d := sum.Final["active_power"], sum.Final["dissipation"]; math.Abs(p-d) > 1e-7*math.Max(math.Abs(p), math.Abs(d)) {
		t.Errorf("power %v, dissipation %v", p, d)
	}
	cols, rows, err := outputs.ReadSeries(filepath.Join(whole, SeriesFile))
	if err != nil {
		t.Fatal(err)
	}
	it := -1
	for i, col := range cols {
		if col.Name == "flow_iterations" {
			it = i
		}
	}
	if it < 0 || rows[len(rows)-1][it] < 1 {
		t.Fatalf("series lacks flow iterations: %v", cols)
	}

	parts := t.TempDir()
	o := opts()
	o.Set = []string{"time.max_steps=7"}
	if _, err := Start(context.Background(), c, parts, o); err != nil {
		t.Fatal(err)
	}
	o.Set = []string{"time.max_steps=0"}
	if _, err := Resume(context.Background(), parts, o); err != nil {
		t.Fatal(err)
	}
	a, b := spectralState(t, whole, c), spectralState(t, parts, c)
	for name, x := range a {
		for i := range x {
			if x[i] != b[name][i] {
				t.Fatalf("%s differs at %d after resume: %v vs %v", name, i, x[i], b[name][i])
			}
		}
	}
}

// TestInclusionsFromFile: initial.inclusions = file continues the
// inclusion fields of another run: exactly from its checkpoint (same
// model), and from a snapshot of a moment run into a kinetic run, where c
// and Q carry over and the other harmonics start at zero.
func TestInclusionsFromFile(t *testing.T) {
	c := parse(t, smallRun, "time.end=2 ms")
	src := t.TempDir()
	if _, err := Start(context.Background(), c, src, opts()); err != nil {
		t.Fatal(err)
	}
	ckPath := filepath.Join(src, CheckpointFile)
	same := parse(t, smallRun, "initial.inclusions=file", "initial.file="+ckPath)
	dst := t.TempDir()
	o := opts()
	o.Set = []string{"time.end=1 us"}
	if _, err := Start(context.Background(), same, dst, o); err != nil {
		t.Fatal(err)
	}
	fa, _ := outputs.Open(filepath.Join(src, "snapshots.h5"))
	defer fa.Close()
	fb, _ := outputs.Open(filepath.Join(dst, "snapshots.h5"))
	defer fb.Close()
	last := len(fa.Snapshots()) - 1
	for _, name := range []string{"c", "Q11", "Q12"} {
		want, _ := fa.ReadField(nil, name, last)
		got, _ := fb.ReadField(nil, name, 0)
		for i := range want {
			// Both snapshots are inverse transforms of the same coefficients.
			if got[i] != want[i] {
				t.Fatalf("%s at %d: %v, source %v", name, i, got[i], want[i])
			}
		}
	}
	kin := parse(t, smallRun, "inclusions.model=kinetic", "inclusions.harmonics=4", "initial.inclusions=file",
		"initial.file="+filepath.Join(src, "snapshots.h5"))
	kdst := t.TempDir()
	if _, err := Start(context.Background(), kin, kdst, o); err != nil {
		t.Fatal(err)
	}
	fk, _ := outputs.Open(filepath.Join(kdst, "snapshots.h5"))
	defer fk.Close()
	// One transform pair of a band-limited field: round-off (spectral tests).
	tol := 2 * 0x1p-52 * 10 * 8
	for _, name := range []string{"c", "Q11", "Q12"} {
		want, _ := fa.ReadField(nil, name, last)
		got, _ := fk.ReadField(nil, name, 0)
		for i := range want {
			if math.Abs(got[i]-want[i]) > tol*(1+math.Abs(want[i])) {
				t.Fatalf("kinetic %s at %d: %v, source %v", name, i, got[i], want[i])
			}
		}
	}
	a1, _ := fk.ReadField(nil, "a1", 0)
	for i := range a1 {
		if a1[i] != 0 {
			t.Fatalf("a1 at %d = %v, want 0 (not in a moment snapshot)", i, a1[i])
		}
	}
}
