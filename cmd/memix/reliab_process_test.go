package main

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/memix-sim/memix/outputs"
)

var signalSeed = flag.Uint64("signal-seed", 0, "seed of the random signal times of TestSignalThenResume (0: from the clock)")

// The memix binary for the tests that need a real process (signals, scans
// of real points), built once per package run on first use and removed by
// TestMain.
var (
	binOnce sync.Once
	binDir  string
	binPath string
	binErr  error
)

func TestMain(m *testing.M) {
	flag.Parse()
	code := m.Run()
	if binDir != "" {
		os.RemoveAll(binDir)
	}
	os.Exit(code)
}

// memixBinary builds cmd/memix into a temporary directory, once.
func memixBinary(t *testing.T) string {
	t.Helper()
	binOnce.Do(func() {
		if binDir, binErr = os.MkdirTemp("", "memix-test-bin-"); binErr != nil {
			return
		}
		binPath = filepath.Join(binDir, "memix")
		goTool, err := exec.LookPath("go")
		if err != nil {
			goTool = filepath.Join(runtime.GOROOT(), "bin", "go")
		}
		out, err := exec.Command(goTool, "build", "-o", binPath, ".").CombinedOutput()
		if err != nil {
			binErr = fmt.Errorf("go build: %v\n%s", err, out)
		}
	})
	if binErr != nil {
		t.Fatal(binErr)
	}
	return binPath
}

// process runs the memix binary with args and returns its exit status,
// standard error and wall time.
func process(t *testing.T, args ...string) (int, string, time.Duration) {
	t.Helper()
	cmd := exec.Command(memixBinary(t), args...)
	var errb bytes.Buffer
	cmd.Stderr = &errb
	start := time.Now()
	err := cmd.Run()
	return exitStatus(t, err), errb.String(), time.Since(start)
}

func exitStatus(t *testing.T, err error) int {
	t.Helper()
	var ee *exec.ExitError
	switch {
	case err == nil:
		return 0
	case errors.As(err, &ee) && ee.Exited():
		return ee.ExitCode()
	}
	t.Fatalf("memix did not exit normally: %v", err)
	return -1
}

// signalRun is long enough to be interrupted part-way: about 300 steps on
// 48², a second of one thread.
const signalRun = `
grid: {n: 48, box: 5 um}
inclusions: {model: moments, dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}
lipids: {model: passive, diffusion: 1 um^2/s}
time: {end: 90 ms}
output: {snapshots: 6, rows: 60, figures: false}
initial: {lipids: stripes, stripes: 2, seed: 3}
`

// TestSignalThenResume: a real SIGINT or SIGTERM to a real memix run
// process, at a random time while it runs, makes it finish its step, write
// a checkpoint and its outputs, and exit with status 3; memix run --resume
// then ends with the checkpoint (every spectral coefficient), series.csv
// (every byte) and snapshots of an uninterrupted run.
func TestSignalThenResume(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs it four times")
	}
	seed := *signalSeed
	if seed == 0 {
		seed = uint64(time.Now().UnixNano())
	}
	t.Logf("signal times from seed %d (rerun with -signal-seed=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0))
	cfg := writeFile(t, signalRun)

	whole := filepath.Join(t.TempDir(), "whole")
	code, errs, wall := process(t, "run", cfg, "-o", whole, "--quiet", "--threads", "1")
	if code != 0 {
		t.Fatalf("uninterrupted run: exit %d\n%s", code, errs)
	}
	ref := checkpointOf(t, whole)
	refSeries, _ := os.ReadFile(filepath.Join(whole, "series.csv"))
	t.Logf("uninterrupted: %d steps in %v", ref.Step, wall.Round(time.Millisecond))

	for _, sig := range []syscall.Signal{syscall.SIGTERM, syscall.SIGINT} {
		t.Run(sig.String(), func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "parts")
			var (
				stopped int64
				delay   time.Duration
			)
			for attempt := 0; ; attempt++ {
				os.RemoveAll(dir)
				// A delay in the first half of the uninterrupted run's wall
				// time (counted from when run.log appears, which is after
				// the signal handler is installed).
				delay = time.Duration(rng.Float64() * float64(wall) / 2)
				code, errs = interrupt(t, cfg, dir, sig, delay)
				if code == 3 {
					break
				}
				if code != 0 || attempt == 3 {
					t.Fatalf("%v after %v: exit %d, want 3\n%s", sig, delay, code, errs)
				}
				t.Logf("%v after %v came too late (the run finished); again", sig, delay)
			}
			s := summaryOf(t, dir)
			if s["status"] != "interrupted" {
				t.Errorf("summary status %v", s["status"])
			}
			ck := checkpointOf(t, dir)
			stopped = ck.Step
			if got, ok := s["last_checkpoint_step"].(float64); !ok || int64(got) != stopped || int64(s["steps"].(float64)) != stopped {
				t.Errorf("summary: steps %v, last checkpoint %v; the checkpoint holds step %d", s["steps"], s["last_checkpoint_step"], stopped)
			}
			log, _ := os.ReadFile(filepath.Join(dir, "run.log"))
			if !strings.Contains(string(log), "interrupted at step") || !strings.Contains(string(log), "memix run --resume "+dir) {
				t.Errorf("run.log does not record the interruption:\n%s", log)
			}
			for _, f := range []string{"series.csv", "snapshots.h5", "snapshots.xdmf", "config.resolved.yaml"} {
				if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
					t.Errorf("after %v: %v", sig, err)
				}
			}
			t.Logf("%v after %v: stopped at step %d of %d", sig, delay.Round(time.Millisecond), stopped, ref.Step)

			if code, errs, _ := process(t, "run", "--resume", dir, "--quiet", "--threads", "1"); code != 0 {
				t.Fatalf("resume: exit %d\n%s", code, errs)
			}
			if !sameSpectral(t, ref, checkpointOf(t, dir)) {
				t.Error("the resumed run ends in another state than the uninterrupted one")
			}
			if got, _ := os.ReadFile(filepath.Join(dir, "series.csv")); !bytes.Equal(got, refSeries) {
				t.Error("series.csv of the resumed run differs from the uninterrupted one")
			}
			sameSnapshots(t, whole, dir)
			if s := summaryOf(t, dir); s["status"] != "finished" {
				t.Errorf("summary after resume: %v", s["status"])
			}
		})
	}
}

