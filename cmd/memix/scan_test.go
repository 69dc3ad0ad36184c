package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// builtMemix returns this command built with go build (see memixBinary),
// for the scans that run real points: in-process, os.Executable is the
// test binary, which cannot run them.
func builtMemix(t *testing.T) string {
	t.Helper()
	return memixBinary(t)
}

const quickSweep = "../../examples/sweeps/quick.yaml"

// TestScanDryRun: --dry-run expands and validates; with --slurm it writes
// the array script, which runs this very program, and submits nothing.
func TestScanDryRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "scan")
	out, errs, code := memix(t, "scan", quickSweep, "-o", dir, "--slurm", "--dry-run",
		"--partition", "short", "--time", "00:05:00", "--cpus", "2", "--mem", "1G", "--max-parallel", "2",
		"--slurm-option=--account=demo")
	if code != 0 {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	script := filepath.Join(dir, "slurm", "array.sh")
	if !strings.Contains(out, script) || !strings.Contains(out, "not submitted") {
		t.Errorf("output:\n%s", out)
	}
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	if real, err := filepath.EvalSymlinks(exe); err == nil {
		exe = real
	}
	text := readScript(t, script)
	for _, want := range []string{"#SBATCH --array=0-3%2\n", "#SBATCH --partition=short\n", "#SBATCH --time=00:05:00\n",
		"#SBATCH --cpus-per-task=2\n", "#SBATCH --mem=1G\n", "#SBATCH --account=demo\n", "memix=(" + exe + ")\n"} {
		if !strings.Contains(text, want) {
			t.Errorf("script lacks %q", want)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "slurm", "jobs.json")); !os.IsNotExist(err) {
		t.Errorf("a dry run recorded a submission: %v", err)
	}
	// A local dry run: every point pending, nothing run.
	out, errs, code = memix(t, "scan", quickSweep, "-o", dir, "--dry-run", "--workers", "2", "--json")
	var doc map[string]any
	if err := json.Unmarshal([]byte(out), &doc); err != nil || code != 0 {
		t.Fatalf("local dry run: exit %d, %v\n%s%s", code, err, out, errs)
	}
	if doc["points"] != 4.0 || doc["to_run"] != 4.0 || doc["memix"] != exe {
		t.Errorf("local dry run: %v", doc)
	}
	if outs, _ := filepath.Glob(filepath.Join(dir, "points", "*", "out")); len(outs) != 0 {
		t.Errorf("a dry run ran points: %v", outs)
	}
	// The examples expand and validate; the comparison sweep has 12 points.
	out, errs, code = memix(t, "scan", "../../examples/sweeps/deep-vs-wall.yaml", "-o", filepath.Join(t.TempDir(), "dw"), "--dry-run", "--json")
	if err := json.Unmarshal([]byte(out), &doc); err != nil || code != 0 || doc["points"] != 12.0 {
		t.Errorf("deep-vs-wall dry run: exit %d, %v, %v\n%s", code, err, doc, errs)
	}
	if _, errs, code := memix(t, "check", "../../examples/sweeps/motor-patch.yaml"); code != 0 {
		t.Errorf("check motor-patch.yaml: exit %d\n%s", code, errs)
	}
	// So does the sweep shown in the README (54 points).
	readme := readScript(t, "../../examples/sweeps/README.md")
	i := strings.Index(readme, "```yaml\n")
	j := strings.Index(readme[i+8:], "```")
	if i < 0 || j < 0 {
		t.Fatal("no YAML block in examples/sweeps/README.md")
	}
	base, err := filepath.Abs("../../examples/sweeps/motor-patch.yaml")
	if err != nil {
		t.Fatal(err)
	}
	sweep := filepath.Join(t.TempDir(), "readme.yaml")
	if err := os.WriteFile(sweep, []byte(strings.Replace(readme[i+8:i+8+j], "base: motor-patch.yaml", "base: "+base, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	out, errs, code = memix(t, "scan", sweep, "-o", filepath.Join(t.TempDir(), "readme"), "--dry-run", "--json")
	if err := json.Unmarshal([]byte(out), &doc); err != nil || code != 0 || doc["points"] != 54.0 {
		t.Errorf("README sweep dry run: exit %d, %v, %v\n%s", code, err, doc, errs)
	}
}

func readScript(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestScanBadSweep: a bad sweep file, or a point that the configuration
// validator rejects, exits with status 2 naming the key, and nothing is
// written.
func TestScanBadSweep(t *testing.T) {
	base := "grid: {n: 16, box: 5 um}\nsubphase: {lower: {kind: wall, depth: 1 um}}\n"
	for _, tt := range []struct {
		name, axes string
		want       []string
	}{
		{"range end of another dimension", "subphase.lower.depth: {log: [50 nm, 5 kg], n: 3}",
			[]string{"subphase.lower.depth", "range end", "wrong dimension"}},
		{"value out of range", "subphase.lower.depth: [50 nm, -5 nm]",
			[]string{"1 of 2 points are invalid", "subphase.lower.depth", "-5 nm", "> 0"}},
		{"misspelt key", "inclusions.dipol: [5 kT, 10 kT]",
			[]string{"2 of 2 points are invalid", "inclusions.dipol", "did you mean inclusions.dipole", "and 1 other point"}},
		{"unknown range key", "grid.box: {lin: [4 um, 8 um], num: 3}",
			[]string{"grid.box", `unknown range key "num"`}},
		{"repeated value", "grid.n: [16, 32, 16]", []string{"same parameters"}},
	} {
		dir := t.TempDir()
		if err := os.WriteFile(filepath.Join(dir, "base.yaml"), []byte(base), 0o644); err != nil {
			t.Fatal(err)
		}
		sweep := filepath.Join(dir, "sweep.yaml")
		if err := os.WriteFile(sweep, []byte("base: base.yaml\naxes:\n  "+tt.axes+"\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		scanDir := filepath.Join(dir, "scan")
		out, errs, code := memix(t, "scan", sweep, "-o", scanDir, "--dry-run")
		if code != 2 || out != "" {
			t.Errorf("%s: exit %d, stdout %q, want 2 and nothing", tt.name, code, out)
		}
		for _, w := range tt.want {
			if !strings.Contains(errs, w) {
				t.Errorf("%s: stderr lacks %q:\n%s", tt.name, w, errs)
			}
		}
		if _, err := os.Stat(scanDir); !os.IsNotExist(err) {
			t.Errorf("%s: the scan folder was written (%v)", tt.name, err)
		}
	}
	if _, errs, code := memix(t, "scan", filepath.Join(t.TempDir(), "none.yaml"), "-o", t.TempDir()); code != 2 || !strings.Contains(errs, "none.yaml") {
		t.Errorf("missing sweep file: exit %d, %s", code, errs)
	}
	for _, args := range [][]string{
		{"scan", quickSweep}, // no -o
		{"scan", quickSweep, "-o", "x", "--partition", "short"},        // a Slurm option without --slurm
		{"scan", quickSweep, "-o", "x", "--slurm", "--workers", "2"},   // a local option with --slurm
		{"scan", quickSweep, "-o", "x", "--slurm", "--time", "2 days"}, // not a Slurm time
		{"scan", quickSweep, "-o", "x", "--workers", "0"},
	} {
		if _, errs, code := memix(t, args...); code != 2 {
			t.Errorf("memix %q: exit %d, want 2\n%s", args, code, errs)
		}
	}
}

// TestScanStatusGather runs the four points of the quick example with the
// real memix, then checks status and gather in every format against the
// points' own summary.json files.
func TestScanStatusGather(t *testing.T) {
	bin := builtMemix(t)
	dir := filepath.Join(t.TempDir(), "scan")
	out, errs, code := memix(t, "scan", quickSweep, "-o", dir, "--workers", "2", "--memix", bin)
	if code != 0 {
		t.Fatalf("scan: exit %d\n%s\n%s", code, out, errs)
	}
	if !strings.Contains(out, "finished now:            4") || !strings.Contains(errs, "scan: 4/4 finished") {
		t.Errorf("scan output:\n%s\nprogress:\n%s", out, errs)
	}
	// Again: nothing to do.
	if out, _, code := memix(t, "scan", quickSweep, "-o", dir, "--memix", bin, "--json"); code != 0 || !strings.Contains(out, `"ran": 0`) {
		t.Errorf("second scan: exit %d\n%s", code, out)
	}

	out, _, code = memix(t, "scan", "status", dir)
	if code != 0 || !strings.Contains(out, "finished:     4") || strings.Count(out, " finished ") != 4 {
		t.Errorf("status: exit %d\n%s", code, out)
	}
	out, _, code = memix(t, "scan", "status", dir, "--json")
	var st struct {
		Finished int `json:"finished"`
		Points   struct {
			Rows []map[string]any `json:"rows"`
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(out), &st); err != nil || code != 0 || st.Finished != 4 || len(st.Points.Rows) != 4 {
		t.Fatalf("status --json: exit %d, %v\n%s", code, err, out)
	}
	if r := st.Points.Rows[2]; r["subphase.lower.kind"] != "wall" || r["subphase.lower.depth"] != "100 nm" || r["state"] != "finished" {
		t.Errorf("status row 2: %v", r)
	}
	if r := st.Points.Rows[0]; r["subphase.lower.depth"] != nil {
		t.Errorf("status row 0: depth %v, want null (deep has none)", r["subphase.lower.depth"])
	}
	out, _, code = memix(t, "scan", "status", dir, "--csv")
	recs, err := csv.NewReader(strings.NewReader(out)).ReadAll()
	if err != nil || code != 0 || len(recs) != 5 || recs[0][0] != "index" || recs[3][3] != "wall" {
		t.Errorf("status --csv: exit %d, %v\n%s", code, err, out)
	}

	out, errs, code = memix(t, "gather", dir)
	if code != 0 || !strings.Contains(out, "finished:  4") || !strings.Contains(out, "model predictions") {
		t.Errorf("gather: exit %d\n%s\n%s", code, out, errs)
	}
	for _, f := range []string{"results.csv", "results.json", "figures/mixnorm.png",
		"figures/mixing.mixnorm.decay_rate_per_s-vs-inclusions.dipole.png", "figures/prediction.growth_rate_per_s-vs-subphase.lower.kind.png"} {
		if _, err := os.Stat(filepath.Join(dir, "gather", f)); err != nil {
			t.Errorf("gather wrote no %s", f)
		}
	}
	// The CSV on stdout: every headline column; its numbers are those of
	// the points' summary.json.
	out, _, code = memix(t, "gather", dir, "--csv", "--no-figures")
	recs, err = csv.NewReader(strings.NewReader(out)).ReadAll()
	if err != nil || code != 0 || len(recs) != 5 {
		t.Fatalf("gather --csv: exit %d, %v\n%s", code, err, out)
	}
	col := map[string]int{}
	for j, h := range recs[0] {
		col[strings.SplitN(h, " [", 2)[0]] = j
	}
	for _, key := range []string{"mixing.mixnorm.ratio", "mixing.mixnorm.decay_rate_per_s", "prediction.growth_rate_per_s",
		"prediction.fastest_wavelength_m", "domain_length_m.Final", "wall_time_s"} {
		j, ok := col[key]
		if !ok {
			t.Errorf("gather --csv has no column %s: %q", key, recs[0])
			continue
		}
		for _, rec := range recs[1:] {
			got, err := strconv.ParseFloat(rec[j], 64)
			want := summaryNumber(t, filepath.Join(dir, "points", rec[col["id"]], "out", "summary.json"), key)
			if err != nil || got != want {
				t.Errorf("point %s %s: gathered %q, summary.json %v", rec[col["id"]], key, rec[j], want)
			}
		}
	}
	out, _, code = memix(t, "gather", dir, "--json", "--no-figures")
	var g struct {
		Finished int `json:"finished"`
		Points   struct {
			Rows []map[string]any `json:"rows"`
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(out), &g); err != nil || code != 0 || g.Finished != 4 || len(g.Points.Rows) != 4 {
		t.Errorf("gather --json: exit %d, %v\n%s", code, err, out)
	}
}

// summaryNumber reads the number at a dotted path of a summary.json.
func summaryNumber(t *testing.T, path, key string) float64 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var v any
	if err := json.Unmarshal(b, &v); err != nil {
		t.Fatal(err)
	}
	for _, k := range strings.Split(key, ".") {
		m, _ := v.(map[string]any)
		v = m[k]
	}
	x, ok := v.(float64)
	if !ok {
		t.Fatalf("%s: %s is %v, not a number", path, key, v)
	}
	return x
}

// TestScanFailureAndInterruption: a point that fails makes the scan exit 1
// naming it, the others finish; a scan stopped by SIGINT or SIGTERM (a
// cancelled context) exits 3.
func TestScanFailureAndInterruption(t *testing.T) {
	bin := builtMemix(t)
	dir := t.TempDir()
	sweep := filepath.Join(dir, "sweep.yaml")
	missing := filepath.Join(dir, "missing.h5")
	text := fmt.Sprintf(`base:
  grid: {n: 32, box: 5 um}
  lipids: {model: passive}
  time: {end: 20 ms}
  output: {snapshots: 0, rows: 10, figures: false}
mode: zip
axes:
  initial.lipids: [stripes, file]
  initial.file: [~, %q]
`, missing)
	if err := os.WriteFile(sweep, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	scanDir := filepath.Join(dir, "scan")
	out, errs, code := memix(t, "scan", sweep, "-o", scanDir, "--memix", bin)
	if code != 1 || !strings.Contains(errs, "point 1 (") || !strings.Contains(errs, "failed") || !strings.Contains(errs, "1 of 2 points failed") {
		t.Errorf("exit %d, want 1\n%s\n%s", code, out, errs)
	}
	out, _, _ = memix(t, "scan", "status", scanDir)
	if !strings.Contains(out, "finished:     1") || !strings.Contains(out, "failed:       1") || !strings.Contains(out, "exit status 2") {
		t.Errorf("status:\n%s", out)
	}

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var o, e strings.Builder
	err := run(ctx, []string{"scan", quickSweep, "-o", filepath.Join(dir, "stopped"), "--memix", bin}, &o, &e)
	if code := exitCode(err); code != 3 || !strings.Contains(e.String(), "run the same command to resume") {
		t.Errorf("interrupted scan: exit %d\n%s", code, e.String())
	}
}
