package scan

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// The Slurm integration test starts a real one-node Slurm cluster on
// 127.0.0.1 with scripts/slurm/cluster.sh (installing slurm-wlm and munge
// through scripts/setup.sh --slurm when they are missing), submits a scan
// to it and gathers the results. It needs root and, when Slurm is missing,
// apt-get; elsewhere it skips. The daemons are stopped by PID when the test
// ends, pass or fail, and by the script's watchdog if the test process dies
// before its cleanups run.
//
// By default the runs are the fake memix of the other tests. To run a real
// memix instead, set MEMIX_SLURM_RUNNER to its path and MEMIX_SLURM_SWEEP
// to a sweep file of four short runs; the test then only submits, waits
// and checks that all four finish.

// slurmTestBudget bounds the whole test, install included (measured: about
// 25 s with the packages installed, 10 s more to install them).
const slurmTestBudget = 100 * time.Second

func TestSlurmCluster(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a Slurm cluster: skipped in -short mode")
	}
	if runtime.GOOS != "linux" {
		t.Skip("the test cluster script is for Linux")
	}
	if os.Geteuid() != 0 {
		t.Skip("starting munged and slurmd needs root; run the test as root to include it")
	}
	if _, err := exec.LookPath("slurmctld"); err != nil {
		if _, err := exec.LookPath("apt-get"); err != nil {
			t.Skip("Slurm is not installed and there is no apt-get to install slurm-wlm and munge")
		}
	}
	t0 := time.Now()
	ctx, cancel := context.WithTimeout(context.Background(), slurmTestBudget)
	defer cancel()

	dir := startCluster(t, ctx)
	t.Logf("cluster up after %.1f s", time.Since(t0).Seconds())

	runner := fakeRunner(t)
	var sc *Scan
	realRunner := os.Getenv("MEMIX_SLURM_RUNNER") != ""
	if realRunner {
		runner = Runner{Command: []string{os.Getenv("MEMIX_SLURM_RUNNER")}}
		s, err := LoadSweep(os.Getenv("MEMIX_SLURM_SWEEP"), nil)
		if err != nil {
			t.Fatalf("MEMIX_SLURM_SWEEP: %v", err)
		}
		if sc, err = Expand(s, filepath.Join(dir, "scan"), ExpandOptions{}); err != nil {
			t.Fatal(err)
		}
	} else {
		// Four points: two short runs, one that fails on its first attempt
		// only, and one long enough to be warned of its time limit.
		sweep := fmt.Sprintf(`
base: {fake: {steps: 3, step_ms: 10}}
zip:
  - fake.rate: [1, 2, 3, 4]
    fake.fail_once: ["", "", %q, ""]
    fake.steps: [3, 3, 3, 250]
`, filepath.Join(dir, "fail-once-marker"))
		s, err := ParseSweep([]byte(sweep), dir, nil)
		if err != nil {
			t.Fatal(err)
		}
		if sc, err = Expand(s, filepath.Join(dir, "scan"), ExpandOptions{}); err != nil {
			t.Fatal(err)
		}
	}
	if len(sc.Points) != 4 {
		t.Fatalf("the sweep has %d points, want 4", len(sc.Points))
	}
	t.Cleanup(func() {
		if t.Failed() {
			for _, p := range sc.Points {
				for _, f := range []string{failureFile, stderrLog} {
					if b, err := os.ReadFile(filepath.Join(sc.PointDir(p.ID), f)); err == nil {
						t.Logf("point %d %s:\n%s", p.Index, f, b)
					}
				}
			}
			logs, _ := filepath.Glob(filepath.Join(sc.Dir, slurmDir, "logs", "*"))
			for _, l := range logs {
				b, _ := os.ReadFile(l)
				t.Logf("%s:\n%s", filepath.Base(l), b)
			}
		}
	})
	opt := SlurmOptions{Runner: runner, CPUsPerTask: 1, Time: "00:10:00", JobName: "memix-test"}

	// Phase 1: all four points.
	rec, err := Submit(ctx, sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("submitted job %s after %.1f s", rec.JobID, time.Since(t0).Seconds())
	warned := false
	long := sc.Points[3]
	waitJob(t, ctx, rec.JobID, func(tasks map[int]string) {
		if realRunner {
			return
		}
		// Once the long point has taken a few steps, give it the
		// time-limit warning; its task stops it for a checkpoint and
		// requeues itself. Slurm holds a requeued job back for about two
		// minutes; release it now.
		if !warned && tasks[3] == "R" {
			if b, err := os.ReadFile(filepath.Join(sc.OutDir(long.ID), seriesFile)); err == nil && bytes.Count(b, []byte("\n")) > 5 {
				slurmCmd(t, ctx, "scancel", "--batch", "--signal=USR1", rec.JobID+"_3")
				warned = true
			}
		}
		if warned && strings.HasPrefix(tasks[3], "PD") {
			_ = exec.CommandContext(ctx, "scontrol", "update", "JobId="+rec.JobID+"_3", "StartTime=now").Run()
		}
	})
	t.Logf("job %s left the queue after %.1f s", rec.JobID, time.Since(t0).Seconds())

	st, err := Status(ctx, sc.Dir, StatusOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !realRunner {
		want := []State{Finished, Finished, Failed, Finished}
		for i, ps := range st.Points {
			if ps.State != want[i] {
				t.Errorf("after the first job, point %d is %s (%s), want %s", i, ps.State, ps.Detail, want[i])
			}
		}
		inv := invocations(t, sc, long.ID)
		if !warned || len(inv) != 2 || !strings.HasPrefix(inv[1], "run --resume") {
			t.Errorf("the long point was not interrupted and resumed: warned %v, invocations %q", warned, inv)
		}
		if m := summaryOf(t, sc, long.ID); m["steps"] != 250.0 || m["resumed_from"].(float64) < 5 {
			t.Errorf("long point summary %v", m)
		}
		for _, task := range []int{0, 1, 2, 3} {
			if _, err := os.Stat(filepath.Join(sc.Dir, slurmDir, "logs", fmt.Sprintf("%s_%d.err", rec.JobID, task))); err != nil {
				t.Errorf("Slurm log of task %d: %v", task, err)
			}
		}

		// Phase 2: resubmission runs only the failed point.
		rec2, err := Submit(ctx, sc.Dir, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(rec2.Tasks) != 1 || rec2.Tasks[0].Task != 2 || !strings.Contains(readFile(t, filepath.Join(sc.Dir, rec2.Script)), "#SBATCH --array=2\n") {
			t.Errorf("resubmission %+v, want only task 2", rec2)
		}
		waitJob(t, ctx, rec2.JobID, nil)
		t.Logf("job %s left the queue after %.1f s", rec2.JobID, time.Since(t0).Seconds())
		if _, err := Submit(ctx, sc.Dir, opt); !errors.Is(err, ErrNothingToSubmit) {
			t.Errorf("third submission: %v, want ErrNothingToSubmit", err)
		}
	}

	tab, _, err := Gather(ctx, sc.Dir, GatherOptions{NoFigures: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range tab.Rows {
		if r.State != Finished || r.Results["wall_time_s"] <= 0 {
			t.Errorf("gathered point %d: %s, wall time %v, error %q", r.Index, r.State, r.Results["wall_time_s"], r.Error)
		}
	}
	t.Logf("done after %.1f s", time.Since(t0).Seconds())
}

// startCluster starts the test cluster in a new folder under /tmp (the
// munge and slurm users must reach it) and registers its stop.
func startCluster(t *testing.T, ctx context.Context) string {
	t.Helper()
	script, err := filepath.Abs(filepath.Join("..", "scripts", "slurm", "cluster.sh"))
	if err != nil {
		t.Fatal(err)
	}
	dir, err := os.MkdirTemp("/tmp", "memix-slurm-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	// Stop the daemons by PID whatever happens next (this cleanup runs
	// before the folder's removal), then check that none is left.
	t.Cleanup(func() {
		pids := readPIDs(dir)
		out, err := exec.Command(script, "stop", dir).CombinedOutput()
		if err != nil {
			t.Errorf("stopping the cluster: %v\n%s", err, out)
		}
		for name, pid := range pids {
			if processAlive(pid) {
				t.Errorf("%s (pid %d) still runs after the stop", name, pid)
			}
		}
		if t.Failed() {
			for _, f := range []string{"log/slurmctld.log", "log/slurmd.log", "log/munged.out"} {
				if b, err := os.ReadFile(filepath.Join(dir, f)); err == nil {
					t.Logf("%s (last lines):\n%s", f, tailLines(string(b), 30))
				}
			}
		}
	})
	cmd := exec.CommandContext(ctx, script, "start", dir)
	ctld, slurmd := freePort(t), freePort(t)
	// The script's watchdog stops the daemons should this process die
	// before its cleanups run (go test's -timeout, SIGKILL).
	cmd.Env = append(os.Environ(), "SLURMCTLD_PORT="+strconv.Itoa(ctld), "SLURMD_PORT="+strconv.Itoa(slurmd),
		"CLUSTER_OWNER_PID="+strconv.Itoa(os.Getpid()))
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("starting the cluster: %v\n%s", err, out)
	}
	t.Setenv("SLURM_CONF", filepath.Join(dir, "slurm.conf"))
	return dir
}

func freePort(t *testing.T) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

func readPIDs(dir string) map[string]int {
	pids := map[string]int{}
	b, err := os.ReadFile(filepath.Join(dir, "pids"))
	if err != nil {
		return pids
	}
	for _, line := range strings.Split(string(b), "\n") {
		f := strings.Fields(line)
		if len(f) == 2 {
			if pid, err := strconv.Atoi(f[1]); err == nil {
				pids[f[0]] = pid
			}
		}
	}
	return pids
}

// processAlive reports whether pid exists and is not a zombie.
func processAlive(pid int) bool {
	if syscall.Kill(pid, 0) != nil {
		return false
	}
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return false
	}
	s := string(b)
	i := strings.LastIndexByte(s, ')')
	return !(i > 0 && len(s) > i+2 && s[i+2] == 'Z')
}

func slurmCmd(t *testing.T, ctx context.Context, name string, args ...string) string {
	t.Helper()
	out, err := exec.CommandContext(ctx, name, args...).CombinedOutput()
	if err != nil {
		t.Fatalf("%s %s: %v\n%s", name, strings.Join(args, " "), err, out)
	}
	return string(out)
}

// waitJob polls squeue every 0.3 s until the job has left the queue,
// calling tick with its tasks' states (task → "R", "PD(reason)", ...).
func waitJob(t *testing.T, ctx context.Context, job string, tick func(map[int]string)) {
	t.Helper()
	for {
		out, err := exec.CommandContext(ctx, "squeue", "-h", "-r", "-j", job, "-o", "%K|%t|%r").CombinedOutput()
		if err != nil && !strings.Contains(string(out), "Invalid job id") {
			t.Fatalf("squeue: %v\n%s", err, out)
		}
		tasks := map[int]string{}
		for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
			f := strings.Split(line, "|")
			if len(f) != 3 {
				continue
			}
			n, err := strconv.Atoi(f[0])
			if err != nil {
				continue
			}
			tasks[n] = f[1]
			if f[1] == "PD" {
				tasks[n] = "PD(" + f[2] + ")"
			}
		}
		if len(tasks) == 0 {
			return
		}
		if tick != nil {
			tick(tasks)
		}
		select {
		case <-ctx.Done():
			t.Fatalf("job %s still queued when the test's budget of %s ran out: %v", job, slurmTestBudget, tasks)
		case <-time.After(300 * time.Millisecond):
		}
	}
}
