package flow_test

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"github.com/memix-sim/memix/internal/refgen"
	"math"
	"os"
	"strconv"
	"testing"

	"github.com/memix-sim/memix/flow"
)

// responseCases mirrors CASES in testdata/gen_response.py.
var responseCases = map[string]flow.Membrane{
	"deep":      {Viscosity: 1, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}, Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}},
	"friction":  {Viscosity: 1, Friction: 1},
	"wall":      {Viscosity: 1, Lower: flow.Subphase{Kind: flow.Wall, Viscosity: 1, Depth: 0.2}},
	"slip+deep": {Viscosity: 1, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 1}, Lower: flow.Subphase{Kind: flow.Slip, Viscosity: 1, Depth: 2}},
	"mixed":     {Viscosity: 1, Friction: 0.3, Upper: flow.Subphase{Kind: flow.Wall, Viscosity: 2, Depth: 1}, Lower: flow.Subphase{Kind: flow.Deep, Viscosity: 0.5}},
}

type responseRow struct {
	cas, method       string
	r, par, perp, err float64
}

func readResponseTable(t *testing.T, data []byte) []responseRow {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(data)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) < 2 || fmt.Sprint(recs[0]) != "[case method r par perp err]" {
		t.Fatalf("response table header %v", recs[0])
	}
	var rows []responseRow
	for _, rec := range recs[1:] {
		row := responseRow{cas: rec[0], method: rec[1]}
		for i, p := range []*float64{&row.r, &row.par, &row.perp, &row.err} {
			if *p, err = strconv.ParseFloat(rec[2+i], 64); err != nil {
				t.Fatal(err)
			}
		}
		rows = append(rows, row)
	}
	return rows
}

// goResponseTol is the accuracy the Go response is held to, relative to
// max(|4πη_m G∥|, |4πη_m G⊥|): the quadrature aims at 1e−12 of that scale
// (flow.responseTol). Observed (see the log): at most 1.7e−13 against the
// closed forms, so 1e−12 is a safety factor of about 6; against the SciPy
// Hankel rows up to 3.9e−12, which those rows' own error estimates cover
// (the SciPy J1′ form loses digits to cancellation at large r).
const goResponseTol = 1e-12

// TestResponseAgainstReferences compares Membrane.Response with the
// committed SciPy table (testdata/response.csv, generator beside it):
// closed forms for deep subphases [MODEL.md §1.1, derived; same form as
// Levine & MacKintosh, Phys. Rev. E 66, 061606 (2002) and Oppenheimer &
// Diamant, Biophys. J. 96, 3041 (2009)] and for friction [MODEL.md §1.1,
// derived], and a direct numerical Hankel quadrature in SciPy for wall,
// slip+deep and mixed membranes where no closed form exists. Tolerance:
// the reference's own error estimate plus goResponseTol of the scale.
func TestResponseAgainstReferences(t *testing.T) {
	data, err := os.ReadFile("testdata/response.csv")
	if err != nil {
		t.Fatal(err)
	}
	worst := map[string]float64{}
	for _, row := range readResponseTable(t, data) {
		m, ok := responseCases[row.cas]
		if !ok {
			t.Fatalf("unknown case %q in the table", row.cas)
		}
		par, perp, err := m.Response(row.r)
		if err != nil {
			t.Fatalf("%s r=%g: %v", row.cas, row.r, err)
		}
		s := 4 * math.Pi * m.Viscosity
		par, perp = s*par, s*perp
		scale := math.Max(math.Abs(row.par), math.Abs(row.perp))
		e := math.Max(math.Abs(par-row.par), math.Abs(perp-row.perp))
		key := row.cas + "/" + row.method
		worst[key] = math.Max(worst[key], e/scale)
		if tol := row.err + goResponseTol*scale; e > tol {
			t.Errorf("%s %s r=%g: 4πη_m(G∥, G⊥) = (%.16g, %.16g), reference (%.16g, %.16g): error %.3g > %.3g",
				row.cas, row.method, row.r, par, perp, row.par, row.perp, e, tol)
		}
	}
	for k, v := range worst {
		t.Logf("%-20s largest error / scale = %.2g", k, v)
	}
}

