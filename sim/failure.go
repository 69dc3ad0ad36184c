package sim

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/fields"
)

// BlowUpError reports a step after which an evolved field was no longer
// finite (an overflow: the step was too large for the dynamics, or the
// dynamics diverge). The step is undone: the state stays that of the
// step before. Dt is the size of the failed step and (I, J) the grid point
// where the field had its largest magnitude Max before the step, where
// the blow-up grew (reduced units).
type BlowUpError struct {
	Field string
	Dt    float64
	I, J  int
	Max   float64
}

func (e *BlowUpError) Error() string {
	return fmt.Sprintf("field %s became non-finite during a step of dt = %g τ₀ (before it, |%s| peaked at %.3g at grid point (%d, %d))",
		e.Field, e.Dt, e.Field, e.Max, e.I, e.J)
}

// blowUp returns the BlowUpError of field f for a failed step of dt,
// locating the largest magnitude of the field in the state before the
// step (j.prev).
func (j *job) blowUp(f int, dt float64) *BlowUpError {
	j.plan.Inverse(j.scr, j.prev[f])
	i, v := argMaxAbs(j.scr)
	nx := j.red.Grid.Nx
	return &BlowUpError{Field: j.model.FieldNames()[f], Dt: dt, I: i % nx, J: i / nx, Max: v}
}

// argMaxAbs returns the index and value of the entry of largest magnitude.
func argMaxAbs(x []float64) (int, float64) {
	best := 0
	for i, v := range x {
		if math.Abs(v) > math.Abs(x[best]) {
			best = i
		}
	}
	return best, x[best]
}

// FailureError explains a run that stopped on a fault, for people and in
// SI units: what went wrong and where, what was kept, and the command that
// continues the run. Err is the cause: a *StepError (wrapping a
// *BlowUpError, a *fields.NonFiniteError or a *fields.StepError) for a
// failed step, or the write error of an output (which names its path).
type FailureError struct {
	Step  int     // the step that failed (counted from the start of the run; for a write error, the step reached)
	TimeS float64 // time at its start, s
	What  string  // what went wrong, with the field and the location where there is one
	Field string  // the field that became non-finite, "" otherwise
	X, Y  float64 // the location in m, NaN if none
	// CheckpointStep is the step of the checkpoint on disk, −1 if none.
	CheckpointStep int
	Kept           string // what the output directory holds to continue from
	Resume         string // the command that continues the run
	// Restart is the command that starts the run over with the smaller
	// step, for when the checkpoint itself has begun to diverge ("" when
	// it would repeat Resume).
	Restart string
	Err     error
}

func (e *FailureError) Error() string {
	s := fmt.Sprintf("step %d at t = %s: %s\n  kept: %s\n  continue with: %s",
		e.Step, timeText(e.TimeS), e.What, e.Kept, e.Resume)
	if e.Restart != "" {
		s += "\n  if that fails again (the checkpointed state may already diverge), start over: " + e.Restart
	}
	return s
}

func (e *FailureError) Unwrap() error { return e.Err }

