package fields

import (
	"fmt"
	"math"
	"math/cmplx"
)

// Limit names what set the step size.
type Limit int

const (
	LimitCeiling   Limit = iota // Stepping.DtMax
	LimitAdvection              // advective Courant number
	LimitRotation               // rotation of the angular modes
	LimitActive                 // linear active growth rate
	LimitFixed                  // Stepping.Fixed
	LimitRamp                   // rising back by one level per step
)

var limitNames = [...]string{"ceiling", "advection", "rotation", "active-rate", "fixed", "ramp"}

func (l Limit) String() string {
	if l < 0 || int(l) >= len(limitNames) {
		return fmt.Sprintf("Limit(%d)", int(l))
	}
	return limitNames[l]
}

// StepInfo describes one accepted step.
type StepInfo struct {
	Step    int     // number of steps taken, this one included
	Time    float64 // model time after the step, τ₀
	Dt      float64 // the step taken, τ₀
	Level   int     // its level on the ladder DtMax·2^(−Level/LevelsPerOctave)
	Limit   Limit   // what set it
	Allowed float64 // the largest step the limits allow (≥ Dt unless Fixed), τ₀
	FFTs    int     // FFTs executed by the step, not counting those inside a CompositionFlow

	// The work of the flow solves of a composition-dependent viscosity (all
	// zero otherwise): FlowSolves solves (4 when the flow is on),
	// FlowIterations iterations over all of them, FlowMaxIterations the
	// most of one, and FlowResidual the largest final relative residual
	// ‖Pf − Au‖/‖Pf‖. A VarSolver iteration costs 4 FFTs, and each solve
	// 8 more for its initial and final residual.
	FlowSolves, FlowIterations, FlowMaxIterations int
	FlowResidual                                  float64
}

// coef holds the ETDRK4 coefficients of one linear rate L for a step h
// [Cox & Matthews, J. Comput. Phys. 176, 430 (2002), eq. (26)]:
// e = e^{Lh}, e2 = e^{Lh/2}, q = (e^{Lh/2} − 1)/L and
//
//	f1 = h⁻²L⁻³[−4 − Lh + e^{Lh}(4 − 3Lh + L²h²)]
//	f2 = h⁻²L⁻³[2 + Lh + e^{Lh}(−2 + Lh)]
//	f3 = h⁻²L⁻³[−4 − 3Lh − L²h² + e^{Lh}(4 − Lh)].
type coef struct{ e, e2, q, f1, f2, f3 float64 }

// contourPoints is the number of points on the upper half of a circle
// around Lh over which the coefficients are averaged [Kassam & Trefethen,
// SIAM J. Sci. Comput. 26, 1214 (2005), who use 16 to 32]; for real L the
// real part of the mean over the upper half equals the mean over the
// whole circle.
const contourPoints = 32

// etdCoef returns the ETDRK4 coefficients of the rate l for the step h by
// the contour integral of Kassam & Trefethen, which avoids the
// cancellation of the closed forms for small |Lh|. Every node is kept at
// distance ≥ 1 from the origin, where the integrands cancel: the circle has
// radius 1 for |Lh| ≥ 2 (as in Kassam & Trefethen) and radius 3 for
// |Lh| < 2 (a radius-1 circle about Lh ≈ ±1 would pass next to 0 and lose
// about 10⁻¹³ relative). On a circle of radius 3 the trapezoid rule with
// 64 nodes of these entire functions errs by about 3⁶⁴/64! ≈ 10⁻⁵⁹.
func etdCoef(l, h float64) coef {
	z0 := l * h
	r := 1.0
	if math.Abs(z0) < 2 {
		r = 3
	}
	var q, f1, f2, f3 float64
	for j := 0; j < contourPoints; j++ {
		th := math.Pi * (float64(j) + 0.5) / contourPoints
		z := complex(z0+r*math.Cos(th), r*math.Sin(th))
		ez := cmplx.Exp(z)
		ez2 := cmplx.Exp(z / 2)
		z2 := z * z
		z3 := z2 * z
		q += real((ez2 - 1) / z)
		f1 += real((-4 - z + ez*(4-3*z+z2)) / z3)
		f2 += real((2 + z + ez*(z-2)) / z3)
		f3 += real((-4 - 3*z - z2 + ez*(4-z)) / z3)
	}
	s := h / contourPoints
	return coef{e: math.Exp(z0), e2: math.Exp(z0 / 2), q: s * q, f1: s * f1, f2: s * f2, f3: s * f3}
}

