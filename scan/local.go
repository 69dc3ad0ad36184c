package scan

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"time"
)

// A Runner says how to start memix. The scan appends the arguments of one
// run to Command: "run CONFIG -o OUTDIR --quiet [--threads N]" for a fresh
// run and "run --resume OUTDIR --quiet [--threads N]" to continue one.
type Runner struct {
	// Command is the program and any leading arguments; empty means
	// {"memix"} looked up on PATH.
	Command []string
	// Env holds extra KEY=VALUE entries added to the environment of runs.
	Env []string
}

func (r Runner) command() []string {
	if len(r.Command) == 0 {
		return []string{"memix"}
	}
	return r.Command
}

// runArgs returns the memix arguments for the action on a point.
func runArgs(act action, config, out string, threads int) []string {
	var a []string
	if act == actResume {
		a = []string{"run", "--resume", out, "--quiet"}
	} else {
		a = []string{"run", config, "-o", out, "--quiet"}
	}
	if threads > 0 {
		a = append(a, "--threads", strconv.Itoa(threads))
	}
	return a
}

// LocalOptions configure [RunLocal].
type LocalOptions struct {
	// Workers is the number of runs at once (0 means 1).
	Workers int
	// Threads is passed to each run as --threads; 0 leaves it to memix.
	Threads int
	// Runner starts memix.
	Runner Runner
	// Progress receives one line whenever a point changes state; nil
	// discards them.
	Progress io.Writer
	// StopGrace bounds the wait for a run after it was sent SIGTERM on
	// cancellation; it is then killed. 0 waits as long as the run needs
	// to write its checkpoint.
	StopGrace time.Duration
}

// A Result is the outcome of one point in one [RunLocal] call.
type Result struct {
	Index int
	ID    string
	// State is Finished, Interrupted, Failed, or Running when another
	// process held the point's lock (it was left alone).
	State State
	// Resumed is true when the run continued from a checkpoint.
	Resumed bool
	// Error is the recorded failure (exit status, summary error, stderr tail).
	Error string
	// Wall is the run's duration (0 for skipped points).
	Wall time.Duration

	already bool // finished by another runner after the listing
}

// A LocalReport counts what one [RunLocal] call did.
type LocalReport struct {
	// AlreadyFinished points were skipped: their summary said finished.
	AlreadyFinished int
	// Finished, Interrupted and Failed count the runs of this call.
	Finished, Interrupted, Failed int
	// Busy points were held by another runner (their lock was taken).
	Busy int
	// NotStarted points were still pending when the context was cancelled.
	NotStarted int
	// Results has one entry per point that was run or found busy, in the
	// order the runs ended.
	Results []Result
}

