package stability_test

import (
	"encoding/json"
	"github.com/memix-sim/memix/internal/refgen"
	"math"
	"os"
	"testing"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/stability"
)

// The reference values in testdata/reference.json come from
// testdata/gen_reference.py, run with the Debian /usr/bin/python3 (SciPy
// 1.10, NumPy 1.24): SciPy's bounded minimiser and brentq on the closed
// form, and NumPy eigenvalues of the complex kinetic operator built in the
// angular moments m_n (see the script's docstring).

const (
	refScript = "testdata/gen_reference.py"
	refFile   = "testdata/reference.json"
	python    = refgen.Python
)

type refSide struct {
	Kind      string  `json:"kind"`
	Viscosity float64 `json:"viscosity"`
	Depth     float64 `json:"depth"`
}

type refCase struct {
	Name     string `json:"name"`
	Membrane struct {
		Viscosity float64 `json:"viscosity"`
		Friction  float64 `json:"friction"`
		Upper     refSide `json:"upper"`
		Lower     refSide `json:"lower"`
	} `json:"membrane"`
	Stress      float64      `json:"stress"`
	Beta        float64      `json:"beta"`
	Dr          float64      `json:"dr"`
	Dt          float64      `json:"dt"`
	KMin        float64      `json:"kmin"`
	KMax        float64      `json:"kmax"`
	K           []float64    `json:"k"`
	SAct        []float64    `json:"s_act"`
	FastestK    float64      `json:"fastest_k"`
	FastestRate float64      `json:"fastest_rate"`
	Bands       [][2]float64 `json:"bands"`
	Critical    float64      `json:"critical_stress"`
	CriticalK   float64      `json:"critical_k"`
}

type refKinetic struct {
	Case  string    `json:"case"`
	Speed float64   `json:"speed"`
	Modes int       `json:"modes"`
	K     []float64 `json:"k"`
	Odd   []float64 `json:"odd"`
	Even  []float64 `json:"even"`
}

type reference struct {
	Cases   []refCase    `json:"cases"`
	Kinetic []refKinetic `json:"kinetic"`
}

func parseReference(t *testing.T, data []byte) reference {
	t.Helper()
	var r reference
	if err := json.Unmarshal(data, &r); err != nil {
		t.Fatalf("reference values: %v", err)
	}
	return r
}

func loadReference(t *testing.T) reference {
	t.Helper()
	data, err := os.ReadFile(refFile)
	if err != nil {
		t.Fatal(err)
	}
	return parseReference(t, data)
}

func (c refCase) params(t *testing.T) stability.Active {
	t.Helper()
	side := func(s refSide) flow.Subphase {
		k, err := flow.ParseSubphaseKind(s.Kind)
		if err != nil {
			t.Fatal(err)
		}
		return flow.Subphase{Kind: k, Viscosity: s.Viscosity, Depth: s.Depth}
	}
	return stability.Active{
		Membrane: flow.Membrane{
			Viscosity: c.Membrane.Viscosity, Friction: c.Membrane.Friction,
			Upper: side(c.Membrane.Upper), Lower: side(c.Membrane.Lower),
		},
		Stress: c.Stress, Alignment: c.Beta, RotDiff: c.Dr, TransDiff: c.Dt,
	}
}

// TestReferenceIsFresh re-runs the generator when SciPy is available and
// fails if its output differs from the committed file: a stale reference
// would let the tests check against numbers nobody can reproduce. Values
// are compared to 10⁻¹² relative (not bytes), which absorbs a different
// LAPACK build's last bits but not any change of inputs or method.
func TestReferenceIsFresh(t *testing.T) {
	fresh := parseReference(t, refgen.Run(t, refScript))
	var got, want []float64
	flatten := func(r reference) (v []float64) {
		for _, c := range r.Cases {
			v = append(v, c.Stress, c.Beta, c.Dr, c.Dt, c.KMin, c.KMax, c.FastestK, c.FastestRate, c.Critical, c.CriticalK, float64(len(c.Bands)))
			v = append(v, c.K...)
			v = append(v, c.SAct...)
			for _, b := range c.Bands {
				v = append(v, b[0], b[1])
			}
		}
		for _, k := range r.Kinetic {
			v = append(v, k.Speed, float64(k.Modes))
			v = append(v, k.K...)
			v = append(v, k.Odd...)
			v = append(v, k.Even...)
		}
		return v
	}
	got, want = flatten(fresh), flatten(loadReference(t))
	if len(got) != len(want) {
		t.Fatalf("%s is stale: regenerated output has %d values, committed %d; run %s %s > %s", refFile, len(got), len(want), python, refScript, refFile)
	}
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-12*math.Max(math.Abs(want[i]), 1) {
			t.Fatalf("%s is stale at value %d: regenerated %.17g, committed %.17g; run %s %s > %s", refFile, i, got[i], want[i], python, refScript, refFile)
		}
	}
}

