package sim

import (
	"bytes"
	"context"
	"errors"
	"math"
	"strings"
	"testing"
	"time"
)

// fakeSystem advances time by dt per step and fails on request.
type fakeSystem struct {
	t, dt  float64
	n      int
	failAt int // step number whose Step fails (0: never)
	onStep func(n int)
}

func (f *fakeSystem) Step() error {
	if f.failAt > 0 && f.n+1 == f.failAt {
		return errors.New("field c is NaN at (3, 4)")
	}
	f.n++
	f.t += f.dt
	if f.onStep != nil {
		f.onStep(f.n)
	}
	return nil
}
func (f *fakeSystem) Time() float64 { return f.t }
func (f *fakeSystem) Steps() int    { return f.n }
func (f *fakeSystem) Dt() float64   { return f.dt }

type recorder struct{ events []Event }

func (r *recorder) Observe(e Event) error { r.events = append(r.events, e); return nil }

func TestRunFinishesAndSchedules(t *testing.T) {
	sys := &fakeSystem{dt: 0.1}
	byStep, byTime := &recorder{}, &recorder{}
	var checkpoints []int
	res, err := Run(context.Background(), sys, Options{
		EndTime: 1.0,
		Observers: []Scheduled{
			{Name: "steps", Observer: byStep, Schedule: Schedule{EverySteps: 3}, AtStart: true},
			{Name: "time", Observer: byTime, Schedule: Schedule{EveryTime: 0.25}},
		},
		Checkpoint:         func() error { checkpoints = append(checkpoints, sys.n); return nil },
		CheckpointSchedule: Schedule{EverySteps: 4},
	})
	if err != nil || res.Reason != Finished {
		t.Fatalf("Run = %v, %v; want finished", res.Reason, err)
	}
	// t reaches 1.0 after 10 steps of 0.1 (floating sums land within 1e-12 relative).
	if sys.n != 10 || res.Steps != 10 {
		t.Fatalf("took %d steps, want 10", sys.n)
	}
	steps := func(r *recorder) (s []int) {
		for _, e := range r.events {
			s = append(s, e.Step)
		}
		return
	}
	if got, want := steps(byStep), []int{0, 3, 6, 9, 10}; !equalInts(got, want) {
		t.Errorf("step observer at %v, want %v", got, want)
	}
	// Marks at multiples of 0.25: crossed by step 3 (t = 0.3), 5 (0.5, on
	// the mark), 8 (0.8) and 10 (1.0, a sum of ten 0.1 that lands within
	// 1e-9 of the mark); then the final call repeats step 10.
	if got, want := steps(byTime), []int{3, 5, 8, 10, 10}; !equalInts(got, want) {
		t.Errorf("time observer at %v, want %v", got, want)
	}
	if last := byStep.events[len(byStep.events)-1]; !last.Final || last.Failed {
		t.Errorf("last event %+v, want Final and not Failed", last)
	}
	if got, want := checkpoints, []int{4, 8, 10}; !equalInts(got, want) {
		t.Errorf("checkpoints at %v, want %v", got, want)
	}
	if res.LastGood != 10 || res.MinDt != 0.1 || res.MaxDt != 0.1 {
		t.Errorf("result %+v", res)
	}
}

func TestRunInterruptedFinishesStepAndCheckpoints(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	sys := &fakeSystem{dt: 1, onStep: func(n int) {
		if n == 5 {
			cancel() // as a signal handler would, in the middle of a step
		}
	}}
	rec := &recorder{}
	var ck []int
	res, err := Run(ctx, sys, Options{
		MaxSteps:   100,
		Observers:  []Scheduled{{Name: "rec", Observer: rec}},
		Checkpoint: func() error { ck = append(ck, sys.n); return nil },
	})
	if !errors.Is(err, ErrInterrupted) || res.Reason != Interrupted {
		t.Fatalf("Run = %v, %v; want interrupted", res.Reason, err)
	}
	if sys.n != 5 || !equalInts(ck, []int{5}) {
		t.Errorf("stopped at step %d with checkpoints %v; want step 5 checkpointed", sys.n, ck)
	}
	if len(rec.events) != 1 || !rec.events[0].Final {
		t.Errorf("observer events %+v, want one final", rec.events)
	}
}