// interrupt starts memix run, sends sig delay after run.log appears, and
// returns the exit status and standard error.
func interrupt(t *testing.T, cfg, dir string, sig syscall.Signal, delay time.Duration) (int, string) {
	t.Helper()
	cmd := exec.Command(memixBinary(t), "run", cfg, "-o", dir, "--quiet", "--threads", "1")
	var errb bytes.Buffer
	cmd.Stderr = &errb
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	deadline := time.Now().Add(30 * time.Second)
	for {
		if _, err := os.Stat(filepath.Join(dir, "run.log")); err == nil {
			break
		}
		select {
		case err := <-done:
			return exitStatus(t, err), errb.String() // it ended before writing run.log
		case <-time.After(time.Millisecond):
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("no run.log after 30 s")
		}
	}
	select {
	case err := <-done:
		return exitStatus(t, err), errb.String()
	case <-time.After(delay):
	}
	if err := cmd.Process.Signal(sig); err != nil && !errors.Is(err, os.ErrProcessDone) {
		t.Fatal(err)
	}
	return exitStatus(t, <-done), errb.String()
}

// sameSnapshots compares the snapshot lists of two runs and their last
// snapshot's fields, bit for bit.
func sameSnapshots(t *testing.T, a, b string) {
	t.Helper()
	fa, err := outputs.Open(filepath.Join(a, "snapshots.h5"))
	if err != nil {
		t.Fatal(err)
	}
	defer fa.Close()
	fb, err := outputs.Open(filepath.Join(b, "snapshots.h5"))
	if err != nil {
		t.Fatal(err)
	}
	defer fb.Close()
	sa, sb := fa.Snapshots(), fb.Snapshots()
	if len(sa) != len(sb) {
		t.Fatalf("%d snapshots against %d", len(sb), len(sa))
	}
	for i := range sa {
		if sa[i].Step != sb[i].Step || sa[i].Time != sb[i].Time {
			t.Errorf("snapshot %d: step %d at %v against %d at %v", i, sb[i].Step, sb[i].Time, sa[i].Step, sa[i].Time)
		}
	}
	last := len(sa) - 1
	for _, fi := range sa[last].Fields {
		x, err1 := fa.ReadField(nil, fi.Name, last)
		y, err2 := fb.ReadField(nil, fi.Name, last)
		if err1 != nil || err2 != nil {
			t.Fatal(err1, err2)
		}
		for k := range x {
			if x[k] != y[k] {
				t.Errorf("last snapshot, field %s differs at %d", fi.Name, k)
				break
			}
		}
	}
}
