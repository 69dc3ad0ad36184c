package sim

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/outputs"
)

// checkpointIn reads the checkpoint of the run of c in dir.
func checkpointIn(t *testing.T, dir string, c config.Config) *outputs.Checkpoint {
	t.Helper()
	r, err := config.Reduce(c)
	if err != nil {
		t.Fatal(err)
	}
	ck, err := outputs.ReadCheckpoint(filepath.Join(dir, CheckpointFile), r.Grid, outputs.Expect{})
	if err != nil {
		t.Fatal(err)
	}
	return ck
}

// TestBlowUpNeverCheckpointed: with a checkpoint after every step and a
// fixed step far too large (5 ms against an e-folding time of 3.8 ms), the
// fields overflow after a few steps. The step that overflows must fail
// itself, so that the checkpoint on disk is the finite state of the step
// before; before this was checked, the overflowing state was checkpointed
// and only the next step failed. The error must name the field, the
// failed step, its size and a grid point, and suggest a smaller step.
func TestBlowUpNeverCheckpointed(t *testing.T) {
	c := parse(t, smallRun, "time.fixed=true", "time.dt_max=5 ms", "time.end=1 s", "output.checkpoint_wall=1 ns")
	dir := t.TempDir()
	sum, err := Start(context.Background(), c, dir, opts())
	var (
		fe *FailureError
		se *StepError
		bu *BlowUpError
	)
	if !errors.As(err, &fe) || !errors.As(err, &se) || !errors.As(err, &bu) {
		t.Fatalf("err = %v, want a FailureError wrapping a StepError wrapping a BlowUpError", err)
	}
	t.Log(err)
	if fe.Field != bu.Field || fe.Step != se.Step || math.IsNaN(fe.X) || math.IsNaN(fe.Y) || math.IsInf(bu.Max, 0) {
		t.Errorf("failure %+v, blow-up %+v", fe, bu)
	}
	// The failed step's size is the fixed 5 ms, to the round-off of the
	// reduction to τ₀ and back (a few ulp).
	if dt := bu.Dt * float64(c.ReducedUnits().Time); math.Abs(dt/5e-3-1) > 1e-14 {
		t.Errorf("failed step dt = %v s, want 5 ms", dt)
	}
	ck := checkpointIn(t, dir, c)
	if int(ck.Step) != se.Step-1 || fe.CheckpointStep != se.Step-1 || *sum.LastCheckpointStep != se.Step-1 {
		t.Errorf("checkpoint at step %d (reported %d, summary %d); the failure at step %d", ck.Step, fe.CheckpointStep, *sum.LastCheckpointStep, se.Step)
	}
	for _, f := range ck.Spectral {
		if !finite(f.Data) {
			t.Fatalf("checkpoint field %s is not finite", f.Name)
		}
	}
	if !strings.Contains(fe.Resume, "--resume "+dir) || !strings.Contains(fe.Resume, "time.dt_max=1.2ms") || fe.Restart == "" {
		t.Errorf("resume %q, restart %q", fe.Resume, fe.Restart)
	}
}

// TestResumeWithAnotherLadder: --set time.dt_max / time.dt_min on resume
// change the ladder of step sizes, so the recorded level may not exist
// (it made SetLevel panic) or mean another step. The run must continue
// from the largest new step not above the recorded one.
func TestResumeWithAnotherLadder(t *testing.T) {
	c := parse(t, smallRun, "time.end=60 ms") // ends on level 1 of 300 µs·2^(−j/4) (observed)
	dir := t.TempDir()
	if _, err := Start(context.Background(), c, dir, opts()); err != nil {
		t.Fatal(err)
	}
	ck := checkpointIn(t, dir, c)
	level := ck.ScalarByName("level").Value
	if level < 1 {
		t.Fatalf("the run ended at level %v; the test needs a level the new one-level ladder lacks", level)
	}
	o := opts()
	o.Set = []string{"time.end=62 ms", "time.dt_max=200 us", "time.dt_min=190 us"} // one level: 200 µs
	sum, err := Resume(context.Background(), dir, o)
	if err != nil {
		t.Fatalf("resume at level %v onto a two-level ladder: %v", level, err)
	}
	if sum.DtMaxS == nil || *sum.DtMaxS > 200e-6*(1+1e-12) || sum.Status != "finished" {
		t.Errorf("resumed run: status %s, largest step %v s (at most 200 µs)", sum.Status, sum.DtMaxS)
	}
	t.Logf("recorded level %v, dt %.4g τ₀; resumed with steps up to %.4g s", level, ck.Dt, *sum.DtMaxS)
}

