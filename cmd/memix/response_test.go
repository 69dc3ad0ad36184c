package main

import (
	"encoding/csv"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/flow"
)

// responseRef reads testdata/response_ref.csv (generated with SciPy by
// testdata/response_ref.py): case → rows of x, 4πη_m G∥, 4πη_m G⊥.
func responseRef(t *testing.T) map[string][][3]float64 {
	t.Helper()
	f, err := os.Open("testdata/response_ref.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][][3]float64{}
	for _, r := range recs[1:] {
		var v [3]float64
		for i := range v {
			if v[i], err = strconv.ParseFloat(r[i+1], 64); err != nil {
				t.Fatal(err)
			}
		}
		out[r[0]] = append(out[r[0]], v)
	}
	return out
}

// TestResponseClosedForms checks the table against the closed forms of
// MODEL.md §1.1 evaluated with SciPy (testdata/response_ref.py): deep
// subphases (Struve and Neumann functions; the form of Levine &
// MacKintosh, Phys. Rev. E 66, 061606 (2002)) and friction alone (K₀, K₁).
// The response quadrature aims at 1e-12 of max(|G∥|, |G⊥|) and the
// reference values are good to about 1e-13 (see the script); 1e-10 leaves
// a factor of 100 over the quadrature's target (measured: 2e-14).
func TestResponseClosedForms(t *testing.T) {
	ref := responseRef(t)
	for _, tt := range []struct {
		name, yaml string
		length     float64 // r = x·length
	}{
		{"deep", "membrane: {viscosity: 1e-9 Pa*s*m}\nsubphase:\n  upper: {kind: deep, viscosity: 1 mPa*s}\n  lower: {kind: deep, viscosity: 1 mPa*s}\n", 1e-9 / 2e-3},
		{"friction", "membrane: {viscosity: 1e-9 Pa*s*m, friction: 1e6 Pa*s/m}\nsubphase:\n  upper: {kind: none}\n  lower: {kind: none}\n", math.Sqrt(1e-9 / 1e6)},
	} {
		p := writeFile(t, tt.yaml)
		lo, hi := strconv.FormatFloat(0.1*tt.length, 'g', -1, 64), strconv.FormatFloat(10*tt.length, 'g', -1, 64)
		doc := memixJSON(t, "response", p, "--rmin", lo, "--rmax", hi, "--points", "9")
		rs := rows(t, doc, "response")
		want := ref[tt.name]
		if len(rs) != len(want) {
			t.Fatalf("%s: %d rows, want %d", tt.name, len(rs), len(want))
		}
		worst := 0.0
		for i, r := range rs {
			x := num(t, r["r"]) / tt.length
			if relErr(x, want[i][0]) > 1e-14 {
				t.Fatalf("%s row %d: x = %v, reference at %v", tt.name, i, x, want[i][0])
			}
			par, perp := num(t, r["g_par_scaled"]), num(t, r["g_perp_scaled"])
			scale := math.Max(math.Abs(want[i][1]), math.Abs(want[i][2]))
			e := math.Max(math.Abs(par-want[i][1]), math.Abs(perp-want[i][2])) / scale
			worst = math.Max(worst, e)
			if e > 1e-10 {
				t.Errorf("%s at x = %.4g: 4πη_m G = (%.15g, %.15g), SciPy (%.15g, %.15g): error %.2g of max |G|", tt.name, x, par, perp, want[i][1], want[i][2], e)
			}
			// The SI columns are the scaled ones over 4πη_m.
			if g := num(t, r["g_par"]); relErr(g*4*math.Pi*1e-9, par) > 1e-15 {
				t.Errorf("%s: G∥ = %v, scaled %v", tt.name, g, par)
			}
		}
		t.Logf("%s: largest error against SciPy %.2g of max(|G∥|, |G⊥|) (tolerance 1e-10)", tt.name, worst)
	}
}

// TestResponseExamples: every example answers in each format, the
// default distances span the crossover length, and the numbers are the
// library's.
func TestResponseExamples(t *testing.T) {
	files, _ := filepath.Glob("../../examples/*.yaml")
	for _, f := range files {
		doc := memixJSON(t, "response", f, "--points", "5")
		c, _ := config.Load(f)
		m := c.FlowMembrane()
		l := m.CrossoverLength()
		rs := rows(t, doc, "response")
		if len(rs) != 5 || num(t, rs[0]["r"]) != l/100 || num(t, rs[4]["r"]) != 100*l {
			t.Fatalf("%s: distances %v, crossover %g", f, rs, l)
		}
		pts, err := m.ResponseTable([]float64{num(t, rs[2]["r"])})
		if err != nil || num(t, rs[2]["g_par"]) != pts[0].Par || num(t, rs[2]["g_perp"]) != pts[0].Perp {
			t.Errorf("%s: row %v, library %v (%v)", f, rs[2], pts, err)
		}
		out, _, code := memix(t, "response", f, "--points", "3", "--csv")
		if head := csvBlock(t, out, "response")[0]; code != 0 || strings.Join(head, ",") != "r [m],g_par [m/(N*s)],g_perp [m/(N*s)],g_par_scaled,g_perp_scaled" {
			t.Errorf("%s --csv: exit %d, header %q", f, code, head)
		}
		out, _, _ = memix(t, "response", f, "--points", "3")
		if !strings.Contains(out, "model predictions") || !strings.Contains(out, "µm/(pN·s)") {
			t.Errorf("%s: text\n%s", f, out)
		}
	}
}

// TestResponseFigures: --figures writes the response curves and the two
// flow maps, with --compare the second configuration's maps beside the
// first; the largest speeds are those of flow.FlowMap in the same units.
func TestResponseFigures(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "figs")
	small := writeFile(t, "membrane: {viscosity: 1e-9 Pa*s*m}\nsubphase:\n  lower: {kind: wall, depth: 100 nm}\ngrid: {n: 32, box: 4 um}\n")
	doc := memixJSON(t, "response", "../../examples/free-patch.yaml", "--compare", small, "--figures", dir, "--points", "4")
	widths := map[string]int{}
	for _, name := range []string{"response.png", "flow-point.png", "flow-dipole.png"} {
		f, err := os.Open(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		widths[name] = img.Bounds().Dx()
	}
	if widths["response.png"] != 800 || widths["flow-point.png"] != 1600 || widths["flow-dipole.png"] != 1600 {
		t.Errorf("widths %v: want one 800-pixel plot and two maps side by side", widths)
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) != 0 {
		t.Errorf("temporary files left: %v", left)
	}
	maps := rows(t, doc, "flow_maps")
	if len(maps) != 4 {
		t.Fatalf("flow maps %v", maps)
	}

	// The largest speed of the point force in the small box: an
	// independent solve in SI units (the command solves in µm, s, pN).
	c, _ := config.Load(small)
	g, m := mustGridMembrane(t, c)
	fm := flow.NewFlowMap(mustSolver(t, g, m), mustPlan(t, g))
	ux, uy := g.NewReal(), g.NewReal()
	h := 4e-6 / 32
	if err := fm.PointForce(ux, uy, nil, flow.PointForce{X: 2e-6, Y: 2e-6, Fx: 1e-12, Width: 2 * h}); err != nil {
		t.Fatal(err)
	}
	// The two unit systems round differently: agreement to a few ulps of
	// the FFTs' round-off (1e-15 × log N) is expected; 1e-12 is generous.
	checkRel(t, "largest speed of the point force", num(t, maps[2]["max_speed"]), maxHypot(ux, uy), 1e-12)
}

func TestResponseBad(t *testing.T) {
	p := writeFile(t, deepConfig)
	wantBad(t, []string{"response", p, "--rmin", "1 s"}, "--rmin", "wrong dimension")
	wantBad(t, []string{"response", p, "--rmin", "1um", "--rmax", "10nm"}, "--rmax", "> --rmin")
	wantBad(t, []string{"response", p, "--points", "1"}, "--points")
	wantBad(t, []string{"response", writeFile(t, "subphase:\n  upper: {kind: none}\n  lower: {kind: slip, depth: 1 um}\n")},
		"subphase.lower.kind", "membrane.friction > 0", "Stokes paradox")
	wantBad(t, []string{"response", p, "--compare", filepath.Join(t.TempDir(), "no.yaml")}, "no.yaml")
}