// TestResponseTableIsCurrent re-runs the generator with the Debian SciPy
// and fails if the committed table differs from its output by more than
// the two error estimates (a stale table). It skips when /usr/bin/python3
// with SciPy is missing.
func TestResponseTableIsCurrent(t *testing.T) {
	py := refgen.Python
	out := refgen.Run(t, "testdata/gen_response.py")
	data, err := os.ReadFile("testdata/response.csv")
	if err != nil {
		t.Fatal(err)
	}
	fresh, committed := readResponseTable(t, out), readResponseTable(t, data)
	if len(fresh) != len(committed) {
		t.Fatalf("table is stale: generator gives %d rows, committed %d; regenerate with %s testdata/gen_response.py > testdata/response.csv", len(fresh), len(committed), py)
	}
	for i, a := range fresh {
		b := committed[i]
		tol := a.err + b.err
		if a.cas != b.cas || a.method != b.method || math.Abs(a.r-b.r) > 1e-14*a.r ||
			math.Abs(a.par-b.par) > tol || math.Abs(a.perp-b.perp) > tol {
			t.Fatalf("table is stale at row %d: generator %+v, committed %+v; regenerate it", i+1, a, b)
		}
	}
}

// TestResponseLimits checks the asymptotes of MODEL.md §1.1 beyond the
// table's range and independently of it:
//   - small x, deep: 2D Stokeslet 4πη_m G∥ ≈ ln(2/x) − γ + 1/2 and
//     4πη_m G⊥ ≈ ln(2/x) − γ − 1/2 [derived from the closed form; the next
//     terms are O(x ln x), so the tolerance is 2x(|ln x| + 1)];
//   - large x, deep: G∥ → 1/(2π η_s r) [MODEL.md], with relative correction
//     O(1/x) (next term of the closed form: −1/x², i.e. relative 1/x),
//     tolerance 2/x relative; G⊥ ∝ 1/r² (below);
//   - large x, friction: potential dipole G∥ = −G⊥ = 1/(2πξr²) up to
//     exponentially small K-terms, tolerance goResponseTol.
func TestResponseLimits(t *testing.T) {
	deep := responseCases["deep"] // L_SD = 1, η_s = 1
	for _, x := range []float64{1e-6, 1e-5, 1e-4} {
		par, perp, err := deep.Response(x)
		if err != nil {
			t.Fatal(err)
		}
		s := 4 * math.Pi
		stokes := math.Log(2/x) - 0.5772156649015329
		tol := 2 * x * (math.Abs(math.Log(x)) + 1)
		if d := math.Abs(s*par - (stokes + 0.5)); d > tol {
			t.Errorf("deep x=%g: 4πη_m G∥ = %.12g, Stokeslet %.12g: |diff| %.2g > %.2g", x, s*par, stokes+0.5, d, tol)
		}
		if d := math.Abs(s*perp - (stokes - 0.5)); d > tol {
			t.Errorf("deep x=%g: 4πη_m G⊥ = %.12g, Stokeslet %.12g: |diff| %.2g > %.2g", x, s*perp, stokes-0.5, d, tol)
		}
	}
	for _, x := range []float64{3e3, 1e4} {
		par, perp, err := deep.Response(x)
		if err != nil {
			t.Fatal(err)
		}
		want := 1 / (2 * math.Pi * 1 * x)
		if d := math.Abs(par/want - 1); d > 2/x {
			t.Errorf("deep x=%g: G∥ = %g, far field 1/(2π η_s r) = %g: relative diff %.2g > %.2g", x, par, want, d, 2/x)
		}
		// G⊥ ∝ 1/r² [MODEL.md]; the coefficient η_m/(2π η_s² r²) and the
		// relative correction −2/x come from the large-x expansion of the
		// closed form, 4πη_m G⊥ = 2/x² − 4/x³ + … [derived]; tolerance 3/x.
		wantPerp := deep.Viscosity / (2 * math.Pi * x * x)
		if d := math.Abs(perp/wantPerp - 1); d > 3/x {
			t.Errorf("deep x=%g: G⊥ = %g, far field η_m/(2π η_s² r²) = %g: relative diff %.2g > %.2g", x, perp, wantPerp, d, 3/x)
		}
	}
	fr := responseCases["friction"]
	for _, x := range []float64{50, 200} {
		par, perp, err := fr.Response(x)
		if err != nil {
			t.Fatal(err)
		}
		want := 1 / (2 * math.Pi * fr.Friction * x * x)
		if math.Abs(par-want) > goResponseTol*want || math.Abs(perp+want) > goResponseTol*want {
			t.Errorf("friction x=%g: (G∥, G⊥) = (%g, %g), potential dipole ±%g", x, par, perp, want)
		}
	}
}

