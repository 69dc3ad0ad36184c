package scan

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

func TestSlurmDuration(t *testing.T) {
	// Forms from the sbatch manual's --time option.
	cases := map[string]time.Duration{
		"": 0, "UNLIMITED": 0, "90": 90 * time.Minute, "5:30": 5*time.Minute + 30*time.Second,
		"02:00:00": 2 * time.Hour, "1-12": 36 * time.Hour, "1-00:30": 24*time.Hour + 30*time.Minute,
		"2-01:02:03": 49*time.Hour + 2*time.Minute + 3*time.Second,
	}
	for in, want := range cases {
		if got, err := slurmDuration(in); err != nil || got != want {
			t.Errorf("slurmDuration(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	for _, bad := range []string{"1:2:3:4", "x", "-5", "1-2:3:4:5", "1h"} {
		if _, err := slurmDuration(bad); err == nil {
			t.Errorf("slurmDuration(%q) accepted", bad)
		}
	}
}

func TestArraySpec(t *testing.T) {
	cases := map[string][]int{
		"0":           {0},
		"0-3":         {3, 2, 1, 0},
		"0-3,7,9-10":  {0, 1, 2, 3, 7, 9, 10},
		"1,3,5":       {5, 3, 1},
		"2-4,100-101": {2, 3, 4, 100, 101},
	}
	for want, idx := range cases {
		if got := arraySpec(idx); got != want {
			t.Errorf("arraySpec(%v) = %q, want %q", idx, got, want)
		}
	}
}

// fakeTools writes executable shell scripts into a new folder and returns
// the folder (for PATH) and the log file they append to.
func fakeTools(t *testing.T, scripts map[string]string) (string, string) {
	t.Helper()
	dir := t.TempDir()
	logPath := filepath.Join(dir, "calls.log")
	for name, body := range scripts {
		text := "#!/bin/sh\necho \"" + name + " $*\" >>" + shellQuote(logPath) + "\n" + body + "\n"
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	return dir, logPath
}

// taskCmd runs the array script as Slurm would run task n of job 77.
func taskCmd(script string, n int, pathDir string) *exec.Cmd {
	cmd := exec.Command("bash", script)
	cmd.Env = append(os.Environ(),
		fmt.Sprintf("SLURM_ARRAY_TASK_ID=%d", n), "SLURM_ARRAY_JOB_ID=77", "SLURM_JOB_ID=78",
		"SLURM_CPUS_PER_TASK=2", "PATH="+pathDir+":"+os.Getenv("PATH"))
	return cmd
}

func runTask(t *testing.T, script string, n int, pathDir string) (int, string) {
	t.Helper()
	cmd := taskCmd(script, n, pathDir)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	err := cmd.Run()
	var ee *exec.ExitError
	switch {
	case err == nil:
		return 0, stderr.String()
	case errors.As(err, &ee):
		return ee.ExitCode(), stderr.String()
	}
	t.Fatal(err)
	return 0, ""
}

// waitSteps waits until a point's series.csv has more than n data lines.
func waitSteps(t *testing.T, sc *Scan, id string, n int) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for time.Now().Before(deadline) {
		if b, err := os.ReadFile(filepath.Join(sc.OutDir(id), seriesFile)); err == nil && bytes.Count(b, []byte("\n")) > n+1 {
			return
		}
		time.Sleep(5 * time.Millisecond)
	}
	t.Fatalf("point %s took no %d steps in 20 s", id, n)
}

// TestArrayScript runs the generated job-array script with bash, as Slurm
// would, without Slurm: finished points are no-ops, failures are recorded
// as RunLocal records them, and the time-limit warning (SIGUSR1) or SIGTERM
// stop memix for a checkpoint that the next task resumes. After each step
// the Go decision (diskState.next) is checked against what the script did.
func TestArrayScript(t *testing.T) {
	sc := expandFake(t, `
base: {fake: {steps: 3, step_ms: 1}}
zip:
  - fake.rate: [1, 2, 3, 4]
    fake.fail: ["", "time step below the stability limit", "", ""]
    fake.steps: [3, 3, 60, 60]
    fake.step_ms: [1, 1, 10, 10]
`)
	bin, calls := fakeTools(t, map[string]string{"scontrol": "exit 0"})
	opt := SlurmOptions{Runner: fakeRunner(t), Squeue: "/nonexistent/squeue", Partition: "short", Time: "00:10:00",
		Mem: "1G", CPUsPerTask: 2, MaxRunning: 2, Extra: []string{"--account=demo"}}
	script, idx, err := WriteSlurmScript(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	text := readFile(t, script)
	for _, want := range []string{
		"#SBATCH --array=0-3%2\n", "#SBATCH --partition=short\n", "#SBATCH --time=00:10:00\n",
		"#SBATCH --cpus-per-task=2\n", "#SBATCH --mem=1G\n", "#SBATCH --signal=B:USR1@60\n", // a tenth of 10 min
		"#SBATCH --requeue\n", "#SBATCH --account=demo\n",
		"#SBATCH --output=" + filepath.Join(sc.Dir, "slurm", "logs") + "/%A_%a.out\n",
		"#SBATCH --error=" + filepath.Join(sc.Dir, "slurm", "logs") + "/%A_%a.err\n",
		"export " + fakeEnv + "=1\n",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("script lacks %q", want)
		}
	}
	if len(idx) != 4 {
		t.Fatalf("indices %v", idx)
	}
	if out, err := exec.Command("bash", "-n", script).CombinedOutput(); err != nil {
		t.Fatalf("bash -n: %v\n%s", err, out)
	}
	p := sc.Points

	// Task 0 runs its point; running it again does nothing.
	if code, log := runTask(t, script, 0, bin); code != 0 {
		t.Fatalf("task 0: exit %d\n%s", code, log)
	}
	if m := summaryOf(t, sc, p[0].ID); m["status"] != "finished" || m["threads"] != 2.0 {
		t.Errorf("task 0 summary %v", m)
	}
	if code, log := runTask(t, script, 0, bin); code != 0 || !strings.Contains(log, "is finished; nothing to do") {
		t.Errorf("task 0 again: exit %d\n%s", code, log)
	}
	if n := len(invocations(t, sc, p[0].ID)); n != 1 {
		t.Errorf("finished point ran %d times", n)
	}
	if inspect(sc.PointDir(p[0].ID)).next() != actSkip {
		t.Error("Go would not skip the point the script finished")
	}

	// Task 1 fails; the record matches RunLocal's.
	if code, log := runTask(t, script, 1, bin); code != 1 {
		t.Fatalf("task 1: exit %d, want 1\n%s", code, log)
	}
	fail := readFile(t, filepath.Join(sc.PointDir(p[1].ID), failureFile))
	for _, want := range []string{"exit status 1", "summary error: time step below the stability limit", "stderr (last lines):", "fakememix: time step below"} {
		if !strings.Contains(fail, want) {
			t.Errorf("failure.txt lacks %q:\n%s", want, fail)
		}
	}
	if inspect(sc.PointDir(p[1].ID)).next() != actFresh {
		t.Error("Go would not restart the failed point from scratch")
	}
	// Rerunning the failed task moves the old output aside.
	if code, _ := runTask(t, script, 1, bin); code != 1 {
		t.Errorf("task 1 again: exit %d", code)
	}
	if _, err := os.Stat(filepath.Join(sc.PointDir(p[1].ID), "out.attempt-1", summaryFile)); err != nil {
		t.Errorf("old output not kept: %v", err)
	}

	// Task 2: the time-limit warning stops memix, which checkpoints; the
	// task requeues itself; the requeued task resumes.
	cmd := taskCmd(script, 2, bin)
	var log2 bytes.Buffer
	cmd.Stderr = &log2
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitSteps(t, sc, p[2].ID, 3)
	if err := cmd.Process.Signal(syscall.SIGUSR1); err != nil {
		t.Fatal(err)
	}
	if err := cmd.Wait(); err != nil {
		t.Fatalf("task 2 after the warning: %v\n%s", err, log2.String())
	}
	if m := summaryOf(t, sc, p[2].ID); m["status"] != "interrupted" {
		t.Errorf("task 2 summary after the warning: %v\n%s", m, log2.String())
	}
	if got := readFile(t, calls); !strings.Contains(got, "scontrol requeue 77_2") {
		t.Errorf("no self-requeue; calls:\n%s\nstderr:\n%s", got, log2.String())
	}
	if inspect(sc.PointDir(p[2].ID)).next() != actResume {
		t.Error("Go would not resume the interrupted point")
	}
	if _, err := os.Stat(filepath.Join(sc.PointDir(p[2].ID), runningFile)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("running marker left: %v", err)
	}

	// Task 3 without self-requeue, stopped by SIGTERM: exit 3, no requeue.
	opt.NoSelfRequeue = true
	opt.Squeue = ""
	script2, idx2, err := WriteSlurmScript(context.Background(), sc.Dir, SlurmOptions{Runner: fakeRunner(t), Squeue: "/nonexistent/squeue", NoSelfRequeue: true})
	if err != nil {
		t.Fatal(err)
	}
	if want := []int{1, 2, 3}; fmt.Sprint(idx2) != fmt.Sprint(want) {
		t.Errorf("second script covers %v, want the unfinished %v", idx2, want)
	}
	if !strings.Contains(readFile(t, script2), "#SBATCH --array=1-3\n") {
		t.Errorf("second script's array line:\n%s", readFile(t, script2)[:400])
	}
	cmd = taskCmd(script2, 3, bin)
	var log3 bytes.Buffer
	cmd.Stderr = &log3
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitSteps(t, sc, p[3].ID, 3)
	if err := cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	var ee *exec.ExitError
	if err := cmd.Wait(); !errors.As(err, &ee) || ee.ExitCode() != 3 {
		t.Errorf("task 3 after SIGTERM: %v, want exit status 3\n%s", err, log3.String())
	}
	if got := readFile(t, calls); strings.Contains(got, "77_3") {
		t.Errorf("task 3 requeued although self-requeue is off:\n%s", got)
	}

	// Resume both: they finish from their checkpoints.
	for _, n := range []int{2, 3} {
		code, log := runTask(t, script2, n, bin)
		if code != 0 || !strings.Contains(log, "resuming from its checkpoint") {
			t.Errorf("task %d resumed: exit %d\n%s", n, code, log)
		}
		m := summaryOf(t, sc, p[n].ID)
		inv := invocations(t, sc, p[n].ID)
		if m["status"] != "finished" || m["steps"] != 60.0 || m["resumed_from"].(float64) < 3 ||
			len(inv) != 2 || !strings.HasPrefix(inv[1], "run --resume") {
			t.Errorf("point %d after resume: %v, invocations %q", n, m, inv)
		}
	}
	if code, log := runTask(t, script2, 9, bin); code != 1 || !strings.Contains(log, "has no point") {
		t.Errorf("task 9: exit %d\n%s", code, log)
	}
}

// TestSubmitAndStatus submits through fake sbatch and squeue commands and
// checks the job record, resubmission and every state of Status.
func TestSubmitAndStatus(t *testing.T) {
	sc := expandFake(t, "base: {fake: {steps: 2}}\naxes: {fake.rate: [1, 2, 3, 4, 5, 6, 7, 8]}\n")
	queue := filepath.Join(t.TempDir(), "queue")
	if err := os.WriteFile(queue, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	bin, calls := fakeTools(t, map[string]string{
		"sbatch": "echo '4242;testcluster'",
		"squeue": "cat " + shellQuote(queue),
	})
	opt := SlurmOptions{Runner: fakeRunner(t), Sbatch: filepath.Join(bin, "sbatch"), Squeue: filepath.Join(bin, "squeue")}
	rec, err := Submit(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if rec.JobID != "4242" || len(rec.Tasks) != 8 || rec.Tasks[7].ID != sc.Points[7].ID {
		t.Fatalf("record %+v", rec)
	}
	if got := readFile(t, calls); !strings.Contains(got, "sbatch --parsable "+filepath.Join(sc.Dir, "slurm", "array.sh")) {
		t.Errorf("sbatch calls:\n%s", got)
	}
	if s := readFile(t, filepath.Join(sc.Dir, rec.Script)); !strings.Contains(s, "#SBATCH --array=0-7\n") {
		t.Errorf("recorded script:\n%s", s)
	}
	jobs, err := Jobs(sc.Dir)
	if err != nil || len(jobs) != 1 || jobs[0].JobID != "4242" {
		t.Fatalf("jobs %+v, %v", jobs, err)
	}

	// Lay out the states by hand.
	pd := func(i int) string { return sc.PointDir(sc.Points[i].ID) }
	write := func(path, text string) {
		t.Helper()
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	host, _ := os.Hostname()
	write(filepath.Join(pd(0), "out", summaryFile), `{"status": "finished", "steps": 2}`)
	write(filepath.Join(pd(1), failureFile), "memix: exit status 1\nstderr (last lines):\nbad")
	write(filepath.Join(pd(2), "out", checkpointH5), "step=1")
	write(filepath.Join(pd(2), "out", summaryFile), `{"status": "interrupted"}`)
	dead := exec.Command("true")
	if err := dead.Run(); err != nil {
		t.Fatal(err)
	}
	write(filepath.Join(pd(3), runningFile), fmt.Sprintf("kind=local\nhost=%s\npid=%d\n", host, dead.Process.Pid)) // killed
	write(filepath.Join(pd(4), runningFile), fmt.Sprintf("kind=local\nhost=%s\npid=%d\n", host, os.Getpid()))
	write(filepath.Join(pd(5), runningFile), "kind=slurm\nhost=node7\npid=1\njob=4242_5\n")
	// 6: queued in squeue
	write(filepath.Join(pd(7), runningFile), "kind=slurm\nhost=node7\npid=1\njob=4000_7\n") // stale
	write(queue, "4242|5|R\n4242|6|PD\n")

	st, err := Status(context.Background(), sc.Dir, StatusOptions{Squeue: opt.Squeue})
	if err != nil {
		t.Fatal(err)
	}
	want := []State{Finished, Failed, Interrupted, Failed, Running, Running, Queued, Failed}
	for i, ps := range st.Points {
		if ps.State != want[i] {
			t.Errorf("point %d: %s (%s), want %s", i, ps.State, ps.Detail, want[i])
		}
	}
	if st.Points[1].Detail != "memix: exit status 1" || st.Points[6].Detail != "Slurm task 4242_6 (PD)" ||
		!strings.HasPrefix(st.Points[3].Detail, fmt.Sprintf("the local run (process %d) ended without recording a result", dead.Process.Pid)) ||
		!strings.HasPrefix(st.Points[7].Detail, "Slurm task 4000_7 (see slurm/logs/4000_7.err) ended without recording a result") {
		t.Errorf("details %q", []string{st.Points[1].Detail, st.Points[3].Detail, st.Points[6].Detail, st.Points[7].Detail})
	}
	if got := st.String(); got != "8 points: 1 finished, 2 running, 1 queued, 3 failed, 1 interrupted" {
		t.Errorf("summary %q", got)
	}
	// Without squeue, Slurm markers are trusted and queued tasks unknown.
	st, err = Status(context.Background(), sc.Dir, StatusOptions{Squeue: "/nonexistent/squeue"})
	if err != nil {
		t.Fatal(err)
	}
	want = []State{Finished, Failed, Interrupted, Failed, Running, Running, Pending, Running}
	for i, ps := range st.Points {
		if ps.State != want[i] {
			t.Errorf("without squeue, point %d: %s, want %s", i, ps.State, want[i])
		}
	}
	if len(st.Notes) != 1 || !strings.Contains(st.Notes[0], "squeue not found") {
		t.Errorf("notes %q", st.Notes)
	}

	// Resubmission covers the points neither finished nor queued nor
	// running: 1, 2, 3 and 7.
	if err := os.WriteFile(filepath.Join(bin, "sbatch"), []byte("#!/bin/sh\necho 4243\n"), 0o755); err != nil {
		t.Fatal(err)
	}
	rec, err = Submit(context.Background(), sc.Dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if s := readFile(t, filepath.Join(sc.Dir, rec.Script)); rec.JobID != "4243" || !strings.Contains(s, "#SBATCH --array=1-3,7\n") {
		t.Errorf("resubmission %+v", rec)
	}
	// With everything finished or queued there is nothing to submit.
	write(queue, "4242|5|R\n4242|6|PD\n4243|1|PD\n4243|2|PD\n4243|3|R\n4243|7|PD\n")
	if _, err := Submit(context.Background(), sc.Dir, opt); !errors.Is(err, ErrNothingToSubmit) {
		t.Errorf("all queued: err = %v", err)
	}
	// sbatch's refusal is reported with its message.
	write(queue, "")
	if err := os.WriteFile(filepath.Join(bin, "sbatch"), []byte("#!/bin/sh\necho 'sbatch: error: invalid partition specified: gpu' >&2\nexit 1\n"), 0o755); err != nil {
		t.Fatal(err)
	}
	if _, err := Submit(context.Background(), sc.Dir, opt); err == nil || !strings.Contains(err.Error(), "invalid partition") {
		t.Errorf("sbatch failure: %v", err)
	}
	if jobs, _ := Jobs(sc.Dir); len(jobs) != 2 {
		t.Errorf("%d job records, want 2", len(jobs))
	}
}

func TestSlurmOptionErrors(t *testing.T) {
	sc := expandFake(t, "base: {a: 1}\naxes: {b: [1, 2]}\n")
	for _, opt := range []SlurmOptions{
		{Partition: "a b"},
		{Time: "1:00\n#SBATCH --x"},
		{Extra: []string{"account=x"}},
		{Runner: Runner{Env: []string{"1X=2"}}},
		{Warning: time.Millisecond},
		{Time: "2 hours"},
		{Time: "00:05:00", Warning: 5 * time.Minute},
	} {
		opt.Squeue = "/nonexistent/squeue"
		if _, _, err := WriteSlurmScript(context.Background(), sc.Dir, opt); err == nil {
			t.Errorf("options %+v accepted", opt)
		}
	}
}
