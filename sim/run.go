package sim

import (
	"context"
	"errors"
	"fmt"
	"math"
	"time"
)

// System is what the loop advances.
type System interface {
	// Step advances the state by one accepted step. An error means the
	// state can no longer be trusted; the loop stops.
	Step() error
	// Time returns the current time; Steps the number of steps taken;
	// Dt the size of the last accepted step (or the next one before the
	// first step).
	Time() float64
	Steps() int
	Dt() float64
}

// Event describes the moment an observer is called.
type Event struct {
	Step        int
	Time        float64
	Dt          float64
	Final       bool // the last call of the run
	Failed      bool // the run stops because a step failed; the state is not trustworthy
	Interrupted bool // the run stops because the context was cancelled
}

// Observer receives events on its schedule. An error stops the run (it is
// returned by Run); a Final call's error is returned after the other
// observers have been called. The Final call may repeat the step of the
// observer's last regular call: an observer that records rows should skip
// a step it has already recorded.
type Observer interface {
	Observe(e Event) error
}

// ObserverFunc adapts a function to Observer.
type ObserverFunc func(e Event) error

// Observe calls f(e).
func (f ObserverFunc) Observe(e Event) error { return f(e) }

// Schedule says when an observer fires: whenever the step count passes a
// multiple of EverySteps, whenever the time passes a multiple of
// EveryTime, and whenever EveryWall of wall-clock time has gone by since
// its last call. The step and time criteria depend only on the clock, not
// on the history of the run, so a run resumed from a checkpoint fires at
// the same steps as an uninterrupted one. Zero disables a criterion.
type Schedule struct {
	EverySteps int
	EveryTime  float64
	EveryWall  time.Duration
}

// due reports whether the step from (step0, t0) to (step1, t1) crosses one
// of s's marks; lastWall is updated when the wall-clock criterion fires.
func (s Schedule) due(step0, step1 int, t0, t1 float64, lastWall *time.Time, now time.Time) bool {
	fire := false
	if s.EverySteps > 0 && step1/s.EverySteps > step0/s.EverySteps {
		fire = true
	}
	if s.EveryTime > 0 && mark(t1, s.EveryTime) > mark(t0, s.EveryTime) {
		fire = true
	}
	if s.EveryWall > 0 && now.Sub(*lastWall) >= s.EveryWall {
		fire = true
	}
	if fire {
		*lastWall = now
	}
	return fire
}

// mark returns the index of the last multiple of every at or before t,
// counting a time within 1e-9 of a mark (relative to every) as on it, so
// that sums of steps that should land on a mark do.
func mark(t, every float64) float64 { return math.Floor(t/every + 1e-9) }

// Scheduled pairs an observer with its schedule.
type Scheduled struct {
	Name     string
	Observer Observer
	Schedule Schedule
	// AtStart calls the observer once before the first step (not when
	// Options.Resumed is set: the state was observed before).
	AtStart bool
}

// Options configures Run.
type Options struct {
	EndTime  float64 // stop when Time() ≥ EndTime (0: no time limit)
	MaxSteps int     // stop after this many steps in total (0: no limit)

	Observers []Scheduled

	// Checkpoint, if set, is called on its schedule, at the end of a
	// finished or interrupted run, and never after a failed step.
	Checkpoint         func() error
	CheckpointSchedule Schedule
	// CheckpointAtStart also checkpoints the initial state, after the
	// AtStart observers (not when Resumed), so that a run failing before
	// its first scheduled checkpoint can still be resumed.
	CheckpointAtStart bool

	// Progress receives progress updates; nil disables them.
	Progress Progress

	// Resumed says the system continues from a checkpoint: AtStart
	// observers are not called again.
	Resumed bool
}

// Reason says why a run ended.
type Reason string

// The reasons a run ends.
const (
	Finished    Reason = "finished"
	Interrupted Reason = "interrupted"
	Failed      Reason = "failed"
)

// Result summarises a run.
type Result struct {
	Reason   Reason
	Steps    int           // steps taken in this call of Run
	Time     float64       // final time
	Wall     time.Duration // wall time of this call
	MinDt    float64       // smallest and largest accepted step
	MaxDt    float64
	LastGood int // step of the last state written by Checkpoint (-1 if none)
}

// ErrInterrupted is returned when the context is cancelled.
var ErrInterrupted = errors.New("run interrupted; checkpoint written")

// StepError reports a failed step.
type StepError struct {
	Step int     // the step that failed (1-based count of the attempted step)
	Time float64 // time before the failed step
	Dt   float64
	Err  error
}

