package main

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/hdf5"

	"github.com/memix-sim/memix/outputs"
)

// foreignH5 writes a valid HDF5 file that memix did not write.
func foreignH5(t *testing.T) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "foreign.h5")
	f, err := hdf5.CreateFile(p, hdf5.F_ACC_TRUNC)
	if err != nil {
		t.Fatal(err)
	}
	g, err := f.CreateGroup("data")
	if err != nil {
		t.Fatal(err)
	}
	g.Close()
	f.Close()
	return p
}

// halfOf writes the first half of the file at p to a new file.
func halfOf(t *testing.T, p string) string {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	q := filepath.Join(t.TempDir(), "half-"+filepath.Base(p))
	if err := os.WriteFile(q, b[:len(b)/2], 0o644); err != nil {
		t.Fatal(err)
	}
	return q
}

// sources runs the reliabRun three times for input files: as is, on
// another grid, and without lipids.
func sources(t *testing.T) (src, other, noPhi string) {
	t.Helper()
	src, other, noPhi = filepath.Join(t.TempDir(), "src"), filepath.Join(t.TempDir(), "other"), filepath.Join(t.TempDir(), "nophi")
	runInto(t, reliabRun, src)
	runInto(t, reliabRun, other, "grid.n=48")
	runInto(t, reliabRun, noPhi, "lipids.model=none")
	return
}