// TestSmoothedResponseLimits: a Gaussian of width w looks like a point
// force far away: the smoothing changes G by the relative amount
// O((w/r)²) (the second moment of the Gaussian acting on ∇²G), so at
// r = 30w the difference must be below 10(w/r)²·|G|; and for w → 0 the
// smoothed response tends to the point response.
func TestSmoothedResponseLimits(t *testing.T) {
	for name, m := range responseCases {
		for _, r := range []float64{0.3, 3} {
			p0, q0, err := m.Response(r)
			if err != nil {
				t.Fatal(err)
			}
			w := r / 30
			p1, q1, err := m.SmoothedResponse(r, w)
			if err != nil {
				t.Fatal(err)
			}
			scale := math.Max(math.Abs(p0), math.Abs(q0))
			if d := math.Max(math.Abs(p1-p0), math.Abs(q1-q0)); d > 10*(w/r)*(w/r)*scale {
				t.Errorf("%s r=%g w=%g: smoothed differs by %.3g, more than 10(w/r)²|G| = %.3g", name, r, w, d, 10*(w/r)*(w/r)*scale)
			}
			p2, q2, _ := m.SmoothedResponse(r, 1e-9*r)
			if d := math.Max(math.Abs(p2-p0), math.Abs(q2-q0)); d > goResponseTol*scale {
				t.Errorf("%s r=%g: width 1e-9 r differs from the point response by %.3g", name, r, d)
			}
		}
	}
}

// TestResponseErrors: the Stokes paradox and bad arguments give clear
// errors.
func TestResponseErrors(t *testing.T) {
	for name, m := range map[string]flow.Membrane{
		"bare":      {Viscosity: 1},
		"slip only": {Viscosity: 1, Upper: flow.Subphase{Kind: flow.Slip, Viscosity: 1, Depth: 1}},
	} {
		if _, _, err := m.Response(1); !errors.Is(err, flow.ErrNoPlaneResponse) {
			t.Errorf("%s: error %v, want ErrNoPlaneResponse", name, err)
		} else {
			t.Logf("%s: %v", name, err)
		}
	}
	m := responseCases["deep"]
	for _, c := range []struct{ r, w float64 }{{0, 0}, {-1, 0}, {math.Inf(1), 0}, {math.NaN(), 0}, {1, -1}, {1, math.NaN()}} {
		if _, _, err := m.SmoothedResponse(c.r, c.w); err == nil {
			t.Errorf("SmoothedResponse(%g, %g) gave no error", c.r, c.w)
		}
	}
	if _, _, err := (flow.Membrane{Viscosity: -1, Friction: 1}).Response(1); err == nil {
		t.Error("invalid membrane gave no error")
	}
}

// TestDPrime compares the analytic dD/dk with a central difference of step
// h = 1e−5·max(k, 1): its error is h²|D‴|/6 (below 1e−9 of |D′| here) plus
// the rounding 2eps·|D|/h, so the tolerance is 1e−8·|D′| + 10eps·|D|/h.
func TestDPrime(t *testing.T) {
	for name, m := range responseCases {
		for _, k := range []float64{1e-4, 1e-2, 0.3, 2, 15, 40, 300} {
			h := 1e-5 * math.Max(k, 1)
			fd := (m.D(k+h) - m.D(k-h)) / (2 * h)
			if got := m.DPrime(k); math.Abs(got-fd) > 1e-8*math.Abs(fd)+10*eps*m.D(k)/h {
				t.Errorf("%s k=%g: DPrime %.12g, central difference %.12g", name, k, got, fd)
			}
		}
	}
}