func (e *StepError) Error() string {
	return fmt.Sprintf("step %d at t = %.6g (dt = %.3g) failed: %v", e.Step, e.Time, e.Dt, e.Err)
}

func (e *StepError) Unwrap() error { return e.Err }

// Run advances sys until opt's end condition, ctx cancellation or a failed
// step. See the package documentation for what happens in each case.
func Run(ctx context.Context, sys System, opt Options) (Result, error) {
	if opt.EndTime <= 0 && opt.MaxSteps <= 0 {
		return Result{}, errors.New("sim: no end condition: set an end time or a maximum step count")
	}
	start := time.Now()
	res := Result{LastGood: -1, MinDt: math.Inf(1)}
	walls := make([]time.Time, len(opt.Observers))
	for i := range walls {
		walls[i] = start
	}
	ckWall := start
	event := func(final, failed bool) Event {
		return Event{Step: sys.Steps(), Time: sys.Time(), Dt: sys.Dt(), Final: final, Failed: failed,
			Interrupted: final && res.Reason == Interrupted}
	}
	checkpoint := func() error {
		if opt.Checkpoint == nil {
			return nil
		}
		if err := opt.Checkpoint(); err != nil {
			return fmt.Errorf("checkpoint at step %d: %w", sys.Steps(), err)
		}
		res.LastGood = sys.Steps()
		return nil
	}
	// finish calls every observer with Final set and joins their errors.
	finish := func(failed bool) error {
		var errs []error
		for _, o := range opt.Observers {
			if err := o.Observer.Observe(event(true, failed)); err != nil {
				errs = append(errs, fmt.Errorf("%s: %w", o.Name, err))
			}
		}
		return errors.Join(errs...)
	}
	// fail ends a run whose step, observer or checkpoint failed: the
	// observers get a Final, Failed event (to close their files) and the
	// state is not checkpointed.
	fail := func(err error) (Result, error) {
		res.Reason = Failed
		res.Time, res.Wall = sys.Time(), time.Since(start)
		if res.Steps == 0 {
			res.MinDt, res.MaxDt = 0, 0
		}
		if opt.Progress != nil {
			opt.Progress.Stop()
		}
		return res, errors.Join(err, finish(true))
	}
	done := func() bool {
		return (opt.EndTime > 0 && sys.Time() >= opt.EndTime*(1-1e-12)) ||
			(opt.MaxSteps > 0 && sys.Steps() >= opt.MaxSteps)
	}
	for _, o := range opt.Observers {
		if o.AtStart && !opt.Resumed {
			if err := o.Observer.Observe(event(false, false)); err != nil {
				return fail(fmt.Errorf("%s: %w", o.Name, err))
			}
		}
	}
	if opt.CheckpointAtStart && !opt.Resumed {
		if err := checkpoint(); err != nil {
			return fail(err)
		}
	}
	if opt.Progress != nil {
		opt.Progress.Start(sys.Time(), opt.EndTime, sys.Steps(), opt.MaxSteps)
	}
	for !done() {
		if ctx.Err() != nil {
			res.Reason = Interrupted
			break
		}
		t0, dt0, s0 := sys.Time(), sys.Dt(), sys.Steps()
		if err := sys.Step(); err != nil {
			return fail(&StepError{Step: sys.Steps() + 1, Time: t0, Dt: dt0, Err: err})
		}
		res.Steps++
		dt := sys.Dt()
		res.MinDt, res.MaxDt = math.Min(res.MinDt, dt), math.Max(res.MaxDt, dt)
		now := time.Now()
		s1, t1 := sys.Steps(), sys.Time()
		for i, o := range opt.Observers {
			if o.Schedule.due(s0, s1, t0, t1, &walls[i], now) {
				if err := o.Observer.Observe(event(false, false)); err != nil {
					return fail(fmt.Errorf("%s at step %d: %w", o.Name, sys.Steps(), err))
				}
			}
		}
		if opt.Checkpoint != nil && opt.CheckpointSchedule.due(s0, s1, t0, t1, &ckWall, now) {
			if err := checkpoint(); err != nil {
				return fail(err)
			}
		}
		if opt.Progress != nil {
			opt.Progress.Update(sys.Time(), sys.Steps(), dt)
		}
	}
	if res.Reason == "" {
		res.Reason = Finished
	}
	if opt.Progress != nil {
		opt.Progress.Stop()
	}
	res.Time = sys.Time()
	err := errors.Join(finish(false), checkpoint())
	res.Wall = time.Since(start)
	if res.Steps == 0 {
		res.MinDt, res.MaxDt = 0, 0
	}
	if err != nil {
		return res, err
	}
	if res.Reason == Interrupted {
		return res, ErrInterrupted
	}
	return res, nil
}
