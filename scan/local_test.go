package scan

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/memix-sim/memix/config"
)

// expandFake expands a sweep of fake runs into a new scan folder.
func expandFake(t testing.TB, sweep string) *Scan {
	t.Helper()
	s := writeSweep(t, sweep, "")
	sc, err := Expand(s, filepath.Join(t.TempDir(), "scan"), ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return sc
}

func summaryOf(t testing.TB, sc *Scan, id string) map[string]any {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal([]byte(readFile(t, filepath.Join(sc.OutDir(id), summaryFile))), &m); err != nil {
		t.Fatal(err)
	}
	return m
}

// TestRunLocalFailuresAndRerun: a failing point is recorded with its error
// and the others go on; a second run skips the finished points and retries
// the failed one, keeping its old output.
func TestRunLocalFailuresAndRerun(t *testing.T) {
	sc := expandFake(t, `
base: {fake: {steps: 3, step_ms: 1}}
axes:
  fake.rate: [0.5, 1, 2]
  fake.fail: ["", "the grid is too coarse for this viscosity"]
`)
	var progress bytes.Buffer
	opt := LocalOptions{Workers: 2, Threads: 3, Runner: fakeRunner(t), Progress: &progress}
	rep, err := RunLocal(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Finished != 3 || rep.Failed != 3 || rep.AlreadyFinished != 0 || len(rep.Results) != 6 {
		t.Fatalf("report %+v", rep)
	}
	for _, p := range sc.Points {
		fail, _ := p.Param("fake.fail")
		pd := sc.PointDir(p.ID)
		if fail == "" {
			m := summaryOf(t, sc, p.ID)
			if m["status"] != "finished" || m["threads"] != 3.0 {
				t.Errorf("point %s: summary %v, want finished with threads 3", p.Label(), m)
			}
			continue
		}
		got := readFile(t, filepath.Join(pd, failureFile))
		for _, want := range []string{"exit status 1", "summary error: the grid is too coarse", "stderr (last lines):", "fakememix: the grid is too coarse"} {
			if !strings.Contains(got, want) {
				t.Errorf("failure.txt of %s lacks %q:\n%s", p.Label(), want, got)
			}
		}
		if _, err := os.Stat(filepath.Join(pd, runningFile)); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("running marker left behind: %v", err)
		}
	}
	last := strings.TrimSpace(progress.String())
	last = last[strings.LastIndexByte(last, '\n')+1:]
	if !strings.HasPrefix(last, "scan: 3/6 finished, 3 failed; elapsed") {
		t.Errorf("last progress line %q", last)
	}

	// Second run: only the failed points run again, from scratch.
	rep, err = RunLocal(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if rep.AlreadyFinished != 3 || rep.Failed != 3 || rep.Finished != 0 {
		t.Fatalf("second report %+v", rep)
	}
	for _, p := range sc.Points {
		fail, _ := p.Param("fake.fail")
		n := len(invocations(t, sc, p.ID))
		if fail == "" && n != 1 {
			t.Errorf("finished point %s ran %d times, want once", p.Label(), n)
		}
		if fail != "" {
			if n != 2 {
				t.Errorf("failed point %s ran %d times, want twice", p.Label(), n)
			}
			if _, err := os.Stat(filepath.Join(sc.PointDir(p.ID), "out.attempt-1", summaryFile)); err != nil {
				t.Errorf("the first attempt's output was not kept: %v", err)
			}
			if log := readFile(t, filepath.Join(sc.PointDir(p.ID), failuresLog)); strings.Count(log, "--- ") != 2 {
				t.Errorf("failures.log should hold both failures:\n%s", log)
			}
		}
	}
}

// tinyBase is a small real configuration (an invented motor patch on a
// coarse grid): about 0.3 s per run of 20 ms of model time.
const tinyBase = `membrane: {viscosity: 1e-9 Pa*s*m}
grid: {n: 32, box: 5 um, threads: 1}
inclusions: {dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}
lipids: {model: passive}
time: {end: 20 ms}
output: {snapshots: 0, rows: 200, figures: false}
initial: {lipids: stripes, stripes: 2, seed: 7}
`

// expandReal expands a sweep of real runs over base (written as base.yaml
// beside the sweep), validated by the config package, into a new folder.
func expandReal(t testing.TB, sweep, base string) *Scan {
	t.Helper()
	s := writeSweep(t, sweep, base)
	sc, err := Expand(s, filepath.Join(t.TempDir(), "scan"), ExpandOptions{Validate: ValidateConfig})
	if err != nil {
		t.Fatal(err)
	}
	return sc
}

// seriesRows returns the data lines of a point's series.csv.
func seriesRows(sc *Scan, id string) int {
	b, err := os.ReadFile(filepath.Join(sc.OutDir(id), seriesFile))
	if err != nil {
		return 0
	}
	return bytes.Count(b, []byte("\n")) - 1
}

// TestRunLocalInterruptAndResume runs real points: cancelling the context
// stops the two running ones with SIGTERM, and they leave checkpoints; the
// next RunLocal resumes exactly those (memix run --resume) and runs the two
// that never started. Nothing is lost or clobbered: the resumed point's
// series.csv and final state are byte for byte those of the same
// configuration run without interruption (memix resumes bit for bit), and
// no output was moved aside.
func TestRunLocalInterruptAndResume(t *testing.T) {
	sc := expandReal(t, `
base: base.yaml
zip:
  - inclusions.dipole: [10 kT, 12 kT, 14 kT, 16 kT]
    time.end: [2 s, 2 s, 20 ms, 20 ms]
`, tinyBase)
	ctx, cancel := context.WithCancel(context.Background())
	opt := LocalOptions{Workers: 2, Threads: 1, Runner: realRunner(t)}
	// Cancel once both long runs have written a few rows (10 ms of model
	// time apart, about a hundredth of each run).
	go func() {
		defer cancel()
		deadline := time.Now().Add(60 * time.Second)
		for time.Now().Before(deadline) && (seriesRows(sc, sc.Points[0].ID) < 4 || seriesRows(sc, sc.Points[1].ID) < 4) {
			time.Sleep(5 * time.Millisecond)
		}
	}()
	rep, err := RunLocal(ctx, sc.Dir, opt)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("RunLocal after cancel: err = %v, want context.Canceled", err)
	}
	if rep.Interrupted != 2 || rep.NotStarted != 2 || rep.Finished != 0 {
		t.Fatalf("report after cancel %+v", rep)
	}
	st, err := Status(context.Background(), sc.Dir, StatusOptions{Squeue: "/nonexistent/squeue"})
	if err != nil {
		t.Fatal(err)
	}
	if st.Counts[Interrupted] != 2 || st.Counts[Pending] != 2 {
		t.Fatalf("status after cancel: %s", st)
	}
	stepsAt := map[string]float64{}
	for _, p := range sc.Points[:2] {
		m := summaryOf(t, sc, p.ID)
		if m["status"] != "interrupted" {
			t.Errorf("point %s: status %v", p.ID, m["status"])
		}
		if _, err := os.Stat(filepath.Join(sc.OutDir(p.ID), checkpointH5)); err != nil {
			t.Errorf("point %s: no checkpoint after the interruption: %v", p.ID, err)
		}
		stepsAt[p.ID] = m["steps"].(float64)
	}

	// The reference: point 0's configuration run once without a break,
	// beside the resumed scan.
	ref := filepath.Join(t.TempDir(), "ref")
	refDone := make(chan error, 1)
	go func() {
		out, err := exec.Command(memixBin, "run", filepath.Join(sc.PointDir(sc.Points[0].ID), pointConfig), "-o", ref, "--quiet", "--threads", "1").CombinedOutput()
		if err != nil {
			err = fmt.Errorf("%v\n%s", err, out)
		}
		refDone <- err
	}()
	rep, err = RunLocal(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Finished != 4 || rep.Failed != 0 {
		t.Fatalf("report after resume %+v", rep)
	}
	if err := <-refDone; err != nil {
		t.Fatalf("reference run: %v", err)
	}
	for i, p := range sc.Points {
		att := attempts(t, sc, p.ID)
		m := summaryOf(t, sc, p.ID)
		if m["status"] != "finished" {
			t.Errorf("point %d: status %v", i, m["status"])
		}
		if dirs, _ := filepath.Glob(filepath.Join(sc.PointDir(p.ID), attemptPrefix+"*")); len(dirs) != 0 {
			t.Errorf("point %d: outputs moved aside: %v", i, dirs)
		}
		if i >= 2 {
			if len(att) != 1 || strings.Contains(att[0], "--resume") {
				t.Errorf("point %d attempts %q, want one fresh run", i, att)
			}
			continue
		}
		if len(att) != 2 || !strings.Contains(att[1], " run --resume "+sc.OutDir(p.ID)) {
			t.Errorf("interrupted point %d attempts %q, want a fresh run then --resume", i, att)
		}
		if got, want := m["steps"].(float64)-m["steps_this_call"].(float64), stepsAt[p.ID]; got != want {
			t.Errorf("point %d resumed at step %v, its checkpoint was at %v", i, got, want)
		}
	}
	p0 := sc.Points[0].ID
	if got, want := readFile(t, filepath.Join(sc.OutDir(p0), seriesFile)), readFile(t, filepath.Join(ref, seriesFile)); got != want {
		t.Errorf("the resumed point's series.csv differs from the uninterrupted run's (%d and %d bytes)", len(got), len(want))
	}
	var refSum map[string]any
	if err := json.Unmarshal([]byte(readFile(t, filepath.Join(ref, summaryFile))), &refSum); err != nil {
		t.Fatal(err)
	}
	if got := summaryOf(t, sc, p0); !reflect.DeepEqual(got["final"], refSum["final"]) || !reflect.DeepEqual(got["mixing"], refSum["mixing"]) {
		t.Errorf("resumed final state %v\nmixing %v\nuninterrupted %v\nmixing %v", got["final"], got["mixing"], refSum["final"], refSum["mixing"])
	}
	// A third run has nothing to do.
	rep, err = RunLocal(context.Background(), sc.Dir, opt)
	if err != nil || rep.AlreadyFinished != 4 || len(rep.Results) != 0 {
		t.Errorf("third run: %+v, %v", rep, err)
	}
}

// TestTwoScansConcurrently: two scans of real runs in different folders, at
// the same time, with the same point identifiers (the same parameters over
// different bases), each write only their own points: every point ran once,
// with its own scan's configuration, and the gathered results differ.
func TestTwoScansConcurrently(t *testing.T) {
	const sweep = "base: base.yaml\naxes: {inclusions.dipole: [10 kT, 12 kT, 14 kT, 16 kT]}\n"
	a := expandReal(t, sweep, tinyBase)
	b := expandReal(t, sweep, strings.Replace(tinyBase, "n: 32", "n: 40", 1))
	if a.Points[0].ID != b.Points[0].ID {
		t.Fatalf("identifiers differ: %s, %s", a.Points[0].ID, b.Points[0].ID)
	}
	var wg sync.WaitGroup
	reps := make([]LocalReport, 2)
	errs := make([]error, 2)
	for i, sc := range []*Scan{a, b} {
		wg.Add(1)
		go func() {
			defer wg.Done()
			reps[i], errs[i] = RunLocal(context.Background(), sc.Dir, LocalOptions{Workers: 2, Threads: 1, Runner: realRunner(t)})
		}()
	}
	wg.Wait()
	tabs := make([]*Table, 2)
	for i, sc := range []*Scan{a, b} {
		if errs[i] != nil || reps[i].Finished != 4 {
			t.Fatalf("scan %d: %+v, %v", i, reps[i], errs[i])
		}
		for _, p := range sc.Points {
			if n := len(attempts(t, sc, p.ID)); n != 1 {
				t.Errorf("scan %d point %s ran %d times", i, p.ID, n)
			}
			// The run's resolved configuration is its own scan's point.
			c, err := config.Load(filepath.Join(sc.OutDir(p.ID), "config.resolved.yaml"))
			if err != nil {
				t.Fatal(err)
			}
			want, err := config.Load(filepath.Join(sc.PointDir(p.ID), pointConfig))
			if err != nil {
				t.Fatal(err)
			}
			nx, _ := c.Grid.Size()
			gd, _ := c.Value("inclusions.dipole")
			wd, _ := want.Value("inclusions.dipole")
			if nx != 32+8*i || gd != wd {
				t.Errorf("scan %d point %s ran with grid %d and dipole %s, want %d and %s", i, p.ID, nx, gd, 32+8*i, wd)
			}
		}
		var err error
		if tabs[i], _, err = Gather(context.Background(), sc.Dir, GatherOptions{NoFigures: true, Squeue: "/nonexistent/squeue"}); err != nil {
			t.Fatal(err)
		}
	}
	for j := range a.Points {
		ra, rb := tabs[0].Rows[j], tabs[1].Rows[j]
		x, okx := ra.Results["mixing.mixnorm.ratio"]
		y, oky := rb.Results["mixing.mixnorm.ratio"]
		if ra.State != Finished || rb.State != Finished || !okx || !oky || x == y {
			t.Errorf("point %s: gathered %s %v and %s %v; want two finished runs with different results", ra.ID, ra.State, x, rb.State, y)
		}
	}
}

// TestTwoRunnersOneScan: two RunLocal calls on the same scan share the
// points through the point locks; each point runs once.
func TestTwoRunnersOneScan(t *testing.T) {
	sc := expandReal(t, "base: base.yaml\naxes: {inclusions.dipole: [10 kT, 11 kT, 12 kT, 13 kT, 14 kT, 15 kT]}\n", tinyBase)
	var wg sync.WaitGroup
	reps := make([]LocalReport, 2)
	for i := range reps {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var err error
			reps[i], err = RunLocal(context.Background(), sc.Dir, LocalOptions{Workers: 2, Threads: 1, Runner: realRunner(t)})
			if err != nil {
				t.Error(err)
			}
		}()
	}
	wg.Wait()
	if got := reps[0].Finished + reps[1].Finished; got != 6 {
		t.Errorf("finished runs %d + %d, want 6 in total (reports %+v)", reps[0].Finished, reps[1].Finished, reps)
	}
	for _, p := range sc.Points {
		if n := len(attempts(t, sc, p.ID)); n != 1 {
			t.Errorf("point %s ran %d times, want once", p.ID, n)
		}
		if m := summaryOf(t, sc, p.ID); m["status"] != "finished" {
			t.Errorf("point %s: %v", p.ID, m["status"])
		}
	}
}

func TestRunLocalErrors(t *testing.T) {
	if _, err := RunLocal(context.Background(), t.TempDir(), LocalOptions{}); err == nil || !strings.Contains(err.Error(), "not a scan directory") {
		t.Errorf("empty folder: %v", err)
	}
	sc := expandFake(t, "base: {a: 1}\naxes: {b: [1]}\n")
	_, err := RunLocal(context.Background(), sc.Dir, LocalOptions{Runner: Runner{Command: []string{"/nonexistent/memix"}}})
	if err == nil || !strings.Contains(err.Error(), "/nonexistent/memix") {
		t.Errorf("missing runner: %v", err)
	}
	// A point whose memix still runs (its runner died) is left alone.
	sc = expandFake(t, "base: {a: 1}\naxes: {b: [1, 2]}\n")
	host, _ := os.Hostname()
	if err := os.WriteFile(filepath.Join(sc.PointDir(sc.Points[0].ID), runningFile),
		[]byte("kind=local\nhost="+host+"\npid="+strconv.Itoa(os.Getpid())+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	rep, err := RunLocal(context.Background(), sc.Dir, LocalOptions{Runner: fakeRunner(t)})
	if err != nil || rep.Busy != 1 || rep.Finished != 1 || invocations(t, sc, sc.Points[0].ID) != nil {
		t.Errorf("live marker: %+v, %v", rep, err)
	}
	// A crash without a summary is a failure with the stderr tail.
	sc = expandFake(t, "base: {fake: {crash: true}}\naxes: {b: [1]}\n")
	rep, err = RunLocal(context.Background(), sc.Dir, LocalOptions{Runner: fakeRunner(t)})
	if err != nil || rep.Failed != 1 || !strings.Contains(rep.Results[0].Error, "exit status 2") ||
		!strings.Contains(rep.Results[0].Error, "crashed (fake.crash)") {
		t.Errorf("crash: %+v, %v", rep, err)
	}
}
