package main

import (
	"bytes"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/mixing"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

// The analytic runs: a 32 × 32 grid on a box of reduced side 1 with
// ℓ₀ = 2 µm and τ₀ = 1 ms, holding one composition mode
// φ = a(t) cos(2π m x/ℓ₀) (test data written with the outputs package).
const (
	runN      = 32
	runL0     = 2e-6 // m
	runTau0   = 1e-3 // s
	runMode   = 3
	runAmp    = 0.8
	runD      = 1e-3 // reduced diffusivity ℓ₀²/τ₀
	runFrames = 21
	runDt     = 1.0 // reduced time between snapshots
)

// runConfig is the configuration recorded in the analytic runs: the
// mix-norm length comes from it.
const runConfig = "grid: {n: 32, box: 2 um}\noutput: {mix_length: 0.5 um}\n"

// writeRun writes an output directory whose snapshots hold
// φ = amp(t)·cos(2π·runMode·x) (plus the extra fields, if any) at
// reduced times t_i = t0 + i·runDt, and returns the directory.
func writeRun(t *testing.T, t0 float64, amp func(t float64) float64, fieldName string) string {
	t.Helper()
	dir := t.TempDir()
	g, err := spectral.NewGrid(runN, runN, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	c, err := config.Parse([]byte(runConfig), "run")
	if err != nil {
		t.Fatal(err)
	}
	var yaml bytes.Buffer
	if err := c.WriteResolved(&yaml); err != nil {
		t.Fatal(err)
	}
	info := outputs.RunInfo{Version: "memix test", Config: yaml.String(),
		Scales: outputs.Scales{LengthUnit: "l0", Length: runL0, TimeUnit: "tau0", Time: runTau0}}
	w, err := outputs.NewSnapshotWriter(dir, g, info)
	if err != nil {
		t.Fatal(err)
	}
	phi := g.NewReal()
	for n := range runFrames {
		tn := t0 + float64(n)*runDt
		a := amp(tn)
		for j := range runN {
			for i := range runN {
				phi[j*runN+i] = a * math.Cos(2*math.Pi*runMode*g.X(i))
			}
		}
		if err := w.Write(tn, int64(10*n), []outputs.Field{{Name: fieldName, Unit: "1", Data: phi}}); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// TestMixingDiffusingMode: a single mode under pure diffusion decays as
// e^{−Dk²t} in every norm (MODEL.md §4), so the fitted rate of every norm
// is Dk², the threshold time ln(1/threshold)/(Dk²), and the norms of
// A cos(kx) are A/√2 times √w(k): 1, 1/k, 1/√k and (1 + k²L²)^{-1/4}
// (MODEL.md §4). The structure factor holds A²/2·e^{−2Dk²t} in the mode's
// shell and L(t) = 2π/k.
func TestMixingDiffusingMode(t *testing.T) {
	k := 2 * math.Pi * runMode // reduced
	rate := runD * k * k       // reduced
	dir := writeRun(t, 0, func(tt float64) float64 { return runAmp * math.Exp(-rate*tt) }, "phi")
	doc := memixJSON(t, "mixing", dir, "--threshold", "0.05")

	kSI, rateSI := k/runL0, rate/runTau0
	const mixL = 0.5e-6
	w := map[string]float64{"variance": 1, "h_minus1": 1 / kSI, "h_minus_half": 1 / math.Sqrt(kSI), "mix": 1 / math.Sqrt(math.Sqrt(1+kSI*kSI*mixL*mixL))}
	// Norms: sums over 2 modes of products of FFT coefficients, each good
	// to a few ulps times log₂N (FFT round-off); 1e-13 is a factor 100 above.
	ns := rows(t, doc, "norms")
	if len(ns) != runFrames {
		t.Fatalf("%d rows", len(ns))
	}
	for i, r := range ns {
		ts := num(t, r["time_si"])
		if relErr(ts, float64(i)*runDt*runTau0) > 1e-15 {
			t.Errorf("row %d: time %v s", i, ts)
		}
		for key, wk := range w {
			checkNorm := runAmp / math.Sqrt2 * wk * math.Exp(-rateSI*ts)
			if e := relErr(num(t, r[key]), checkNorm); e > 1e-13 {
				t.Errorf("t = %g s: %s = %.15g, want %.15g (error %.2g)", ts, key, num(t, r[key]), checkNorm, e)
			}
		}
		if e := relErr(num(t, r["domain_length"]), 2*math.Pi/kSI); e > 1e-13 {
			t.Errorf("L(t) = %v, want 2π/k = %v", r["domain_length"], 2*math.Pi/kSI)
		}
	}
	if doc["mix_length"] != mixL || !strings.Contains(doc["mix_length_from"].(string), "output.mix_length") {
		t.Errorf("mix length %v from %v", doc["mix_length"], doc["mix_length_from"])
	}

	// Fits: ln v is exactly linear in t, so the least-squares rate is Dk²
	// to the round-off of the norms (1e-15) over the fitted span of about
	// 7 e-foldings: ~1e-16 relative; 1e-12 leaves a wide margin.
	worst := 0.0
	for _, r := range rows(t, doc, "fits") {
		if r["law"] != "exponential" {
			continue
		}
		worst = math.Max(worst, relErr(num(t, r["rate_or_exponent"]), rateSI))
		if r["auto"] != true || num(t, r["samples"]) < 3 {
			t.Errorf("fit %v", r)
		}
	}
	t.Logf("largest relative error of the fitted rates against Dk² = %g 1/s: %.2g (tolerance 1e-12)", rateSI, worst)
	if worst > 1e-12 {
		t.Errorf("fitted rates off by %.2g relative", worst)
	}
	// Threshold 0.05: every norm reaches it at ln(20)/(Dk²); Reach
	// interpolates in ln v, exact for an exponential.
	for _, r := range rows(t, doc, "threshold_times") {
		if r["reached"] != true {
			t.Errorf("%v not reached", r["norm"])
			continue
		}
		checkRel(t, "time to reach 0.05 ("+r["norm"].(string)+")", num(t, r["time_si"]), math.Log(20)/rateSI, 1e-12)
	}

	// S(k): against the library and the closed form A²/2·e^{−2Dk²t}·LxLy/N_b.
	g, _ := spectral.NewGrid(runN, runN, 1, 1)
	sp := mixing.NewSpectrum(g)
	sr := rows(t, doc, "spectra")
	b := runMode - 1 // shell b = runMode is stored at index b − 1
	if relErr(num(t, sr[b]["k"]), kSI) > 1e-15 {
		t.Fatalf("shell %d at k = %v, want %v", runMode, sr[b]["k"], kSI)
	}
	for _, col := range []string{"s_0", "s_7", "s_13", "s_20"} {
		i := map[string]int{"s_0": 0, "s_7": 7, "s_13": 13, "s_20": 20}[col]
		want := runAmp * runAmp / 2 * math.Exp(-2*rate*float64(i)*runDt) * runL0 * runL0 / float64(sp.Count(b))
		checkRel(t, "S(k) at snapshot "+col, num(t, sr[b][col]), want, 1e-13)
	}

	// CSV has the blocks and headers; the text names the prediction.
	out, _, code := memix(t, "mixing", dir, "--csv")
	if code != 0 || strings.Join(csvBlock(t, out, "norms")[0], ",") != "time [tau0],time_si [s],step,variance [1],h_minus1 [m],h_minus_half [m^0.5],mix [1],domain_length [m]" {
		t.Errorf("CSV header %q", csvBlock(t, out, "norms")[0])
	}
	out, _, _ = memix(t, "mixing", dir)
	if !strings.Contains(out, "model predictions") {
		t.Errorf("text lacks the prediction note:\n%s", out)
	}
}

// TestMixingWindowAndPowerLaw: φ's amplitude falls as t^{-1/2}: the power
// fit returns −1/2 to round-off; a given window is used and reported.
func TestMixingWindowAndPowerLaw(t *testing.T) {
	dir := writeRun(t, 1, func(tt float64) float64 { return runAmp / math.Sqrt(tt) }, "phi")
	// Snapshots at 1, 2, …, 21 ms: the window 4.5 ms to 12.5 ms holds 8.
	doc := memixJSON(t, "mixing", dir, "--window", "4.5ms:0.0125")
	n := 0
	for _, r := range rows(t, doc, "fits") {
		if r["law"] != "power law" {
			continue
		}
		n++
		checkRel(t, "power-law exponent ("+r["norm"].(string)+")", num(t, r["rate_or_exponent"]), -0.5, 1e-12)
		if r["auto"] != false || num(t, r["samples"]) != 8 || num(t, r["from"]) != 5e-3 || relErr(num(t, r["to"]), 12e-3) > 1e-15 {
			t.Errorf("window %v", r)
		}
	}
	if n != 4 || !strings.Contains(doc["window"].(string), "given") {
		t.Errorf("%d power fits, window %v", n, doc["window"])
	}
}

// TestMixingFigures: --figures writes three PNG files into
// OUTDIR/figures.
func TestMixingFigures(t *testing.T) {
	dir := writeRun(t, 0, func(tt float64) float64 { return runAmp * math.Exp(-0.1*tt) }, "phi")
	if _, errs, code := memix(t, "mixing", dir, "--figures", "--spectra", "3"); code != 0 {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	for _, name := range []string{"mixing-norms.png", "mixing-spectra.png", "mixing-length.png"} {
		f, err := os.Open(filepath.Join(dir, "figures", name))
		if err != nil {
			t.Fatal(err)
		}
		_, err = png.Decode(f)
		f.Close()
		if err != nil {
			t.Errorf("%s: %v", name, err)
		}
	}
}

func TestMixingBad(t *testing.T) {
	dir := writeRun(t, 0, func(float64) float64 { return 1 }, "c")
	wantBad(t, []string{"mixing", dir}, "no field phi", "c [1]")
	ok := writeRun(t, 0, func(float64) float64 { return 1 }, "phi")
	wantBad(t, []string{"mixing", ok, "--window", "2s"}, "--window", "no colon")
	wantBad(t, []string{"mixing", ok, "--window", "2s:1s"}, "--window", "0 ≤ t0 < t1")
	wantBad(t, []string{"mixing", ok, "--window", "1m:2m"}, "--window", "wrong dimension")
	wantBad(t, []string{"mixing", ok, "--threshold", "1.5"}, "--threshold", "(0, 1)")
	wantBad(t, []string{"mixing", filepath.Join(ok, "snapshots.d", "000000.h5")}, "not a snapshot index")
	wantBad(t, []string{"mixing", "../../examples/free-patch.yaml"}, "free-patch.yaml", "not an HDF5 file")
	wantBad(t, []string{"mixing", t.TempDir()}, "not a memix output directory")
}

// mixRun is a small configuration that memix run finishes in about a
// second (test data).
const mixRun = `
membrane: {viscosity: 1e-9 Pa*s*m}
grid: {n: 32, box: 2 um}
inclusions: {rot_diffusion: 10 /s, trans_diffusion: 0.1 um^2/s, dipole: 5 kT, density: 100 um^-2}
lipids: {model: passive, diffusion: 1 um^2/s}
time: {end: 0.1 s}
output: {snapshots: 4, figures: false}
`

// runMixRun runs memix run on mixRun in-process and returns the output
// directory.
func runMixRun(t *testing.T) string {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "out")
	if _, errs, code := memix(t, "run", writeFile(t, mixRun), "-o", dir, "--quiet"); code != 0 {
		t.Fatalf("memix run: exit %d\n%s", code, errs)
	}
	return dir
}

// TestMixingRun: on the output of memix run, the norms recomputed from
// the snapshots equal those the run wrote to series.csv at the same steps
// (computed there from the spectral state, here from the stored real
// field by a new forward FFT: equal to FFT round-off, a few 1e-16 times
// log₂N; 1e-12 leaves a factor of 100 and more).
func TestMixingRun(t *testing.T) {
	dir := runMixRun(t)
	cols, data, err := outputs.ReadSeries(filepath.Join(dir, outputs.SeriesName))
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, c := range cols {
		col[c.Name] = i
	}
	byStep := map[float64][]float64{}
	for _, r := range data {
		byStep[r[col["step"]]] = r
	}
	doc := memixJSON(t, "mixing", dir)
	const l0 = 2e-6 // grid.lx: the length unit of the run
	worst := 0.0
	n := 0
	for _, r := range rows(t, doc, "norms") {
		s, ok := byStep[num(t, r["step"])]
		if !ok {
			continue
		}
		n++
		for key, c := range map[string]struct {
			name string
			f    float64
		}{"variance": {"var_norm", 1}, "h_minus1": {"hminus1_norm", l0}, "h_minus_half": {"hminushalf_norm", math.Sqrt(l0)}, "mix": {"mixnorm", 1}, "domain_length": {"domain_length", l0}} {
			e := relErr(num(t, r[key]), s[col[c.name]]*c.f)
			worst = math.Max(worst, e)
			if e > 1e-12 {
				t.Errorf("step %v: %s = %v, series %v", r["step"], key, r[key], s[col[c.name]]*c.f)
			}
		}
	}
	t.Logf("%d snapshots matched rows of series.csv; largest relative difference %.2g (tolerance 1e-12)", n, worst)
	if n < 3 {
		t.Errorf("only %d snapshot steps found in series.csv", n)
	}
}