// TestRunWriteFailureEndsFailed: an observer that cannot write (here its
// error stands for a full disk) ends the run as failed, not as finished:
// the observers are closed and the checkpoint is not rewritten.
func TestRunWriteFailureEndsFailed(t *testing.T) {
	sys := &fakeSystem{dt: 1}
	rec := &recorder{}
	var ck []int
	full := errors.New("no space left on device")
	res, err := Run(context.Background(), sys, Options{
		MaxSteps: 10,
		Observers: []Scheduled{
			{Name: "snapshots", Observer: ObserverFunc(func(e Event) error {
				if e.Step == 4 && !e.Final {
					return full
				}
				return nil
			}), Schedule: Schedule{EverySteps: 2}},
			{Name: "rec", Observer: rec},
		},
		Checkpoint:         func() error { ck = append(ck, sys.n); return nil },
		CheckpointSchedule: Schedule{EverySteps: 3},
		CheckpointAtStart:  true,
	})
	if !errors.Is(err, full) || res.Reason != Failed || !strings.Contains(err.Error(), "snapshots at step 4") {
		t.Fatalf("Run = %v, %v; want failed with the write error", res.Reason, err)
	}
	if !equalInts(ck, []int{0, 3}) || res.LastGood != 3 {
		t.Errorf("checkpoints %v (last good %d), want 0 and 3", ck, res.LastGood)
	}
	if n := len(rec.events); n != 1 || !rec.events[0].Final || !rec.events[0].Failed {
		t.Errorf("observer events %+v, want one final failed", rec.events)
	}
}

// TestSummaryOfDivergingRun: the norms of a diverging run can overflow;
// summary.json must still be written, with null where a value is not
// finite, and keep the finite ones.
func TestSummaryOfDivergingRun(t *testing.T) {
	n := NormSummary{Initial: 0.5, Final: math.Inf(1), Ratio: math.Inf(1), PowerExponent: ptr(2.0)}
	b, err := json.Marshal(map[string]*NormSummary{"mixnorm": &n})
	if err != nil {
		t.Fatal(err)
	}
	want := `{"mixnorm":{"initial":0.5,"final":null,"ratio":null,"decay_rate_per_s":null,"fit_start_s":null,"fit_end_s":null,"power_exponent":2,"threshold_time_s":null}}`
	if string(b) != want {
		t.Errorf("got  %s\nwant %s", b, want)
	}
}

// TestDivergingRunWritesSummary: a fixed step a little too large (3 ms)
// lets the fields grow for a dozen steps before they overflow, long
// enough for a diagnostic of series.csv (a sum of squares) to overflow
// first. summary.json must still be written (it was not: JSON has no
// infinity), saying the run failed.
func TestDivergingRunWritesSummary(t *testing.T) {
	c := parse(t, smallRun, "time.fixed=true", "time.dt_max=3 ms", "time.end=1 s", "output.rows=1000")
	dir := t.TempDir()
	if _, err := Start(context.Background(), c, dir, opts()); err == nil {
		t.Fatal("the run did not fail")
	}
	series, _ := os.ReadFile(filepath.Join(dir, SeriesFile))
	if !strings.Contains(string(series), "Inf") {
		t.Fatal("no diagnostic overflowed: the test no longer covers the case")
	}
	if s := readSummary(t, dir); s.Status != "failed" || !strings.Contains(s.Error, "non-finite") {
		t.Errorf("summary: %q, %q", s.Status, s.Error)
	}
}