func TestRunFailedStepKeepsLastGoodCheckpoint(t *testing.T) {
	sys := &fakeSystem{dt: 0.5, failAt: 7}
	rec := &recorder{}
	var ck []int
	res, err := Run(context.Background(), sys, Options{
		MaxSteps:           100,
		Observers:          []Scheduled{{Name: "rec", Observer: rec}},
		Checkpoint:         func() error { ck = append(ck, sys.n); return nil },
		CheckpointSchedule: Schedule{EverySteps: 5},
	})
	var se *StepError
	if !errors.As(err, &se) || res.Reason != Failed {
		t.Fatalf("Run = %v, %v; want a StepError", res.Reason, err)
	}
	if se.Step != 7 || se.Time != 3 || !strings.Contains(err.Error(), "NaN at (3, 4)") {
		t.Errorf("StepError %+v / %q: want step 7 at t = 3 naming the cause", se, err)
	}
	if !equalInts(ck, []int{5}) || res.LastGood != 5 {
		t.Errorf("checkpoints %v (last good %d): the failed state must not be checkpointed", ck, res.LastGood)
	}
	if n := len(rec.events); n != 1 || !rec.events[0].Final || !rec.events[0].Failed {
		t.Errorf("observer events %+v, want one Final+Failed", rec.events)
	}
}

func TestRunObserverErrorStops(t *testing.T) {
	sys := &fakeSystem{dt: 1}
	boom := errors.New("disk full")
	_, err := Run(context.Background(), sys, Options{
		MaxSteps: 10,
		Observers: []Scheduled{{Name: "snapshots", Schedule: Schedule{EverySteps: 2},
			Observer: ObserverFunc(func(e Event) error {
				if e.Step == 4 {
					return boom
				}
				return nil
			})}},
	})
	if !errors.Is(err, boom) || !strings.Contains(err.Error(), "snapshots at step 4") {
		t.Fatalf("err = %v, want the observer's error naming it and the step", err)
	}
	if sys.n != 4 {
		t.Errorf("ran to step %d, want to stop at 4", sys.n)
	}
}

// TestScheduleIsStateless: a run resumed at a checkpoint fires at the same
// steps as an uninterrupted one, because marks depend only on the clock.
func TestScheduleIsStateless(t *testing.T) {
	run := func(sys *fakeSystem, max int, resumed bool) []int {
		rec := &recorder{}
		_, err := Run(context.Background(), sys, Options{
			MaxSteps:  max,
			Resumed:   resumed,
			Observers: []Scheduled{{Name: "r", Observer: rec, Schedule: Schedule{EveryTime: 0.7, EverySteps: 4}, AtStart: true}},
		})
		if err != nil {
			t.Fatal(err)
		}
		var s []int
		for _, e := range rec.events {
			if !e.Final {
				s = append(s, e.Step)
			}
		}
		return s
	}
	whole := run(&fakeSystem{dt: 0.3}, 20, false)
	first := run(&fakeSystem{dt: 0.3}, 9, false)
	second := run(&fakeSystem{dt: 0.3, n: 9, t: 9 * 0.3}, 20, true)
	if got := append(first, second...); !equalInts(got, whole) {
		t.Errorf("interrupted at step 9 and resumed: observed at %v; uninterrupted %v", got, whole)
	}
}

func TestRunNeedsEndCondition(t *testing.T) {
	if _, err := Run(context.Background(), &fakeSystem{dt: 1}, Options{}); err == nil {
		t.Fatal("Run without an end condition did not fail")
	}
}

func TestLineProgress(t *testing.T) {
	var buf bytes.Buffer
	clock := time.Unix(0, 0)
	p := &lineProgress{w: &buf, every: 10 * time.Second, now: func() time.Time { return clock }, scale: 1e-3, unit: "s"}
	p.Start(0, 10, 0, 0)
	for i := 1; i <= 10; i++ {
		clock = clock.Add(4 * time.Second)
		p.Update(float64(i), i, 1)
	}
	p.Stop()
	lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
	// Updates at 4, 8, 12, ... 40 s: lines at 12, 24, 36 s, plus the final one.
	if len(lines) != 4 {
		t.Fatalf("got %d lines, want 4:\n%s", len(lines), buf.String())
	}
	if !strings.Contains(lines[0], "t = 0.003 s") || !strings.Contains(lines[0], "step 3") || !strings.Contains(lines[0], "30.0%") || !strings.Contains(lines[0], "eta 28s") {
		t.Errorf("first line %q: want step 3, 30.0%% and eta 28s", lines[0])
	}
	if !strings.Contains(lines[3], "100.0%") {
		t.Errorf("last line %q: want 100%%", lines[3])
	}
}

func TestSpanFraction(t *testing.T) {
	s := span{t0: 1, tEnd: 3, step0: 0, nSteps: 100}
	if f := s.fraction(2, 10); math.Abs(f-0.5) > 1e-15 {
		t.Errorf("fraction = %v, want 0.5 (time is further along)", f)
	}
	if f := s.fraction(1.2, 80); math.Abs(f-0.8) > 1e-15 {
		t.Errorf("fraction = %v, want 0.8 (steps are further along)", f)
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