type coefSlot struct {
	level int
	used  uint64
	tab   [][]coef // per linear operator, per distinct kept k² (entry 0: zeros)
}

// Stepper advances a Model by the fourth-order exponential time-differencing
// Runge–Kutta scheme ETDRK4 [Cox & Matthews, J. Comput. Phys. 176, 430
// (2002)] with coefficients by contour integral [Kassam & Trefethen, SIAM J.
// Sci. Comput. 26, 1214 (2005)]: the diagonal stiff linear operators
// (diffusion, rotational diffusion, the Cahn–Hilliard k² and k⁴ terms) are
// integrated exactly and everything else explicitly. The step size comes
// from the limits of [Stepping] on a quantised ladder, so coefficients are
// recomputed only when the level changes to one not in the cache. The
// stepper owns all its scratch: Step allocates nothing (given a FlowSolver
// or CompositionFlow and a Source that allocate nothing).
//
// Only the modes the 2/3 rule keeps are updated; the others stay zero in
// the state and every stage buffer, so the state stays band-limited.
type Stepper struct {
	m               *Model
	s               Stepping
	nu, acc, sa, nb []complex128
	kIdx            []int32   // per spectral index: entry in the k² table, 0 if not kept
	k2              []float64 // distinct kept k² values (k2[0] unused)
	slots           []coefSlot
	clock           uint64
	level, nLevels  int
	recomputes      int
}

// NewStepper returns the stepper of m with the options in m.Params().Stepping.
func NewStepper(m *Model) *Stepper {
	s := &Stepper{m: m, s: m.p.Stepping}
	n := m.nf * m.stride
	s.nu, s.acc, s.sa, s.nb = make([]complex128, n), make([]complex128, n), make([]complex128, n), make([]complex128, n)
	g := m.g
	s.kIdx = make([]int32, m.n)
	s.k2 = []float64{0}
	seen := map[float64]int32{}
	for idx, k2 := range g.K2() {
		if !g.Kept(idx) {
			continue
		}
		e, ok := seen[k2]
		if !ok {
			e = int32(len(s.k2))
			seen[k2] = e
			s.k2 = append(s.k2, k2)
		}
		s.kIdx[idx] = e
	}
	lpo := float64(s.s.LevelsPerOctave)
	s.nLevels = int(math.Floor(lpo*math.Log2(s.s.DtMax/s.s.DtMin)+1e-9)) + 1
	s.slots = make([]coefSlot, s.s.CacheSize)
	for i := range s.slots {
		s.slots[i].level = -1
		s.slots[i].tab = make([][]coef, len(m.ops))
		for o := range s.slots[i].tab {
			s.slots[i].tab[o] = make([]coef, len(s.k2))
		}
	}
	return s
}

// LevelDt returns the step of ladder level j: DtMax·2^(−j/LevelsPerOctave).
func (s *Stepper) LevelDt(j int) float64 {
	return s.s.DtMax * math.Exp2(-float64(j)/float64(s.s.LevelsPerOctave))
}

// Level returns the current ladder level (the level of the last step).
func (s *Stepper) Level() int { return s.level }

// Levels returns the number of levels of the ladder, from DtMax (level 0)
// down to the last level not below DtMin.
func (s *Stepper) Levels() int { return s.nLevels }

