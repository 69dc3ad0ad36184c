package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/memix-sim/memix/outputs"
)

// summaryOf reads summary.json of the run in dir.
func summaryOf(t *testing.T, dir string) map[string]any {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var s map[string]any
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	return s
}

// continueLine returns the arguments of the "continue with: memix …"
// line of a failure message.
func continueLine(t *testing.T, msg string) []string {
	t.Helper()
	m := regexp.MustCompile(`continue with: memix (.*)`).FindStringSubmatch(msg)
	if m == nil {
		t.Fatalf("no \"continue with\" line in:\n%s", msg)
	}
	return strings.Fields(m[1])
}

// checkKept checks what a failed run must keep in dir: a finite checkpoint
// at the step summary.json names, a series without non-finite values and
// snapshots that read back finite.
func checkKept(t *testing.T, dir string) (ckStep int) {
	t.Helper()
	s := summaryOf(t, dir)
	if s["status"] != "failed" {
		t.Errorf("summary status %v", s["status"])
	}
	ck := checkpointOf(t, dir)
	if !allFinite(ck) {
		t.Error("the kept checkpoint is not finite")
	}
	if got, ok := s["last_checkpoint_step"].(float64); !ok || int64(got) != ck.Step {
		t.Errorf("summary names checkpoint step %v, the file holds step %d", s["last_checkpoint_step"], ck.Step)
	}
	b, err := os.ReadFile(filepath.Join(dir, "series.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if low := strings.ToLower(string(b)); strings.Contains(low, "nan") || strings.Contains(low, "inf") {
		t.Error("series.csv holds a non-finite value")
	}
	f, err := outputs.Open(filepath.Join(dir, "snapshots.h5"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	for i, sn := range f.Snapshots() {
		for _, fi := range sn.Fields {
			v, err := f.ReadField(nil, fi.Name, i)
			if err != nil {
				t.Fatal(err)
			}
			for _, x := range v {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Fatalf("snapshot %d, field %s is not finite", i, fi.Name)
				}
			}
		}
	}
	return int(ck.Step)
}

// followAdvice runs the "continue with" command of msg, and of each
// further failure, until the run finishes; it returns the number of
// commands run.
func followAdvice(t *testing.T, msg string, max int) int {
	t.Helper()
	for n := 1; n <= max; n++ {
		args := append(continueLine(t, msg), "--quiet", "--threads", "1")
		_, errs, code := memix(t, args...)
		t.Logf("memix %s: exit %d", strings.Join(args, " "), code)
		if code == 0 {
			return n
		}
		if code != 1 {
			t.Fatalf("exit %d:\n%s", code, errs)
		}
		msg = errs
	}
	t.Fatalf("still failing after %d commands:\n%s", max, msg)
	return 0
}

var stepAt = regexp.MustCompile(`step (\d+) at t = `)

// TestBlowUpStopsAndResumes: an absurd fixed step (50 ms where the
// active growth time is 3.8 ms) makes the fields overflow. memix run must
// stop with exit status 1 and a message naming the field, the step, the
// time and a location; keep a finite checkpoint and clean outputs; write
// the same account to run.log; and print a command that continues the run
// with a smaller step, which, followed until it stops failing, finishes
// the run.
func TestBlowUpStopsAndResumes(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	cfg := writeFile(t, reliabRun)
	_, errs, code := memix(t, "run", cfg, "-o", dir, "--quiet", "--threads", "1",
		"--set", "time.fixed=true", "--set", "time.dt_max=50 ms", "--set", "time.end=200 ms")
	if code != 1 {
		t.Fatalf("exit %d, want 1:\n%s", code, errs)
	}
	t.Log(errs)
	for _, w := range []string{"became non-finite", "during the step of dt = 50 ms", "x = ", "y = ", "grid point (",
		"kept: " + filepath.Join(dir, "checkpoint.h5"), "continue with: memix run --resume " + dir + " --set time.dt_max=12ms"} {
		if !strings.Contains(errs, w) {
			t.Errorf("message lacks %q", w)
		}
	}
	if !regexp.MustCompile(`field (c|Q11|Q12|phi) became`).MatchString(errs) || !stepAt.MatchString(errs) {
		t.Errorf("message does not name the field and step")
	}
	log, _ := os.ReadFile(filepath.Join(dir, "run.log"))
	if first := strings.SplitN(strings.TrimPrefix(errs, "memix: "), "\n", 2)[0]; !strings.Contains(string(log), first) {
		t.Errorf("run.log lacks %q:\n%s", first, log)
	}
	failed, _ := strconv.Atoi(stepAt.FindStringSubmatch(errs)[1])
	if ck := checkKept(t, dir); ck >= failed {
		t.Errorf("checkpoint at step %d, the failure at step %d", ck, failed)
	}
	n := followAdvice(t, errs, 5)
	if s := summaryOf(t, dir); s["status"] != "finished" {
		t.Errorf("after %d resumes: %v", n, s["status"])
	}
	t.Logf("finished after following %d suggestions", n)
}

// TestStepCollapseStopsAndResumes: a floor on the step (time.dt_min =
// 260 µs) that the growing flow must cross stops the run with exit status
// 1, naming the limit, the step, the time and where the flow is strongest,
// keeping a finite checkpoint; the suggested smaller floor finishes it.
func TestStepCollapseStopsAndResumes(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	_, errs, code := memix(t, "run", writeFile(t, reliabRun), "-o", dir, "--quiet", "--threads", "1",
		"--set", "time.dt_min=260 us", "--set", "time.end=60 ms", "--set", "output.checkpoint_wall=1 ns")
	if code != 1 {
		t.Fatalf("exit %d, want 1:\n%s", code, errs)
	}
	t.Log(errs)
	for _, w := range []string{"the time step collapsed", "limit allows dt = ", "time.dt_min = 260 µs", "x = ", "y = ",
		"continue with: memix run --resume " + dir + " --set time.dt_min="} {
		if !strings.Contains(errs, w) {
			t.Errorf("message lacks %q", w)
		}
	}
	failed, _ := strconv.Atoi(stepAt.FindStringSubmatch(errs)[1])
	// With a checkpoint after every step, the kept one is the step before.
	if ck := checkKept(t, dir); ck != failed-1 {
		t.Errorf("checkpoint at step %d, the failure at step %d", ck, failed)
	}
	followAdvice(t, errs, 2)
	if s := summaryOf(t, dir); s["status"] != "finished" {
		t.Errorf("after resuming: %v", s["status"])
	}
}
