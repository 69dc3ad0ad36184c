package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const tinyRun = `
grid: {n: 20, box: 5 um} # 16 would not resolve the fastest-growing wavelength (1.15 µm)
inclusions: {dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}
lipids: {model: passive}
time: {end: 1 ms}
output: {snapshots: 2, rows: 10, figures: false}
`

func TestRunCommand(t *testing.T) {
	cfg := writeFile(t, tinyRun)
	dir := filepath.Join(t.TempDir(), "out")
	out, errs, code := memix(t, "run", cfg, "-o", dir)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, errs)
	}
	for _, want := range []string{"status", "finished", dir, "model predictions"} {
		if !strings.Contains(out, want) {
			t.Errorf("run output lacks %q:\n%s", want, out)
		}
	}
	for _, f := range []string{"config.resolved.yaml", "series.csv", "summary.json", "checkpoint.h5", "snapshots.h5", "snapshots.xdmf", "run.log"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	// The same directory again: refused (exit 1), naming --force.
	if _, errs, code := memix(t, "run", cfg, "-o", dir); code != 1 || !strings.Contains(errs, "--force") {
		t.Errorf("second run: exit %d, %q", code, errs)
	}
	if _, errs, code := memix(t, "run", cfg, "-o", dir, "--force", "--quiet"); code != 0 {
		t.Errorf("--force: exit %d, %q", code, errs)
	}
	// Usage and configuration errors: exit 2.
	for _, args := range [][]string{
		{"run"},
		{"run", "--resume", dir, cfg},
		{"run", "--resume", dir, "-o", "x"},
		{"run", writeFile(t, "grid: {n: 15}\n"), "-o", filepath.Join(t.TempDir(), "o")},
	} {
		if _, errs, code := memix(t, args...); code != 2 {
			t.Errorf("memix %q: exit %d (%q), want 2", args, code, errs)
		}
	}
	// A bad --set names the key.
	if _, errs, code := memix(t, "run", cfg, "-o", filepath.Join(t.TempDir(), "o"), "--set", "time.end=3 nm"); code != 2 || !strings.Contains(errs, "time.end") {
		t.Errorf("bad --set: exit %d, %q", code, errs)
	}
}

// TestRunInterruptedExitStatus: a cancelled context (SIGINT or SIGTERM in
// main) stops the run after a checkpoint with exit status 3, and --resume
// finishes it.
func TestRunInterruptedExitStatus(t *testing.T) {
	cfg := writeFile(t, tinyRun)
	dir := filepath.Join(t.TempDir(), "out")
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var out, errb bytes.Buffer
	code := exitCode(run(ctx, []string{"run", cfg, "-o", dir, "--quiet"}, &out, &errb))
	if code != 3 {
		t.Fatalf("interrupted run: exit %d, stderr %q", code, errb.String())
	}
	if _, err := os.Stat(filepath.Join(dir, "checkpoint.h5")); err != nil {
		t.Fatal("no checkpoint after interruption")
	}
	if _, errs, code := memix(t, "run", "--resume", dir, "--quiet"); code != 0 {
		t.Fatalf("resume: exit %d, %q", code, errs)
	}
	b, _ := os.ReadFile(filepath.Join(dir, "summary.json"))
	if !strings.Contains(string(b), `"status": "finished"`) {
		t.Errorf("summary after resume:\n%s", b)
	}
}

func TestBenchCommand(t *testing.T) {
	out, errs, code := memix(t, "bench", "--sizes", "16", "--models", "moments,kinetic-2", "--steps", "2", "--min-time", "0s", "--csv")
	if code != 0 {
		t.Fatalf("bench: exit %d, %s", code, errs)
	}
	for _, want := range []string{"moments/16", "kinetic-M2/16", "ffts_per_step", "bytes_per_point"} {
		if !strings.Contains(out, want) {
			t.Errorf("bench output lacks %q:\n%s", want, out)
		}
	}
	if _, _, code := memix(t, "bench", "--models", "kinetic-x"); code != 2 {
		t.Errorf("bad --models: exit %d, want 2", code)
	}
}