// SetLevel sets the ladder level the next step starts from (to resume a run
// bit for bit). It panics outside [0, number of levels).
func (s *Stepper) SetLevel(j int) {
	if j < 0 || j >= s.nLevels {
		panic(fmt.Sprintf("fields: SetLevel(%d) outside [0, %d)", j, s.nLevels))
	}
	s.level = j
}

// Recomputes returns how many times coefficient tables have been computed.
func (s *Stepper) Recomputes() int { return s.recomputes }

// coefs returns the coefficient tables of level j, computing them into the
// least recently used slot if they are not cached.
func (s *Stepper) coefs(j int) [][]coef {
	s.clock++
	var lru *coefSlot
	for i := range s.slots {
		c := &s.slots[i]
		if c.level == j {
			c.used = s.clock
			return c.tab
		}
		if lru == nil || c.used < lru.used {
			lru = c
		}
	}
	h := s.LevelDt(j)
	for o, op := range s.m.ops {
		t := lru.tab[o]
		t[0] = coef{}
		for e := 1; e < len(t); e++ {
			t[e] = etdCoef(op.at(s.k2[e]), h)
		}
	}
	lru.level, lru.used = j, s.clock
	s.recomputes++
	return lru.tab
}

// allowed returns the largest step the limits allow and the binding limit.
func (s *Stepper) allowed(st rhsStats) (float64, Limit) {
	dt, lim := s.s.DtMax, LimitCeiling
	if st.speed > 0 {
		if d := s.s.Courant * s.m.g.MinSpacing() / st.speed; d < dt {
			dt, lim = d, LimitAdvection
		}
	}
	if st.rot > 0 {
		if d := s.s.RotationLimit / st.rot; d < dt {
			dt, lim = d, LimitRotation
		}
	}
	if a := s.m.activeS; a > 0 {
		if d := s.s.ActiveLimit / a; d < dt {
			dt, lim = d, LimitActive
		}
	}
	return dt, lim
}

// choose returns the level of the next step for the allowed step dt, or
// −1 if no level fits.
func (s *Stepper) choose(dt float64) int {
	if s.s.Fixed {
		return 0
	}
	j := s.level
	if s.LevelDt(j) > dt { // shrink to the largest level that fits
		for j < s.nLevels && s.LevelDt(j) > dt {
			j++
		}
		if j == s.nLevels {
			return -1
		}
		return j
	}
	// Grow by one level when it fits with a margin of half a level.
	margin := math.Exp2(0.5 / float64(s.s.LevelsPerOctave))
	if j > 0 && s.LevelDt(j-1)*margin <= dt {
		j--
	}
	return j
}

// Step advances the model by one ETDRK4 step and returns what it did. On
// error (a non-finite field, a step limit below the floor, or a failed
// flow solve, reported as a *FlowError naming the stage) the model is
// unchanged: its state, clock, flow warm start and the stepper's level.
func (s *Stepper) Step() (StepInfo, error) {
	m := s.m
	f0 := m.ffts
	u := m.state
	t := m.time
	m.work = flowWork{}
	if m.comp != nil {
		m.primeGuess()
	}
	st, err := m.rhs(s.nu, u, t, true)
	if err != nil {
		return StepInfo{}, flowStage(err, 1, s.LevelDt(s.level))
	}
	allowed, lim := s.allowed(st)
	j := s.choose(allowed)
	if j < 0 {
		return StepInfo{}, &StepError{Step: m.steps, Time: t, Dt: allowed, DtMin: s.LevelDt(s.nLevels - 1),
			Limit: lim, Speed: st.speed, RotMax: st.rot}
	}
	if s.s.Fixed {
		lim = LimitFixed
	} else if j > 0 && s.LevelDt(j-1) <= allowed {
		lim = LimitRamp
	}
	h := s.LevelDt(j)
	tab := s.coefs(j)

	// The state u is written only by the last stage, so that a failed
	// evaluation leaves it unchanged.
	s.combine(tab, stageA, u)
	if _, err := m.rhs(s.nb, s.sa, t+h/2, false); err != nil {
		return StepInfo{}, flowStage(err, 2, h)
	}
	s.combine(tab, stageB, u)
	if _, err := m.rhs(s.nb, s.sa, t+h/2, false); err != nil {
		return StepInfo{}, flowStage(err, 3, h)
	}
	s.combine(tab, stageC, u)
	if _, err := m.rhs(s.nb, s.sa, t+h, false); err != nil {
		return StepInfo{}, flowStage(err, 4, h)
	}
	s.combine(tab, stageD, u)

	s.level = j
	m.commitGuess()
	m.time = t + h
	m.steps++
	w := m.work
	return StepInfo{Step: m.steps, Time: m.time, Dt: h, Level: j, Limit: lim, Allowed: allowed, FFTs: int(m.ffts - f0),
		FlowSolves: w.solves, FlowIterations: w.iters, FlowMaxIterations: w.maxIters, FlowResidual: w.maxRes}, nil
}