// RunLocal runs every unfinished point of the scan in scanDir with a pool of
// opt.Workers concurrent memix processes, and returns when all have ended.
//
// Finished points are skipped; a point with a checkpoint of an interrupted
// run is resumed (--resume); a point whose last run failed is run again from
// scratch, its old output kept as out.attempt-N. A failure is recorded in
// the point's failure.txt (exit status, summary error, the last lines of
// stderr) and failures.log, and the pool goes on. Each point is locked
// while it runs, so two runners of the same scan (or a Slurm task) never
// run one point twice at once; a locked point is counted as busy.
//
// Cancelling ctx (the command cancels it on SIGINT) starts no new run and
// sends SIGTERM to every running memix, which writes a checkpoint and exits
// with status 3; RunLocal waits for them and returns ctx.Err(). The next
// call resumes those points. Other errors are returned only when the scan
// cannot run at all (no scan there, runner not found).
func RunLocal(ctx context.Context, scanDir string, opt LocalOptions) (LocalReport, error) {
	var rep LocalReport
	sc, err := Open(scanDir)
	if err != nil {
		return rep, err
	}
	cmd := opt.Runner.command()
	if _, err := exec.LookPath(cmd[0]); err != nil {
		return rep, fmt.Errorf("scan: runner %q: %w", cmd[0], err)
	}
	workers := opt.Workers
	if workers < 1 {
		workers = 1
	}
	pr := newProgress(opt.Progress, len(sc.Points), workers)
	var todo []Point
	for _, p := range sc.Points {
		d := inspect(sc.PointDir(p.ID))
		if d.next() == actSkip {
			rep.AlreadyFinished++
			pr.add(Finished, 0)
			continue
		}
		todo = append(todo, p)
		pr.add(Pending, 0)
	}
	pr.print()

	jobs := make(chan Point)
	results := make(chan Result)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for p := range jobs {
				results <- runPoint(ctx, sc, p, opt, pr)
			}
		}()
	}
	go func() {
		defer close(jobs)
		for _, p := range todo {
			if ctx.Err() != nil {
				return
			}
			select {
			case jobs <- p:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()

	started := 0
	for r := range results {
		if r.State == Pending {
			continue // cancelled before it started
		}
		started++
		if r.already {
			rep.AlreadyFinished++
			continue
		}
		rep.Results = append(rep.Results, r)
		switch r.State {
		case Finished:
			rep.Finished++
		case Interrupted:
			rep.Interrupted++
		case Failed:
			rep.Failed++
		case Running:
			rep.Busy++
		}
	}
	rep.NotStarted = len(todo) - started
	pr.print()
	if err := ctx.Err(); err != nil {
		return rep, err
	}
	return rep, nil
}

// runPoint runs one point to its end.
func runPoint(ctx context.Context, sc *Scan, p Point, opt LocalOptions, pr *progress) Result {
	res := Result{Index: p.Index, ID: p.ID}
	pd := sc.PointDir(p.ID)
	fail := func(msg string) Result {
		res.State, res.Error = Failed, msg
		recordFailure(pd, msg)
		pr.move(Pending, Failed, 0)
		return res
	}
	lock, ok, err := tryLock(filepath.Join(pd, lockFile))
	if err != nil {
		return fail("cannot lock the point: " + err.Error())
	}
	if !ok {
		res.State = Running
		pr.move(Pending, Running, 0)
		pr.move(Running, busy, 0)
		return res
	}
	defer lock.Close()
	if ctx.Err() != nil {
		// Cancelled between dispatch and start: leave it pending.
		res.State = Pending
		return res
	}
	d := inspect(pd)
	if d.running != nil && d.running.alive() {
		// A memix left running by a runner that died (it released the
		// lock but not the point).
		res.State = Running
		pr.move(Pending, Running, 0)
		pr.move(Running, busy, 0)
		return res
	}
	act := d.next()
	if act == actSkip { // finished by another runner since the listing
		res.State, res.already = Finished, true
		pr.move(Pending, Finished, 0)
		return res
	}
	if act == actFresh && d.outExists {
		if _, err := moveAside(pd); err != nil {
			return fail("cannot move the old output aside: " + err.Error())
		}
	}
	res.Resumed = act == actResume
	_ = os.Remove(filepath.Join(pd, failureFile)) // its text is in failures.log
	defer os.Remove(filepath.Join(pd, runningFile))

	stdout, err := os.OpenFile(filepath.Join(pd, stdoutLog), os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o644)
	if err != nil {
		return fail(err.Error())
	}
	defer stdout.Close()
	stderrPath := filepath.Join(pd, stderrLog)
	stderr, err := os.OpenFile(stderrPath, os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o644)
	if err != nil {
		return fail(err.Error())
	}
	defer stderr.Close()
	start, _ := stderr.Seek(0, io.SeekEnd)
	args := append(append([]string(nil), opt.Runner.command()...),
		runArgs(act, filepath.Join(pd, pointConfig), filepath.Join(pd, pointOut), opt.Threads)...)
	fmt.Fprintf(stdout, "# memix scan: %s %s\n", time.Now().UTC().Format(time.RFC3339), strings.Join(args, " "))

	cmd := exec.CommandContext(ctx, args[0], args[1:]...)
	cmd.Env = append(os.Environ(), opt.Runner.Env...)
	cmd.Stdout, cmd.Stderr = stdout, stderr
	// Its own process group: a terminal's Ctrl-C reaches memix only
	// through us, as one SIGTERM.
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	cmd.Cancel = func() error { return cmd.Process.Signal(syscall.SIGTERM) }
	cmd.WaitDelay = opt.StopGrace
	pr.move(Pending, Running, 0)
	t0 := time.Now()
	runErr := cmd.Start()
	if runErr == nil {
		// The marker names memix itself, so Status can tell whether the
		// run is alive even if this process dies.
		host, _ := os.Hostname()
		_ = writeFileAtomic(filepath.Join(pd, runningFile),
			[]byte(fmt.Sprintf("kind=local\nhost=%s\npid=%d\nsince=%s\n", host, cmd.Process.Pid, t0.UTC().Format(time.RFC3339))))
		runErr = cmd.Wait()
	}
	res.Wall = time.Since(t0)
	stderr.Close()

	status, summaryErr, _, sumErr := summaryStatus(filepath.Join(pd, pointOut))
	code := -1
	var ee *exec.ExitError
	switch {
	case runErr == nil:
		code = 0
	case errors.As(runErr, &ee):
		code = ee.ExitCode()
	}
	switch {
	case code == 0 && status == "finished":
		res.State = Finished
		pr.move(Running, Finished, res.Wall)
		return res
	case code == 3:
		res.State = Interrupted
		pr.move(Running, Interrupted, 0)
		return res
	}
	var msg strings.Builder
	switch {
	case code == 0 && sumErr != nil:
		fmt.Fprintf(&msg, "memix exited 0 but its summary cannot be read: %v", sumErr)
	case code == 0:
		fmt.Fprintf(&msg, "memix exited 0 but %s has status %q, not \"finished\"", filepath.Join(pointOut, summaryFile), status)
	case ee != nil:
		fmt.Fprintf(&msg, "memix: %v", ee)
	default:
		fmt.Fprintf(&msg, "memix could not run: %v", runErr)
	}
	if summaryErr != "" {
		fmt.Fprintf(&msg, "\nsummary error: %s", summaryErr)
	}
	if tail := readTail(stderrPath, start, 20); tail != "" {
		fmt.Fprintf(&msg, "\nstderr (last lines):\n%s", tail)
	}
	res.State, res.Error = Failed, msg.String()
	recordFailure(pd, res.Error)
	pr.move(Running, Failed, 0)
	return res
}

// readTail returns the last n lines written to path after offset.
func readTail(path string, offset int64, n int) string {
	f, err := os.Open(path)
	if err != nil {
		return ""
	}
	defer f.Close()
	if _, err := f.Seek(offset, io.SeekStart); err != nil {
		return ""
	}
	b, err := io.ReadAll(io.LimitReader(f, 1<<20))
	if err != nil {
		return ""
	}
	return tailLines(string(b), n)
}

// recordFailure writes failure.txt and appends it to failures.log.
func recordFailure(pointDir, msg string) {
	_ = writeFileAtomic(filepath.Join(pointDir, failureFile), []byte(msg+"\n"))
	if f, err := os.OpenFile(filepath.Join(pointDir, failuresLog), os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o644); err == nil {
		fmt.Fprintf(f, "--- %s (local run)\n%s\n", time.Now().UTC().Format(time.RFC3339), msg)
		f.Close()
	}
}

// busy is a progress-only state: held by another runner.
const busy State = "busy"

// progress keeps the counts of a local run and prints a line per change.
type progress struct {
	mu      sync.Mutex
	w       io.Writer
	total   int
	workers int
	counts  map[State]int
	t0      time.Time
	walls   time.Duration
	nWalls  int
}

func newProgress(w io.Writer, total, workers int) *progress {
	return &progress{w: w, total: total, workers: workers, counts: map[State]int{}, t0: time.Now()}
}

func (p *progress) add(s State, _ time.Duration) {
	p.mu.Lock()
	p.counts[s]++
	p.mu.Unlock()
}

func (p *progress) move(from, to State, wall time.Duration) {
	p.mu.Lock()
	p.counts[from]--
	p.counts[to]++
	if to == Finished && wall > 0 {
		p.walls += wall
		p.nWalls++
	}
	p.printLocked()
	p.mu.Unlock()
}

func (p *progress) print() {
	p.mu.Lock()
	p.printLocked()
	p.mu.Unlock()
}

// printLocked writes the line under the lock, so lines never interleave
// and the writer need not be safe for concurrent use.
func (p *progress) printLocked() {
	if p.w != nil {
		fmt.Fprintln(p.w, p.lineLocked())
	}
}

// lineLocked formats "scan: 3/8 finished, 1 failed, 2 running, 2 pending;
// elapsed 12s, ETA 20s". The ETA assumes the remaining runs take as long
// as this call's finished runs did on average, spread over the workers.
func (p *progress) lineLocked() string {
	c := p.counts
	var b strings.Builder
	fmt.Fprintf(&b, "scan: %d/%d finished", c[Finished], p.total)
	for _, s := range []State{Failed, Interrupted, Running, busy, Pending} {
		if c[s] > 0 {
			fmt.Fprintf(&b, ", %d %s", c[s], s)
		}
	}
	el := time.Since(p.t0).Round(time.Second)
	fmt.Fprintf(&b, "; elapsed %s", el)
	left := c[Pending] + c[Running]
	switch {
	case left == 0:
	case p.nWalls == 0:
		b.WriteString(", ETA unknown")
	default:
		mean := p.walls / time.Duration(p.nWalls)
		w := min(p.workers, left)
		eta := time.Duration(float64(mean) * float64(left) / float64(w))
		fmt.Fprintf(&b, ", ETA %s", eta.Round(time.Second))
	}
	return b.String()
}