// TestCrossoverLength: L_SD = η_m/(η₊+η₋) for deep subphases and
// sqrt(η_m/ξ) for friction (MODEL.md §1), to bisection accuracy.
func TestCrossoverLength(t *testing.T) {
	for _, c := range []struct {
		m    flow.Membrane
		want float64
	}{
		{responseCases["deep"], responseCases["deep"].SaffmanDelbruck()},
		{flow.Membrane{Viscosity: 3, Friction: 12}, 0.5},
		{flow.Membrane{Viscosity: 2, Upper: flow.Subphase{Kind: flow.Deep, Viscosity: 0.1}}, 20},
	} {
		if got := c.m.CrossoverLength(); math.Abs(got-c.want) > 1e-13*c.want {
			t.Errorf("CrossoverLength = %.15g, want %.15g", got, c.want)
		}
	}
	if got := (flow.Membrane{Viscosity: 1}).CrossoverLength(); !math.IsInf(got, 1) {
		t.Errorf("bare membrane CrossoverLength = %g, want +Inf", got)
	}
	thin := flow.Membrane{Viscosity: 1, Upper: flow.Subphase{Kind: flow.Slip, Viscosity: 1, Depth: 0.5}}
	if got := thin.CrossoverLength(); !math.IsInf(got, 1) {
		t.Errorf("thin slip layer (ηH/η_m = 0.5) CrossoverLength = %g, want +Inf", got)
	}
	// A thick slip layer, ηH/η_m = 4: η_m k² = η k tanh(kH) at k_c,
	// checked through the defining equation.
	thick := flow.Membrane{Viscosity: 1, Upper: flow.Subphase{Kind: flow.Slip, Viscosity: 2, Depth: 2}}
	kc := 1 / thick.CrossoverLength()
	if d := thick.Viscosity*kc*kc - thick.Upper.Gamma(kc); math.Abs(d) > 1e-13*thick.Upper.Gamma(kc) {
		t.Errorf("thick slip: η_m k_c² − Γ(k_c) = %g at k_c = %g", d, kc)
	}
}

func TestResponseTableAndLogSpaced(t *testing.T) {
	rs, err := flow.LogSpaced(0.01, 100, 5)
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []float64{0.01, 0.1, 1, 10, 100} {
		if math.Abs(rs[i]-want) > 4*eps*want {
			t.Errorf("LogSpaced[%d] = %.17g, want %g", i, rs[i], want)
		}
	}
	m := responseCases["mixed"]
	tab, err := m.ResponseTable(rs)
	if err != nil {
		t.Fatal(err)
	}
	for i, p := range tab {
		par, perp, _ := m.Response(rs[i])
		if p.R != rs[i] || p.Par != par || p.Perp != perp || p.ParScaled != 4*math.Pi*m.Viscosity*par {
			t.Errorf("row %d = %+v, Response gives %g, %g", i, p, par, perp)
		}
	}
	for _, c := range []struct {
		lo, hi float64
		n      int
	}{{0, 1, 3}, {1, 1, 3}, {1, 2, 1}, {-1, 2, 4}} {
		if _, err := flow.LogSpaced(c.lo, c.hi, c.n); err == nil {
			t.Errorf("LogSpaced(%g, %g, %d) gave no error", c.lo, c.hi, c.n)
		}
	}
	if _, err := (flow.Membrane{Viscosity: 1}).ResponseTable(rs); !errors.Is(err, flow.ErrNoPlaneResponse) {
		t.Errorf("ResponseTable of a bare membrane: %v", err)
	}
}

// TestResponseAllocatesNothing: a response evaluation allocates nothing
// (the quadrature keeps its state on the stack).
func TestResponseAllocatesNothing(t *testing.T) {
	m := responseCases["mixed"]
	if n := testing.AllocsPerRun(5, func() { _, _, _ = m.Response(2.5) }); n != 0 {
		t.Errorf("Response allocates %v times per call", n)
	}
}