// flowStage fills in the stage and step size of a *FlowError; other errors are
// returned unchanged.
func flowStage(err error, stage int, dt float64) error {
	if fe, ok := err.(*FlowError); ok {
		fe.Stage, fe.Dt = stage, dt
	}
	return err
}

type stage int

const (
	stageA stage = iota // sa = e2·u + q·Nu (= a);           acc = e·u + f1·Nu
	stageB              // sa = e2·u + q·Na (= b);           acc += 2f2·Na
	stageC              // sa = e2·a + q·(2Nb − Nu) (= c);   acc += 2f2·Nb, a recomputed from u, Nu
	stageD              // u = acc + f3·Nc
)

// combine applies one stage's pointwise update over every field, on the
// modes the 2/3 rule keeps only: the others are zero in the state and the
// stage buffers from construction on and are never written.
func (s *Stepper) combine(tab [][]coef, st stage, u []complex128) {
	m := s.m
	nk := m.g.Nkx()
	for f := 0; f < m.nf; f++ {
		t := tab[m.fieldOp[f]]
		for _, j := range m.rows {
			lo := f*m.stride + j*nk
			hi := lo + m.ncol
			kIdx := s.kIdx[j*nk : j*nk+m.ncol]
			uf, nu, acc, sa, nb := u[lo:hi], s.nu[lo:hi], s.acc[lo:hi], s.sa[lo:hi], s.nb[lo:hi]
			switch st {
			case stageA:
				for i, k := range kIdx {
					c := &t[k]
					x, n := uf[i], nu[i]
					sa[i] = complex(c.e2*real(x)+c.q*real(n), c.e2*imag(x)+c.q*imag(n))
					acc[i] = complex(c.e*real(x)+c.f1*real(n), c.e*imag(x)+c.f1*imag(n))
				}
			case stageB:
				for i, k := range kIdx {
					c := &t[k]
					x, n := uf[i], nb[i]
					sa[i] = complex(c.e2*real(x)+c.q*real(n), c.e2*imag(x)+c.q*imag(n))
					f2 := 2 * c.f2
					acc[i] += complex(f2*real(n), f2*imag(n))
				}
			case stageC:
				for i, k := range kIdx {
					c := &t[k]
					x, n, n0 := uf[i], nb[i], nu[i]
					ar, ai := c.e2*real(x)+c.q*real(n0), c.e2*imag(x)+c.q*imag(n0) // a, as in stage A
					r, im := 2*real(n)-real(n0), 2*imag(n)-imag(n0)
					sa[i] = complex(c.e2*ar+c.q*r, c.e2*ai+c.q*im)
					f2 := 2 * c.f2
					acc[i] += complex(f2*real(n), f2*imag(n))
				}
			case stageD:
				for i, k := range kIdx {
					c := &t[k]
					n := nb[i]
					uf[i] = acc[i] + complex(c.f3*real(n), c.f3*imag(n))
				}
			}
		}
	}
}
