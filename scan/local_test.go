package scan

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
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

// TestRunLocalInterruptAndResume: cancelling the context stops the runs
// with SIGTERM; they leave checkpoints; the next run resumes exactly those
// and runs the rest, and nothing finished is run twice.
func TestRunLocalInterruptAndResume(t *testing.T) {
	sc := expandFake(t, `
base: {fake: {steps: 30, step_ms: 10}}
axes:
  fake.rate: [0.5, 1, 1.5, 2, 2.5]
`)
	ctx, cancel := context.WithCancel(context.Background())
	opt := LocalOptions{Workers: 2, Runner: fakeRunner(t)}
	// Cancel once two runs have taken a few steps (series.csv grows by a
	// line per step).
	go func() {
		defer cancel()
		deadline := time.Now().Add(20 * time.Second)
		for time.Now().Before(deadline) {
			n := 0
			for _, p := range sc.Points[:2] {
				if b, err := os.ReadFile(filepath.Join(sc.OutDir(p.ID), seriesFile)); err == nil && bytes.Count(b, []byte("\n")) > 4 {
					n++
				}
			}
			if n == 2 {
				return
			}
			time.Sleep(5 * time.Millisecond)
		}
	}()
	rep, err := RunLocal(ctx, sc.Dir, opt)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("RunLocal after cancel: err = %v, want context.Canceled", err)
	}
	if rep.Interrupted != 2 || rep.NotStarted != 3 || rep.Finished != 0 {
		t.Fatalf("report after cancel %+v", rep)
	}
	st, err := Status(context.Background(), sc.Dir, StatusOptions{Squeue: "/nonexistent/squeue"})
	if err != nil {
		t.Fatal(err)
	}
	if st.Counts[Interrupted] != 2 || st.Counts[Pending] != 3 {
		t.Fatalf("status after cancel: %s", st)
	}
	steps := map[string]float64{}
	for _, p := range sc.Points[:2] {
		m := summaryOf(t, sc, p.ID)
		if m["status"] != "interrupted" {
			t.Errorf("point %s: status %v", p.ID, m["status"])
		}
		steps[p.ID] = m["steps"].(float64)
	}

	rep, err = RunLocal(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Finished != 5 || rep.Failed != 0 {
		t.Fatalf("report after resume %+v", rep)
	}
	for i, p := range sc.Points {
		inv := invocations(t, sc, p.ID)
		m := summaryOf(t, sc, p.ID)
		if m["status"] != "finished" || m["steps"] != 30.0 {
			t.Errorf("point %d: summary %v", i, m)
		}
		if i < 2 {
			if len(inv) != 2 || !strings.HasPrefix(inv[1], "run --resume ") {
				t.Errorf("interrupted point %d invocations %q, want a fresh run then --resume", i, inv)
			}
			if m["resumed_from"] != steps[p.ID] {
				t.Errorf("point %d resumed from step %v, its checkpoint was at %v", i, m["resumed_from"], steps[p.ID])
			}
		} else if len(inv) != 1 || strings.Contains(inv[0], "--resume") {
			t.Errorf("point %d invocations %q, want one fresh run", i, inv)
		}
	}
	// A third run has nothing to do.
	rep, err = RunLocal(context.Background(), sc.Dir, opt)
	if err != nil || rep.AlreadyFinished != 5 || len(rep.Results) != 0 {
		t.Errorf("third run: %+v, %v", rep, err)
	}
}

// TestTwoScansConcurrently: two scans in different folders run at the same
// time without touching each other's points.
func TestTwoScansConcurrently(t *testing.T) {
	a := expandFake(t, "base: {fake: {steps: 3, step_ms: 2}}\naxes: {fake.rate: [1, 2, 3, 4]}\n")
	b := expandFake(t, "base: {fake: {steps: 4, step_ms: 2}}\naxes: {fake.rate: [1, 2, 3, 4]}\n")
	// The same parameters give the same identifiers in both scans.
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
			reps[i], errs[i] = RunLocal(context.Background(), sc.Dir, LocalOptions{Workers: 2, Runner: fakeRunner(t)})
		}()
	}
	wg.Wait()
	for i, sc := range []*Scan{a, b} {
		if errs[i] != nil || reps[i].Finished != 4 {
			t.Fatalf("scan %d: %+v, %v", i, reps[i], errs[i])
		}
		for _, p := range sc.Points {
			m := summaryOf(t, sc, p.ID)
			if want := float64(3 + i); m["steps"] != want {
				t.Errorf("scan %d point %s ran %v steps, want %v (its own config)", i, p.ID, m["steps"], want)
			}
			if n := len(invocations(t, sc, p.ID)); n != 1 {
				t.Errorf("scan %d point %s ran %d times", i, p.ID, n)
			}
		}
	}
}

// TestTwoRunnersOneScan: two RunLocal calls on the same scan share the
// points through the point locks; each point runs once.
func TestTwoRunnersOneScan(t *testing.T) {
	sc := expandFake(t, "base: {fake: {steps: 3, step_ms: 20}}\naxes: {fake.rate: [1, 2, 3, 4, 5, 6]}\n")
	var wg sync.WaitGroup
	reps := make([]LocalReport, 2)
	for i := range reps {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var err error
			reps[i], err = RunLocal(context.Background(), sc.Dir, LocalOptions{Workers: 2, Runner: fakeRunner(t)})
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
		if n := len(invocations(t, sc, p.ID)); n != 1 {
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