// TestInitialFileProblems: an initial.file that is missing, truncated, of
// another grid, without the field phi or not a memix file stops memix run
// before anything is written, with exit status 2 and a message naming
// initial.file, the file and what is wrong. A run that --force would have
// replaced is left as it was. A checkpoint as initial.file gives φ exactly.
func TestInitialFileProblems(t *testing.T) {
	src, other, noPhi := sources(t)
	index := filepath.Join(src, "snapshots.h5")
	text := filepath.Join(t.TempDir(), "notes.h5")
	os.WriteFile(text, []byte("phi: 0.3\n"), 0o644)
	gap := copyTree(t, src)
	os.Remove(filepath.Join(gap, "snapshots.d", "000002.h5")) // the last of 3

	cases := []struct {
		name, file, snap string
		want             []string
	}{
		{"missing", filepath.Join(src, "absent.h5"), "-1", []string{"no such file"}},
		{"truncated index", halfOf(t, index), "-1", []string{"truncated or damaged"}},
		{"truncated snapshot", halfOf(t, filepath.Join(src, "snapshots.d", "000001.h5")), "0", []string{"truncated or damaged"}},
		{"truncated checkpoint", halfOf(t, filepath.Join(src, "checkpoint.h5")), "0", []string{"truncated or damaged"}},
		{"another grid", filepath.Join(other, "snapshots.h5"), "-1", []string{"grid size mismatch", "48×48", "32×32"}},
		{"another grid's checkpoint", filepath.Join(other, "checkpoint.h5"), "0", []string{"grid size mismatch"}},
		{"no field phi", filepath.Join(noPhi, "snapshots.h5"), "-1", []string{`no field "phi"`, "Q11"}},
		{"checkpoint without phi", filepath.Join(noPhi, "checkpoint.h5"), "0", []string{"lacks spectral field phi"}},
		{"snapshot file missing from the index", filepath.Join(gap, "snapshots.h5"), "-1", []string{"000002.h5 is missing"}},
		{"snapshot out of range", index, "7", []string{"initial.file_snapshot = 7", "0 to 2"}},
		{"not HDF5", text, "-1", []string{"not an HDF5 file"}},
		{"HDF5 not from memix", foreignH5(t), "-1", []string{"not a memix file"}},
		{"a directory", src, "-1", []string{"is a directory"}},
	}
	kept := filepath.Join(t.TempDir(), "kept")
	runInto(t, reliabRun, kept)
	before := tree(t, kept)
	for _, tt := range cases {
		t.Run(tt.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "out")
			args := []string{"run", writeFile(t, reliabRun), "-o", dir, "--quiet",
				"--set", "initial.lipids=file", "--set", "initial.file=" + tt.file, "--set", "initial.file_snapshot=" + tt.snap}
			_, errs, code := memix(t, args...)
			if code != 2 {
				t.Errorf("exit %d, want 2", code)
			}
			for _, w := range append([]string{"initial.file", tt.file, "unusable file"}, tt.want...) {
				if !strings.Contains(errs, w) {
					t.Errorf("stderr lacks %q:\n%s", w, errs)
				}
			}
			if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("the failed run left %s (%v)", dir, err)
			}
			// --force onto an earlier run: refused before it is touched.
			forced := append(append([]string{}, args[:3]...), kept, "--force")
			_, errs, code = memix(t, append(forced, args[4:]...)...)
			if code != 2 {
				t.Errorf("--force: exit %d\n%s", code, errs)
			}
			sameTree(t, kept, before)
		})
	}

	// A checkpoint is a valid initial.file: φ is its exact spectral field.
	dst := filepath.Join(t.TempDir(), "fromck")
	runInto(t, reliabRun, dst, "initial.lipids=file", "initial.file="+filepath.Join(src, "checkpoint.h5"), "time.end=0.1 ms", "time.max_steps=1")
	f, err := outputs.Open(filepath.Join(dst, "snapshots.h5"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	got, err := f.ReadField(nil, "phi", 0)
	if err != nil {
		t.Fatal(err)
	}
	// The source's last snapshot is written from the state its checkpoint
	// holds (both at the end of the run), so φ must agree to round-off of
	// one transform: 2ε·log₂N relative (spectral tests), N = 32².
	g, _ := outputs.Open(filepath.Join(src, "snapshots.h5"))
	defer g.Close()
	want, _ := g.ReadField(nil, "phi", len(g.Snapshots())-1)
	tol := 2 * 0x1p-52 * 10
	worst := 0.0
	for i := range want {
		worst = math.Max(worst, math.Abs(got[i]-want[i]))
	}
	if worst > tol {
		t.Errorf("φ from the checkpoint differs from the source's last snapshot by %g (tolerance %g)", worst, tol)
	}
	t.Logf("φ from a checkpoint: largest difference %.3g (tolerance %.3g)", worst, tol)
}

// TestResumeProblems: --resume on a directory whose checkpoint or
// recorded configuration is missing, truncated, of another grid, without
// a field, not a memix file or not finite fails with a message naming the
// file, and changes nothing in the directory.
func TestResumeProblems(t *testing.T) {
	src, other, noPhi := sources(t)
	good := filepath.Join(src, "checkpoint.h5")

	nan := filepath.Join(t.TempDir(), "nan.h5")
	ck := checkpointOf(t, src)
	ck.Spectral[1].Data[3] = complex(math.NaN(), 0)
	if err := outputs.WriteCheckpoint(nan, runGrid(t, src), ck); err != nil {
		t.Fatal(err)
	}
	text := filepath.Join(t.TempDir(), "text")
	os.WriteFile(text, []byte("step,time\n"), 0o644)

	cases := []struct {
		name     string
		file     string // replaces checkpoint.h5 ("" removes it)
		resolved string // replaces config.resolved.yaml if set
		want     []string
	}{
		{"no checkpoint", "", "", []string{"checkpoint.h5", "no such file"}},
		{"truncated checkpoint", halfOf(t, good), "", []string{"truncated or damaged"}},
		{"another grid", filepath.Join(other, "checkpoint.h5"), "", []string{"grid size mismatch", "48×48"}},
		{"a field missing", filepath.Join(noPhi, "checkpoint.h5"), "", []string{"lacks spectral field phi"}},
		{"a snapshot, not a checkpoint", filepath.Join(src, "snapshots.d", "000000.h5"), "", []string{"not a checkpoint"}},
		{"not HDF5", text, "", []string{"not an HDF5 file"}},
		{"HDF5 not from memix", foreignH5(t), "", []string{"not a memix file"}},
		{"not finite", nan, "", []string{"non-finite", "Q11"}},
		{"no recorded configuration", good, "-", []string{"config.resolved.yaml", "no such file"}},
		{"damaged recorded configuration", good, "grid: {n: 31}\n", []string{"config.resolved.yaml", "grid.n", "even"}},
	}
	for _, tt := range cases {
		t.Run(tt.name, func(t *testing.T) {
			dir := copyTree(t, src)
			ckp := filepath.Join(dir, "checkpoint.h5")
			os.Remove(ckp)
			if tt.file != "" {
				b, err := os.ReadFile(tt.file)
				if err != nil {
					t.Fatal(err)
				}
				os.WriteFile(ckp, b, 0o644)
			}
			switch rp := filepath.Join(dir, "config.resolved.yaml"); tt.resolved {
			case "":
			case "-":
				os.Remove(rp)
			default:
				os.WriteFile(rp, []byte(tt.resolved), 0o644)
			}
			before := tree(t, dir)
			_, errs, code := memix(t, "run", "--resume", dir, "--quiet")
			if code == 0 || code == 3 {
				t.Errorf("exit %d, want a failure", code)
			}
			for _, w := range append([]string{dir}, tt.want...) {
				if !strings.Contains(errs, w) {
					t.Errorf("stderr lacks %q:\n%s", w, errs)
				}
			}
			sameTree(t, dir, before)
			t.Logf("exit %d: %s", code, strings.TrimSpace(errs))
		})
	}
	if _, errs, code := memix(t, "run", "--resume", filepath.Join(t.TempDir(), "nothing"), "--quiet"); code == 0 || !strings.Contains(errs, "no such file") {
		t.Errorf("resume of a missing directory: exit %d %s", code, errs)
	}
}