// rateScale is the size of the largest term of s_act at k: the round-off
// of any evaluation of s_act is ε times this.
func rateScale(p stability.Active, k float64) float64 {
	return math.Abs(p.ActiveDrive(k)) + 4*p.RotDiff + p.TransDiff*k*k
}

// curvature returns |k² d²s/dk²| at k by a central difference in ln k with
// step h = 10⁻³ (its own error, O(h²) relative, is irrelevant for a
// tolerance estimate).
func curvature(rate func(float64) float64, k float64) float64 {
	const h = 1e-3
	a, b, c := rate(k*math.Exp(-h)), rate(k), rate(k*math.Exp(h))
	return math.Abs(a-2*b+c) / (h * h)
}

// TestClosedFormAgainstSciPy compares s_act, the fastest-growing mode, the
// unstable band and the critical activity on [kMin, kMax] with the SciPy
// values, for deep, wall, slip+deep+friction and no subphase.
//
// Tolerances: s_act is one formula evaluated twice, ε·scale round-off on
// each side (4ε·scale allowed). A maximum at K is flat, so each side
// resolves K only to δ = sqrt(2ε·scale/|k²s″|) relative (golden section
// here, SciPy's bounded Brent there); 10δ is allowed for K, and 8ε·scale
// for the rate there (s″δ²/2 = ε·scale per side). Band edges are simple
// roots bisected to round-off on both sides: ε·scale/|k s'| relative,
// times 16. The critical activity σ_c = −4 min g/β is a minimum value, so
// the flatness of g costs nothing: SciPy's min g carries ε-level error and
// the Go root is polished to 10⁻¹² relative; 4×10⁻¹² allowed.
func TestClosedFormAgainstSciPy(t *testing.T) {
	const eps = 0x1p-52
	for _, c := range loadReference(t).Cases {
		p := c.params(t)
		for i, k := range c.K {
			if d := math.Abs(p.Rate(k) - c.SAct[i]); d > 4*eps*rateScale(p, k) {
				t.Errorf("%s: s_act(%g) = %.17g, SciPy script %.17g", c.Name, k, p.Rate(k), c.SAct[i])
			}
		}
		pk, err := stability.Fastest(p.Rate, c.KMin, c.KMax)
		if err != nil {
			t.Fatal(err)
		}
		scale := rateScale(p, c.FastestK)
		delta := math.Sqrt(2 * eps * scale / curvature(p.Rate, c.FastestK))
		if pk.AtBound {
			delta = 0
		}
		if rel := math.Abs(pk.K-c.FastestK) / c.FastestK; rel > 10*delta {
			t.Errorf("%s: fastest k = %.12g, SciPy %.12g (rel %.2g > %.2g)", c.Name, pk.K, c.FastestK, rel, 10*delta)
		}
		if d := math.Abs(pk.Rate - c.FastestRate); d > 8*eps*scale {
			t.Errorf("%s: fastest rate %.17g, SciPy %.17g (|diff| %.2g)", c.Name, pk.Rate, c.FastestRate, d)
		}
		if pk.Wavelength != 2*math.Pi/pk.K {
			t.Errorf("%s: wavelength %g is not 2π/K", c.Name, pk.Wavelength)
		}
		bands, err := stability.UnstableBands(p.Rate, c.KMin, c.KMax)
		if err != nil {
			t.Fatal(err)
		}
		if len(bands) != len(c.Bands) {
			t.Fatalf("%s: bands %+v, SciPy %v", c.Name, bands, c.Bands)
		}
		for i, b := range bands {
			for j, got := range []float64{b.KLo, b.KHi} {
				want := c.Bands[i][j]
				slope := math.Abs(p.Rate(want*(1+1e-6))-p.Rate(want*(1-1e-6))) / 2e-6
				tol := 16 * eps * rateScale(p, want) / slope
				if open := []bool{b.LoOpen, b.HiOpen}[j]; open {
					tol = 0 // an open end is the interval bound itself
				}
				if rel := math.Abs(got-want) / want; rel > tol {
					t.Errorf("%s: band %d edge %d = %.17g, SciPy %.17g (rel %.2g > %.2g)", c.Name, i, j, got, want, rel, tol)
				}
			}
		}
		cr, err := p.CriticalStress(c.KMin, c.KMax)
		if err != nil {
			t.Fatal(err)
		}
		if rel := math.Abs(cr.Stress-c.Critical) / math.Abs(c.Critical); rel > 4e-12 {
			t.Errorf("%s: critical σ₀c₀ = %.15g, SciPy %.15g (rel %.2g)", c.Name, cr.Stress, c.Critical, rel)
		}
		g := func(k float64) float64 { // marginal activity, minimised at the critical k
			return -(4*p.RotDiff + p.TransDiff*k*k) * p.Membrane.D(k) / (k * k)
		}
		kd := math.Sqrt(2 * eps / curvature(g, c.CriticalK) * math.Abs(g(c.CriticalK)))
		if cr.Peak.AtBound {
			kd = 0
		}
		if rel := math.Abs(cr.Peak.K-c.CriticalK) / c.CriticalK; rel > 10*kd {
			t.Errorf("%s: first unstable k = %.12g, SciPy %.12g (rel %.2g)", c.Name, cr.Peak.K, c.CriticalK, rel)
		}
		t.Logf("%s: fastest k %.10g (SciPy %.10g, rel %.2g, tol %.2g), rate %.12g (|diff| %.2g, tol %.2g); %d bands; σ_c %.12g (SciPy %.12g, rel %.2g) at k %.8g (rel %.2g, tol %.2g)",
			c.Name, pk.K, c.FastestK, math.Abs(pk.K-c.FastestK)/c.FastestK, 10*delta, pk.Rate, math.Abs(pk.Rate-c.FastestRate), 8*eps*scale,
			len(bands), cr.Stress, c.Critical, math.Abs(cr.Stress-c.Critical)/math.Abs(c.Critical), cr.Peak.K, math.Abs(cr.Peak.K-c.CriticalK)/c.CriticalK, 10*kd)
	}
}