// explain turns the error of a failed run into a FailureError.
func (j *job) explain(err error) *FailureError {
	tau := float64(j.red.Units.Time)
	fe := &FailureError{Step: j.model.Steps(), TimeS: j.model.Time() * tau, X: math.NaN(), Y: math.NaN(),
		CheckpointStep: j.ckStep, Err: err}
	ckPath := filepath.Join(j.dir, CheckpointFile)
	if j.ckStep >= 0 {
		fe.Kept = fmt.Sprintf("%s holds the last good state, step %d (t = %s); series.csv and the snapshots up to it are intact",
			ckPath, j.ckStep, timeText(j.ckTime*tau))
	} else {
		fe.Kept = "no checkpoint was written before the failure"
	}
	// resume is the command that continues with the given --set options.
	restart := func(set ...string) string {
		if j.ckStep <= 0 {
			return ""
		}
		cfg := j.cfg.File()
		if cfg == "" || strings.HasSuffix(cfg, ResolvedFile) {
			cfg = filepath.Join(j.dir, ResolvedFile) + " -o NEWDIR"
		} else {
			cfg += " -o " + j.dir + " --force"
		}
		return "memix run " + cfg + " --set " + strings.Join(set, " --set ")
	}
	resume := func(set ...string) string {
		var b strings.Builder
		if j.ckStep >= 0 {
			fmt.Fprintf(&b, "memix run --resume %s", j.dir)
		} else {
			cfg := j.cfg.File()
			if cfg == "" {
				cfg = "CONFIG"
			}
			fmt.Fprintf(&b, "memix run %s -o %s --force", cfg, j.dir)
		}
		for _, s := range set {
			fmt.Fprintf(&b, " --set %s", s)
		}
		return b.String()
	}
	lx, ly := j.cfg.Grid.Lengths()
	g := j.red.Grid
	at := func(i, k int) string {
		fe.X, fe.Y = float64(i)*float64(lx)/float64(g.Nx), float64(k)*float64(ly)/float64(g.Ny)
		return fmt.Sprintf("x = %s, y = %s (grid point (%d, %d))", lengthText(fe.X), lengthText(fe.Y), i, k)
	}

	var se *StepError
	if !errors.As(err, &se) {
		// An output could not be written (a full disk, a quota, a removed
		// directory): the error names the file.
		fe.What = fmt.Sprintf("writing the outputs failed: %v. Free space (or fix the cause) before continuing", err)
		fe.Resume = resume()
		return fe
	}
	fe.Step, fe.TimeS = se.Step, se.Time*tau
	var (
		bu  *BlowUpError
		nf  *fields.NonFiniteError
		col *fields.StepError
	)
	switch {
	case errors.As(se.Err, &bu):
		fe.Field = bu.Field
		dt := bu.Dt * tau
		fe.What = fmt.Sprintf("field %s became non-finite (NaN or infinite) during the step of dt = %s; before it, %s was largest in magnitude (%.3g) at %s. The step is too large for the dynamics, or the dynamics diverge",
			bu.Field, config.Time(dt), bu.Field, bu.Max, at(bu.I, bu.J))
		set := j.smallerSteps(dt)
		fe.Resume, fe.Restart = resume(set...), restart(set...)
	case errors.As(se.Err, &nf):
		fe.Field = nf.Field
		dt := se.Dt * tau
		fe.What = fmt.Sprintf("field %s is not finite (%v) at %s", nf.Field, nf.Value, at(nf.I, nf.J))
		set := j.smallerSteps(dt)
		fe.Resume, fe.Restart = resume(set...), restart(set...)
	case errors.As(se.Err, &col):
		allowed, floor := col.Dt*tau, col.DtMin*tau
		where := ""
		switch col.Limit {
		case fields.LimitAdvection:
			if i, ok := j.argMaxView("speed"); ok {
				where = fmt.Sprintf("; the flow is fastest at %s", at(i%g.Nx, i/g.Nx))
			}
		case fields.LimitRotation:
			if i, ok := j.argMaxView("vorticity"); ok {
				where = fmt.Sprintf("; the vorticity is largest at %s", at(i%g.Nx, i/g.Nx))
			}
		}
		l0 := float64(j.red.Units.Length)
		floorText := "time.dt_min = " + config.Time(floor).String()
		if given := float64(j.cfg.DtMin()); math.Abs(given-floor) > 1e-9*floor {
			floorText = fmt.Sprintf("the smallest step of the ladder, %s (time.dt_min = %s)", config.Time(floor), config.Time(given))
		}
		fe.What = fmt.Sprintf("the time step collapsed: the %v limit allows dt = %s, below %s (max speed %s, max rotation rate %s)%s. The flow outgrows the grid, or the run diverges",
			col.Limit, config.Time(allowed), floorText, config.Velocity(col.Speed*l0/tau), config.Rate(col.RotMax/tau), where)
		fe.Resume = resume(smallerStep("time.dt_min", allowed/4))
	default:
		fe.What = se.Error()
		set := j.smallerSteps(se.Dt * tau)
		fe.Resume, fe.Restart = resume(set...), restart(set...)
	}
	return fe
}

// smallerSteps returns the --set options for steps a quarter of dt (s):
// time.dt_max, and with adaptive steps a quarter of time.courant too (the
// limits then choose the step).
func (j *job) smallerSteps(dt float64) []string {
	set := []string{smallerStep("time.dt_max", dt/4)}
	if !j.cfg.Time.Fixed {
		set = append(set, fmt.Sprintf("time.courant=%.2g", j.cfg.Time.Courant/4))
	}
	return set
}

// argMaxView returns the grid index where the flow speed |u| (name
// "speed") or the magnitude of a view is largest in the current state.
func (j *job) argMaxView(name string) (int, bool) {
	j.model.UpdateViews()
	var ux, uy, w []float64
	for _, v := range j.model.Views() {
		switch v.Name {
		case "ux":
			ux = v.Data
		case "uy":
			uy = v.Data
		case "vorticity":
			w = v.Data
		}
	}
	switch {
	case name == "speed" && ux != nil && uy != nil:
		for i := range j.scr {
			j.scr[i] = math.Hypot(ux[i], uy[i])
		}
	case name == "vorticity" && w != nil:
		copy(j.scr, w)
	default:
		return 0, false
	}
	i, _ := argMaxAbs(j.scr)
	return i, true
}

// smallerStep formats "--set" for a step key at a value rounded down to
// two significant digits, in a unit a shell takes as is ("1.2ms").
func smallerStep(key string, dt float64) string {
	if dt > 0 && !math.IsInf(dt, 0) {
		p := math.Pow(10, math.Floor(math.Log10(dt))-1)
		dt = math.Floor(dt/p) * p
	}
	v := strings.ReplaceAll(strings.ReplaceAll(config.Time(dt).String(), " ", ""), "µ", "u")
	return key + "=" + v
}

// timeText writes a time for people; 0 is "0 s".
func timeText(t float64) string {
	if t == 0 {
		return "0 s"
	}
	return config.Time(t).String()
}

// lengthText writes a length for people; 0 is "0 m".
func lengthText(x float64) string {
	if x == 0 {
		return "0 m"
	}
	return config.Length(x).String()
}
