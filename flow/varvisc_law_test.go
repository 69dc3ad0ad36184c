package flow_test

import (
	"math"
	"strings"
	"testing"

	"github.com/memix-sim/memix/flow"
)

// vvEps is the double-precision machine epsilon (spacing of floats at 1).
const vvEps = 0x1p-52

// TestViscosityLawValues checks the rules against their definitions
// (log-linear: Grunberg & Nissan, Nature 164, 799 (1949), form recalled
// from memory; linear: the arithmetic rule), evaluated here independently
// with math.Pow: η_A^{x_A} η_B^{x_B} and x_A η_A + x_B η_B, x_A = (1+φ)/2.
// Tolerance: the rule costs one log pair and one exp (log-linear), each
// within an ulp or so, amplified by |ln η| ≤ 3.5 for these values: 8ε
// relative; the linear rule is exact to 2ε.
func TestViscosityLawValues(t *testing.T) {
	const a, b = 7.5, 0.3
	logl := flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: a, PhaseB: b}
	lin := flow.ViscosityLaw{Rule: flow.LinearViscosity, PhaseA: a, PhaseB: b}
	for _, phi := range []float64{-1, -0.6, -0.1, 0, 0.25, 0.9, 1} {
		xa := (1 + phi) / 2
		wantLog := math.Pow(a, xa) * math.Pow(b, 1-xa)
		wantLin := xa*a + (1-xa)*b
		if got := logl.At(phi); math.Abs(got-wantLog) > 8*vvEps*wantLog {
			t.Errorf("log-linear η(%g) = %.17g, want %.17g", phi, got, wantLog)
		}
		if got := lin.At(phi); math.Abs(got-wantLin) > 2*vvEps*wantLin {
			t.Errorf("linear η(%g) = %.17g, want %.17g", phi, got, wantLin)
		}
	}
	// Equal fractions: geometric and arithmetic means of the phases.
	if got, want := logl.At(0), math.Sqrt(a*b); math.Abs(got-want) > 8*vvEps*want {
		t.Errorf("log-linear η(0) = %g, want sqrt(η_A η_B) = %g", got, want)
	}
	// Clamping: beyond the pure phases the value of the pure phase, exactly.
	for _, l := range []flow.ViscosityLaw{logl, lin} {
		if l.At(1.7) != l.At(1) || l.At(-4) != l.At(-1) {
			t.Errorf("%s: φ outside [−1, 1] not clamped", l.Rule)
		}
		if !math.IsNaN(l.At(math.NaN())) {
			t.Errorf("%s: NaN φ should give NaN", l.Rule)
		}
	}
	c := flow.ViscosityLaw{Rule: flow.ConstantViscosity, PhaseA: 2.5, PhaseB: 99}
	if c.At(-1) != 2.5 || c.At(0.3) != 2.5 || c.Contrast() != 1 {
		t.Errorf("constant rule: %g %g contrast %g", c.At(-1), c.At(0.3), c.Contrast())
	}
	if got := logl.Contrast(); math.Abs(got-a/b) > 2*vvEps*a/b {
		t.Errorf("contrast %g, want %g", got, a/b)
	}
}

// TestViscosityLawFill: Fill agrees with At bit for bit, works in place,
// and allocates nothing.
func TestViscosityLawFill(t *testing.T) {
	phi := []float64{-3, -1, -0.5, 0, 0.2, 1, 2, math.NaN()}
	for _, r := range []flow.ViscosityRule{flow.ConstantViscosity, flow.LogLinearViscosity, flow.LinearViscosity} {
		l := flow.ViscosityLaw{Rule: r, PhaseA: 0.4, PhaseB: 12}
		dst := make([]float64, len(phi))
		l.Fill(dst, phi)
		for i, p := range phi {
			w := l.At(p)
			if dst[i] != w && !(math.IsNaN(dst[i]) && math.IsNaN(w)) {
				t.Errorf("%s: Fill(%g) = %.17g, At = %.17g", r, p, dst[i], w)
			}
		}
		in := append([]float64(nil), phi...)
		l.Fill(in, in)
		for i := range in {
			if in[i] != dst[i] && !(math.IsNaN(in[i]) && math.IsNaN(dst[i])) {
				t.Errorf("%s: in-place Fill differs at %d", r, i)
			}
		}
		if n := testing.AllocsPerRun(10, func() { l.Fill(dst, phi) }); n != 0 {
			t.Errorf("%s: Fill allocates %v times", r, n)
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("Fill with mismatched lengths did not panic")
		}
	}()
	flow.ViscosityLaw{Rule: flow.LinearViscosity, PhaseA: 1, PhaseB: 2}.Fill(make([]float64, 2), phi)
}

func TestViscosityLawValidateAndParse(t *testing.T) {
	if err := (flow.ViscosityLaw{Rule: flow.LogLinearViscosity, PhaseA: 1, PhaseB: 3}).Validate(); err != nil {
		t.Error(err)
	}
	if err := (flow.ViscosityLaw{Rule: flow.ConstantViscosity, PhaseA: 1}).Validate(); err != nil {
		t.Errorf("constant rule needs no phase B: %v", err)
	}
	err := flow.ViscosityLaw{Rule: flow.LinearViscosity, PhaseA: -1, PhaseB: math.Inf(1)}.Validate()
	for _, want := range []string{"phase A membrane viscosity = -1", "phase B membrane viscosity = +Inf", "> 0"} {
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("Validate: %v, want mention of %q", err, want)
		}
	}
	if err := (flow.ViscosityLaw{Rule: 9, PhaseA: 1, PhaseB: 1}).Validate(); err == nil {
		t.Error("rule 9 accepted")
	}
	for _, r := range []flow.ViscosityRule{flow.ConstantViscosity, flow.LogLinearViscosity, flow.LinearViscosity} {
		got, err := flow.ParseViscosityRule(" " + strings.ToUpper(r.String()))
		if err != nil || got != r {
			t.Errorf("Parse(%q) = %v, %v", r, got, err)
		}
	}
	if _, err := flow.ParseViscosityRule("exponential"); err == nil || !strings.Contains(err.Error(), "log-linear") {
		t.Errorf("unknown rule: %v", err)
	}
}

func TestViscosityContrast(t *testing.T) {
	if c := flow.ViscosityContrast([]float64{2, 8, 0.5, 3}); c != 16 {
		t.Errorf("contrast %g, want 16", c)
	}
	if c := flow.ViscosityContrast([]float64{1, math.NaN()}); !math.IsNaN(c) {
		t.Errorf("NaN field: %g", c)
	}
	if c := flow.ViscosityContrast([]float64{0, 1}); !math.IsInf(c, 1) {
		t.Errorf("zero minimum: %g", c)
	}
	if c := flow.ViscosityContrast(nil); !math.IsNaN(c) {
		t.Errorf("empty field: %g", c)
	}
}