// TestKineticAgainstNumPy compares the leading rates of both mirror sectors
// at V₀ ≠ 0 with NumPy's eigenvalues of the complex operator in m_n built
// by the generator (M = 64). The Go side builds the real sector matrices of
// kinetic.go, an independent route from the same mode equations. The
// leading eigenvalues are well separated and well conditioned: the
// difference is eigenvalue round-off, ε·‖A‖ with ‖A‖ ≈ M²D_r ≈ 4×10³ D_r
// (≈ 10⁻¹² D_r); 10⁻¹¹·(|s| + D_r) is allowed. The converged rates of
// Rates must agree to its tolerance plus that.
func TestKineticAgainstNumPy(t *testing.T) {
	ref := loadReference(t)
	cases := map[string]refCase{}
	for _, c := range ref.Cases {
		cases[c.Name] = c
	}
	for _, r := range ref.Kinetic {
		p := cases[r.Case].params(t)
		p.Speed = r.Speed
		o, err := stability.NewKinetic(p, r.Modes)
		if err != nil {
			t.Fatal(err)
		}
		ev := make([]complex128, 2*r.Modes+1)
		auto := make([]float64, len(r.K))
		conv, err := stability.Rates(auto, p, r.K, 0)
		if err != nil {
			t.Fatal(err)
		}
		for i, k := range r.K {
			o.Eigenvalues(ev, k)
			odd, even := math.Inf(-1), math.Inf(-1)
			for j, z := range ev {
				if j < r.Modes {
					odd = math.Max(odd, real(z))
				} else {
					even = math.Max(even, real(z))
				}
			}
			tol := 1e-13 * (math.Abs(r.Odd[i]) + p.RotDiff)
			if d := math.Abs(odd - r.Odd[i]); d > tol {
				t.Errorf("%s V₀ = %g k = %g: odd-sector rate %.15g, NumPy %.15g (|diff| %.2g)", r.Case, r.Speed, k, odd, r.Odd[i], d)
			}
			if d := math.Abs(o.Rate(k) - odd); d != 0 {
				t.Errorf("Rate(%g) = %.17g differs from the odd sector of Eigenvalues %.17g", k, o.Rate(k), odd)
			}
			if d := math.Abs(even - r.Even[i]); d > 1e-13*(math.Abs(r.Even[i])+p.RotDiff) {
				t.Errorf("%s V₀ = %g k = %g: even-sector rate %.15g, NumPy %.15g (|diff| %.2g)", r.Case, r.Speed, k, even, r.Even[i], d)
			}
			if d := math.Abs(auto[i] - r.Odd[i]); d > stability.DefaultTol*(math.Abs(auto[i])+p.RotDiff)+tol {
				t.Errorf("%s V₀ = %g k = %g: converged rate (M = %d) %.15g, NumPy (M = 64) %.15g", r.Case, r.Speed, k, conv.Modes, auto[i], r.Odd[i])
			}
		}
		t.Logf("%s V₀ = %g: Rates converged at M = %d, last change %.2g", r.Case, r.Speed, conv.Modes, conv.Change)
	}
}
