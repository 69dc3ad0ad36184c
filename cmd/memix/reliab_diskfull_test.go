package main

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"github.com/memix-sim/memix/outputs"
)

// diskRun writes many snapshots and a checkpoint after every step, so
// that a small disk fills part-way.
const diskRun = `
grid: {n: 32, box: 5 um}
inclusions: {model: moments, dipole: 10 kT, density: 50 um^-2, rot_diffusion: 20 /s}
lipids: {model: passive, diffusion: 1 um^2/s}
time: {end: 20 ms}
output: {snapshots: 30, rows: 100, figures: false, checkpoint_wall: 1 ns}
initial: {lipids: stripes, stripes: 2, seed: 3}
`

// TestDiskFullThenResume: memix run on a 384 KiB tmpfs (mounting needs
// root, as in CI; skipped otherwise) fills the disk part-way. It must stop
// with exit status 1 and an error naming the file that could not be
// written and saying how to continue; leave no temporary files; keep a
// finite checkpoint and the earlier snapshots exactly as an unhindered run
// writes them. Once the disk is larger, the printed command must finish the
// run with the state, series.csv and snapshots of the unhindered run.
func TestDiskFullThenResume(t *testing.T) {
	mnt := t.TempDir()
	if err := syscall.Mount("tmpfs", mnt, "tmpfs", 0, "size=384k"); err != nil {
		t.Skip("cannot mount a tmpfs here (needs root):", err)
	}
	t.Cleanup(func() {
		if err := syscall.Unmount(mnt, 0); err != nil {
			t.Error("unmount:", err)
		}
	})
	whole := filepath.Join(t.TempDir(), "whole")
	runInto(t, diskRun, whole, "output.checkpoint_wall=1 h") // results do not depend on checkpoints

	dir := filepath.Join(mnt, "run")
	_, errs, code := memix(t, "run", writeFile(t, diskRun), "-o", dir, "--quiet", "--threads", "1")
	if code != 1 {
		t.Fatalf("exit %d, want 1:\n%s", code, errs)
	}
	t.Log(errs)
	for _, w := range []string{"writing the outputs failed", "no space left on device", "outputs: write " + dir + "/",
		"kept: " + filepath.Join(dir, "checkpoint.h5"), "free space", "continue with: memix run --resume " + dir} {
		if !strings.Contains(strings.ToLower(errs), strings.ToLower(w)) {
			t.Errorf("message lacks %q", w)
		}
	}
	for _, d := range []string{dir, filepath.Join(dir, "snapshots.d")} {
		ents, _ := os.ReadDir(d)
		for _, e := range ents {
			if strings.Contains(e.Name(), ".tmp-") {
				t.Errorf("temporary file %s left in %s", e.Name(), d)
			}
		}
	}
	ck := checkpointOf(t, dir)
	if !allFinite(ck) || ck.Step < 1 {
		t.Errorf("kept checkpoint at step %d, finite %v", ck.Step, allFinite(ck))
	}
	// The snapshots written before the disk filled are those of the
	// unhindered run, bit for bit.
	fa, err := outputs.Open(filepath.Join(whole, "snapshots.h5"))
	if err != nil {
		t.Fatal(err)
	}
	defer fa.Close()
	fb, err := outputs.Open(filepath.Join(dir, "snapshots.h5"))
	if err != nil {
		t.Fatalf("the snapshot index after the disk filled: %v", err)
	}
	kept := len(fb.Snapshots())
	for i := range kept {
		for _, name := range []string{"phi", "Q11"} {
			x, err1 := fa.ReadField(nil, name, i)
			y, err2 := fb.ReadField(nil, name, i)
			if err1 != nil || err2 != nil {
				t.Fatalf("snapshot %d: %v %v", i, err1, err2)
			}
			for k := range x {
				if x[k] != y[k] {
					t.Fatalf("snapshot %d, %s differs from the unhindered run at %d", i, name, k)
				}
			}
		}
	}
	fb.Close()
	t.Logf("disk full at step %d: %d of %d snapshots kept, checkpoint of step %d", ck.Step+1, kept, len(fa.Snapshots()), ck.Step)

	if err := syscall.Mount("tmpfs", mnt, "tmpfs", syscall.MS_REMOUNT, "size=16m"); err != nil {
		t.Fatal("remount larger:", err)
	}
	args := append(continueLine(t, errs), "--quiet", "--threads", "1")
	if _, errs, code := memix(t, args...); code != 0 {
		t.Fatalf("memix %v: exit %d\n%s", args, code, errs)
	}
	if !sameSpectral(t, checkpointOf(t, whole), checkpointOf(t, dir)) {
		t.Error("the resumed run ends in another state than the unhindered one")
	}
	a, _ := os.ReadFile(filepath.Join(whole, "series.csv"))
	b, _ := os.ReadFile(filepath.Join(dir, "series.csv"))
	if string(a) != string(b) {
		t.Error("series.csv differs from the unhindered run's")
	}
	sameSnapshots(t, whole, dir)
}

// TestOutputDirectoryNeverOverwritten: an existing run, a file, or a
// directory memix did not write is never replaced silently: without
// --force all three are refused, with --force only the earlier run is
// replaced, and every refusal leaves what was there byte for byte.
func TestOutputDirectoryNeverOverwritten(t *testing.T) {
	cfg := writeFile(t, reliabRun)
	prev := filepath.Join(t.TempDir(), "prev")
	runInto(t, reliabRun, prev)
	file := filepath.Join(t.TempDir(), "results.txt")
	os.WriteFile(file, []byte("keep me"), 0o644)
	foreign := t.TempDir()
	os.WriteFile(filepath.Join(foreign, "thesis.tex"), []byte("keep me too"), 0o644)
	for _, tt := range []struct {
		dir   string
		force bool
		want  string
	}{
		{prev, false, "use --force to replace it or --resume"},
		{file, false, "it is a file"},
		{file, true, "it is a file"},
		{foreign, false, "use --force"},
		{foreign, true, "not replacing a directory memix did not write"},
	} {
		var before map[string][]byte
		if st, _ := os.Stat(tt.dir); st.IsDir() {
			before = tree(t, tt.dir)
		}
		orig, _ := os.ReadFile(file)
		args := []string{"run", cfg, "-o", tt.dir, "--quiet"}
		if tt.force {
			args = append(args, "--force")
		}
		_, errs, code := memix(t, args...)
		if code != 1 || !strings.Contains(errs, tt.want) || !strings.Contains(errs, tt.dir) {
			t.Errorf("%v: exit %d, want 1 and %q:\n%s", args, code, tt.want, errs)
		}
		if before != nil {
			sameTree(t, tt.dir, before)
		}
		if now, _ := os.ReadFile(file); string(now) != string(orig) {
			t.Error("the file was changed")
		}
	}
	if _, errs, code := memix(t, "run", cfg, "-o", prev, "--quiet", "--force"); code != 0 {
		t.Errorf("--force onto an earlier run: exit %d\n%s", code, errs)
	}
}
