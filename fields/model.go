package fields

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// FlowSolver maps a force density to the membrane velocity for a uniform
// membrane viscosity, both as box-normalised spectral coefficients.
// [flow.Solver] is one. Solve must allow ux to alias fx and uy to alias
// fy, and must not allocate if the model's steps are to allocate nothing.
// A viscosity that depends on the composition needs a [CompositionFlow]
// instead.
type FlowSolver interface {
	Solve(ux, uy, fx, fy []complex128)
}

// Source adds a prescribed term S(x, t) to the right-hand sides of the
// evolved fields: ∂t u = L u + N(u) + S(t). It serves verification by
// manufactured solutions and external forcing. AddSource adds, for every
// evolved field f (in [Model.FieldNames] order), the box-normalised
// coefficients of S_f at time t to rhs[f]. It is called four times per
// step (at the ETDRK4 stage times t, t+dt/2, t+dt/2, t+dt) and must not
// retain rhs. Modes beyond the 2/3 dealiasing limit are discarded.
type Source interface {
	AddSource(rhs [][]complex128, t float64)
}

// Reduced unit labels of the real-space views, for the output writers.
const (
	UnitDensity  = "c0"      // inclusion number density, in units of the mean c₀
	UnitVelocity = "l0/tau0" // velocity
	UnitRate     = "1/tau0"  // vorticity, rates
	UnitNone     = "1"       // dimensionless (composition φ)
)

// linOp is the diagonal stiff linear operator L(k²) = a k² + b k⁴ + d.
type linOp struct{ a, b, d float64 }

func (o linOp) at(k2 float64) float64 { return o.a*k2 + o.b*k2*k2 + o.d }

// Model is the state of the inclusions and lipid composition, as spectral
// coefficients, together with the scratch needed to evaluate the
// right-hand sides of their equations. Construct it with [NewModel]; it
// starts in the uniform isotropic state c = 1, φ = 0. A Model is not safe
// for concurrent use.
type Model struct {
	p      Params
	g      *spectral.Grid
	plan   spectral.Plan
	flow   FlowSolver        // uniform viscosity (nil with comp)
	comp   CompositionFlow   // composition-dependent viscosity (nil otherwise)
	budget *flow.PowerBudget // dissipation for a uniform viscosity
	nf     int               // evolved (real) fields
	n      int               // spectral length
	stride int               // spacing of fields in a state vector (n rounded up to 64 bytes)

	names, units []string
	ops          []linOp // distinct linear operators
	fieldOp      []int   // operator index of each field

	state  []complex128   // nf·stride
	views  [][]complex128 // field views of state
	time   float64
	steps  int
	source Source
	ffts   int64

	// Field indices; −1 when absent.
	iC, iQ11, iQ12, iPhi int
	harm                 int     // highest angular harmonic (kinetic M, 2 for moments, 0 without inclusions)
	qScale               float64 // Q₁₁ = qScale·field[iQ11]: 1 for moments, ½ for kinetic (a₂/2)

	// What the right-hand side needs.
	flowOn  bool // the flow can be non-zero
	drift   bool // partition drift D_tχ∇φ
	needE   bool // strain rate needed (β ≠ 0)
	incReal bool // inclusion fields needed in real space
	phiReal bool // φ needed in real space
	activeS float64

	// Scratch, all allocated here.
	rf                      [][]float64 // real-space copies of the evolved fields
	ux, uy, w, e11, e12     []float64
	vx, vy                  []float64 // velocity carrying the inclusions (u + drift)
	t1, t2, t3, t4, t5, t6  []float64
	s1, s2, s3, s4, s5      []complex128
	cube                    []complex128 // (φ³)^
	zero                    []float64    // a real field of zeros, never written
	rows                    []int        // spectral rows with modes the 2/3 rule keeps
	ncol                    int          // columns 0 … ncol−1 are kept in those rows
	rhsViews                [][]complex128
	dfx, dfy, dkx, dky      []complex128
	dux, duy                []complex128
	viewData                [][]float64
	viewList                []View
	viewQ11, viewQ12        int // index into viewList of Q₁₁, Q₁₂ (−1 if absent)
	viewUx, viewUy, viewVor int

	// Composition-dependent viscosity: the solver work of the current step,
	// the velocity the first solve of the next step starts from (the last
	// solve of the previous step) and the velocity of the latest solve,
	// which becomes the warm start when its step succeeds.
	work               flowWork
	warmX, warmY       []complex128
	pendX, pendY       []complex128
	haveWarm, havePend bool
}

// flowWork accumulates the work of composition-dependent flow solves.
type flowWork struct {
	solves, iters, maxIters int
	maxRes                  float64
}

func (w *flowWork) add(r flow.PCGResult) {
	w.solves++
	w.iters += r.Iterations
	w.maxIters = max(w.maxIters, r.Iterations)
	w.maxRes = math.Max(w.maxRes, r.Residual)
}

// NewModel returns the model of p on the grid of plan. With a uniform
// viscosity (p.Viscosity zero) the flow is solved by fs, or by a
// [flow.Solver] for p.Membrane when fs is nil. With a composition-dependent
// viscosity fs must be nil, and the flow is solved by a [ViscosityFlow] for
// p.Membrane, p.Viscosity and p.Solver on plan (see [NewCompositionModel]
// to supply another solver). The plan's grid must match p.Grid. It returns
// an error if p is invalid.
func NewModel(p Params, plan spectral.Plan, fs FlowSolver) (*Model, error) {
	if err := checkModel(p, plan); err != nil {
		return nil, err
	}
	if !p.VariableViscosity() {
		return newModel(p, plan, fs, nil)
	}
	if fs != nil {
		return nil, fmt.Errorf("fields: NewModel was given a uniform-viscosity FlowSolver for the %v viscosity rule of Params.Viscosity: pass nil, or a CompositionFlow to NewCompositionModel", p.Viscosity.Rule)
	}
	cf, err := NewViscosityFlow(plan, p.Membrane, p.Viscosity, p.Solver)
	if err != nil {
		return nil, err
	}
	return newModel(p, plan, nil, cf)
}

// NewCompositionModel returns the model of p, whose viscosity must depend
// on the composition (p.Viscosity.Rule not constant), with the flow solved
// by cf; p.Viscosity still sets the step-size limit of the active growth
// rate (through its smaller phase viscosity). A nil cf is the
// [ViscosityFlow] NewModel would build. The plan's grid must match p.Grid.
// It returns an error if p is invalid.
func NewCompositionModel(p Params, plan spectral.Plan, cf CompositionFlow) (*Model, error) {
	if err := checkModel(p, plan); err != nil {
		return nil, err
	}
	if !p.VariableViscosity() {
		return nil, fmt.Errorf("fields: NewCompositionModel needs a composition-dependent viscosity (Params.Viscosity.Rule is %v); use NewModel", p.Viscosity.Rule)
	}
	if cf == nil {
		return NewModel(p, plan, nil)
	}
	return newModel(p, plan, nil, cf)
}

// checkModel validates p and checks the plan's grid against it.
func checkModel(p Params, plan spectral.Plan) error {
	if err := p.Validate(); err != nil {
		return err
	}
	g := plan.Grid()
	if gs := p.Grid; g.Nx != gs.Nx || g.Ny != gs.Ny || g.Lx != gs.Lx || g.Ly != gs.Ly {
		return fmt.Errorf("fields: plan grid %v does not match Params.Grid %d×%d on %g×%g", g, gs.Nx, gs.Ny, gs.Lx, gs.Ly)
	}
	return nil
}

// newModel builds the model of the valid p with either the uniform solver
// fs (nil: a flow.Solver for p.Membrane) or the composition-dependent cf.
func newModel(p Params, plan spectral.Plan, fs FlowSolver, cf CompositionFlow) (*Model, error) {
	g := plan.Grid()
	var budget *flow.PowerBudget
	if cf == nil {
		s, err := flow.NewSolver(g, p.Membrane)
		if err != nil {
			return nil, err
		}
		if fs == nil {
			fs = s
		}
		// The dissipation of a uniform viscosity is that of p.Membrane,
		// whichever solver computes the flow.
		budget = flow.NewPowerBudget(s)
	}
	m := &Model{p: p, g: g, plan: plan, flow: fs, comp: cf, budget: budget, n: g.SpecLen(), iC: -1, iQ11: -1, iQ12: -1, iPhi: -1}
	m.stride = (m.n + 3) &^ 3
	in, l := p.Inclusions, p.Lipid

	addOp := func(o linOp) int {
		for i, q := range m.ops {
			if q == o {
				return i
			}
		}
		m.ops = append(m.ops, o)
		return len(m.ops) - 1
	}
	addField := func(name, unit string, o linOp) int {
		m.names = append(m.names, name)
		m.units = append(m.units, unit)
		m.fieldOp = append(m.fieldOp, addOp(o))
		return len(m.names) - 1
	}
	switch in.Model {
	case Moments:
		m.iC = addField("c", UnitDensity, linOp{a: -in.TransDiffusion})
		q := linOp{a: -in.TransDiffusion, d: -4 * in.RotDiffusion}
		m.iQ11 = addField("Q11", UnitDensity, q)
		m.iQ12 = addField("Q12", UnitDensity, q)
		m.harm, m.qScale = 2, 1
	case Kinetic:
		m.iC = addField("c", UnitDensity, linOp{a: -in.TransDiffusion})
		for n := 1; n <= in.Harmonics; n++ {
			o := linOp{a: -in.TransDiffusion, d: -float64(n*n) * in.RotDiffusion}
			addField(fmt.Sprintf("a%d", n), UnitDensity, o)
			addField(fmt.Sprintf("b%d", n), UnitDensity, o)
		}
		m.iQ11, m.iQ12 = 3, 4
		m.harm, m.qScale = in.Harmonics, 0.5
	}
	switch l.Model {
	case Passive:
		m.iPhi = addField("phi", UnitNone, linOp{a: -l.Diffusivity})
	case CahnHilliard:
		m.iPhi = addField("phi", UnitNone, linOp{a: l.Mobility, b: -l.Mobility * l.Interface * l.Interface})
	}
	m.nf = len(m.names)

	hasInc := in.Model != NoInclusions
	korteweg := l.Backreaction && l.Energy != 0
	m.flowOn = (hasInc && in.Activity != 0) || korteweg
	m.drift = hasInc && in.Partition != 0 && in.TransDiffusion != 0
	m.needE = m.flowOn && hasInc && in.Alignment != 0
	m.incReal = hasInc && (m.flowOn || m.drift)
	m.phiReal = m.iPhi >= 0 && (m.flowOn || l.Model == CahnHilliard)
	if hasInc && in.Alignment != 0 && in.Activity != 0 {
		// The rate for the smallest viscosity bounds the rates of the
		// uniform states a composition-dependent viscosity passes through.
		mem := p.Membrane
		mem.Viscosity = p.minViscosity()
		var smax float64
		for idx, k2 := range g.K2() {
			if g.Kept(idx) && k2 > 0 {
				if d := mem.D(math.Sqrt(k2)); d > 0 {
					smax = math.Max(smax, k2/d)
				}
			}
		}
		m.activeS = math.Abs(in.Alignment*in.Activity) / 4 * smax
	}

	nr, ns := g.RealLen(), m.n
	m.state = make([]complex128, m.nf*m.stride)
	m.views = m.fieldViews(m.state)
	m.rhsViews = make([][]complex128, m.nf)
	m.rf = make([][]float64, m.nf)
	for f := range m.rf {
		m.rf[f] = make([]float64, nr)
	}
	for _, r := range []*[]float64{&m.ux, &m.uy, &m.w, &m.e11, &m.e12, &m.vx, &m.vy, &m.zero, &m.t1, &m.t2, &m.t3, &m.t4, &m.t5, &m.t6} {
		*r = make([]float64, nr)
	}
	for _, s := range []*[]complex128{&m.s1, &m.s2, &m.s3, &m.s4, &m.s5, &m.cube, &m.dfx, &m.dfy, &m.dkx, &m.dky, &m.dux, &m.duy} {
		*s = make([]complex128, ns)
	}
	kxMax, kyMax := g.DealiasLimits()
	m.ncol = kxMax + 1
	for j := 0; j < g.Ny; j++ {
		if my := g.ModeY(j); my >= -kyMax && my <= kyMax {
			m.rows = append(m.rows, j)
		}
	}
	if cf != nil {
		for _, v := range []*[]complex128{&m.warmX, &m.warmY, &m.pendX, &m.pendY} {
			*v = make([]complex128, ns)
		}
	}
	m.initViews()
	m.SetUniform(0)
	return m, nil
}

// fieldViews returns the per-field views of a state vector.
func (m *Model) fieldViews(v []complex128) [][]complex128 {
	out := make([][]complex128, m.nf)
	for f := range out {
		out[f] = v[f*m.stride : f*m.stride+m.n : f*m.stride+m.n]
	}
	return out
}

// Params returns the model's parameters.
func (m *Model) Params() Params { return m.p }

// Grid returns the model's grid.
func (m *Model) Grid() *spectral.Grid { return m.g }

// FieldNames returns the names of the evolved fields in state order:
// moments "c", "Q11", "Q12"; kinetic "c", "a1", "b1", …, "aM", "bM"
// (m_n = a_n + i b_n = ∫Ψ e^{inθ} dθ); then "phi" with a lipid model. The
// slice is shared and must not be modified.
func (m *Model) FieldNames() []string { return m.names }

// FieldUnit returns the reduced unit label of evolved field f.
func (m *Model) FieldUnit(f int) string { return m.units[f] }

// FieldIndex returns the state index of the evolved field called name, or
// −1.
func (m *Model) FieldIndex(name string) int {
	for i, s := range m.names {
		if s == name {
			return i
		}
	}
	return -1
}

// Spectral returns the box-normalised coefficients of evolved field f (see
// package spectral for the layout): a view of the state, not a copy. This
// is what a checkpoint stores. Writing into it changes the state; modes
// beyond the 2/3 dealiasing limit must stay zero (use [Model.SetSpectral]).
func (m *Model) Spectral(f int) []complex128 { return m.views[f] }

// SetSpectral copies coefficients into evolved field f and zeroes the modes
// beyond the 2/3 dealiasing limit. A length that does not match the grid
// panics.
func (m *Model) SetSpectral(f int, coef []complex128) {
	if len(coef) != m.n {
		panic(fmt.Sprintf("fields: SetSpectral(%q) length %d, want %d", m.names[f], len(coef), m.n))
	}
	copy(m.views[f], coef)
	m.g.Dealias(m.views[f])
}

// Time returns the model time in τ₀; Steps the number of steps taken.
func (m *Model) Time() float64 { return m.time }

// Steps returns the number of steps taken since construction or the last
// SetClock.
func (m *Model) Steps() int { return m.steps }

// SetClock sets the model time and step count (to resume from a
// checkpoint).
func (m *Model) SetClock(time float64, steps int) { m.time, m.steps = time, steps }

// SetSource installs a source term (nil removes it).
func (m *Model) SetSource(s Source) { m.source = s }

// FFTs returns the number of FFTs (forward or inverse, one real field each)
// the model has executed since construction.
func (m *Model) FFTs() int64 { return m.ffts }

func (m *Model) fwd(dst []complex128, src []float64) {
	m.ffts++
	m.plan.Forward(dst, src)
}

// inv transforms src (preserved) to real space.
func (m *Model) inv(dst []float64, src []complex128) {
	m.ffts++
	m.plan.Inverse(dst, src)
}

// invOver transforms src to real space and may destroy src.
func (m *Model) invOver(dst []float64, src []complex128) {
	m.ffts++
	m.plan.InverseOverwrite(dst, src)
}

// rhsStats are the quantities the step-size control needs, measured on the
// real-space fields of the first stage.
type rhsStats struct {
	speed float64 // max(max|v| + V₀, max|u|)
	rot   float64 // n_max·max(|ω|/2 + |β||e|)
}

// rhs sets dst to the explicit part N(src, t) of every evolved field (all
// terms except the diagonal linear operators). Modes beyond the dealiasing
// limit of dst hold garbage; the integrator's coefficients discard them.
// With check it verifies that the real-space fields are finite and returns
// the step-size statistics.
func (m *Model) rhs(dst, src []complex128, t float64, check bool) (rhsStats, error) {
	var st rhsStats
	sv := m.rhsViews
	for f := range sv {
		sv[f] = src[f*m.stride : f*m.stride+m.n]
	}
	in, l := m.p.Inclusions, m.p.Lipid
	// Real-space fields.
	for f := 0; f < m.nf; f++ {
		if (f == m.iPhi && m.phiReal) || (f != m.iPhi && m.incReal) {
			m.inv(m.rf[f], sv[f])
		}
	}
	if check {
		for f := 0; f < m.nf; f++ {
			if !((f == m.iPhi && m.phiReal) || (f != m.iPhi && m.incReal)) {
				if finiteSum(sv[f]) {
					continue
				}
				m.inv(m.rf[f], sv[f]) // rare: locate the bad value on the grid
			}
			if err := m.finiteCheck(m.names[f], m.rf[f]); err != nil {
				return st, err
			}
		}
	}
	var phiR []float64
	if m.iPhi >= 0 {
		phiR = m.rf[m.iPhi]
	}
	if l.Model == CahnHilliard {
		for i, v := range phiR {
			m.t1[i] = v * v * v
		}
		m.fwd(m.cube, m.t1)
	}
	// Flow.
	if m.flowOn {
		m.force(m.s1, m.s2, sv, phiR, true)
		if m.comp != nil {
			if err := m.solveComp(m.s1, m.s2, phiR, &m.work); err != nil {
				return st, err
			}
			copy(m.pendX, m.s1)
			copy(m.pendY, m.s2)
			m.havePend = true
		} else {
			m.flow.Solve(m.s1, m.s2, m.s1, m.s2)
		}
		m.velocityReal()
	}
	vx, vy := m.ux, m.uy
	if m.drift {
		dc := in.TransDiffusion * in.Partition
		m.g.Dx(m.s3, sv[m.iPhi])
		m.invOver(m.vx, m.s3)
		m.g.Dy(m.s3, sv[m.iPhi])
		m.invOver(m.vy, m.s3)
		if m.flowOn {
			for i := range m.vx {
				m.vx[i] = m.ux[i] + dc*m.vx[i]
				m.vy[i] = m.uy[i] + dc*m.vy[i]
			}
		} else {
			for i := range m.vx {
				m.vx[i] *= dc
				m.vy[i] *= dc
			}
		}
		vx, vy = m.vx, m.vy
	}
	if check {
		var err error
		if st, err = m.stats(vx, vy); err != nil {
			return st, err
		}
	}
	// From here on the views point into dst (src is only read through the
	// real-space copies and by propulsion).
	for f := range sv {
		sv[f] = dst[f*m.stride : f*m.stride+m.n]
	}
	dvw := sv
	switch in.Model {
	case Moments:
		m.scalarTerm(dvw[m.iC], m.rf[m.iC], vx, vy, m.incReal)
		m.momentTerm(dvw[m.iQ11], dvw[m.iQ12], vx, vy)
	case Kinetic:
		m.scalarTerm(dvw[m.iC], m.rf[m.iC], vx, vy, m.incReal)
		for n := 1; n <= m.harm; n++ {
			m.modeTerm(n, dvw[2*n-1], dvw[2*n], vx, vy)
		}
		if in.Speed != 0 {
			m.propulsion(dst, src)
		}
	}
	// Lipid.
	if m.iPhi >= 0 {
		d := dvw[m.iPhi]
		m.scalarTerm(d, phiR, m.ux, m.uy, m.flowOn)
		if l.Model == CahnHilliard {
			// M∇²(φ³); the −M∇²φ and −Mε²∇⁴φ parts are in L.
			k2 := m.g.K2()
			for idx, v := range m.cube {
				d[idx] -= complex(l.Mobility*k2[idx], 0) * v
			}
		}
	}
	if m.source != nil {
		m.source.AddSource(dvw, t)
	}
	return st, nil
}

// force sets (fx, fy) to the force density of the fields sv (spectral) and
// φ (real, phiR): σ_a ∇·Q, plus, if kort and back-reaction is on, the
// Korteweg force −Aφ∇μ (which needs m.cube = (φ³)^ to be current).
func (m *Model) force(fx, fy []complex128, sv [][]complex128, phiR []float64, kort bool) {
	clear(fx)
	clear(fy)
	in, l := m.p.Inclusions, m.p.Lipid
	if m.iQ11 >= 0 && in.Activity != 0 {
		activeForce(m.g, fx, fy, sv[m.iQ11], sv[m.iQ12], in.Activity*m.qScale)
	}
	if kort && l.Backreaction && l.Energy != 0 {
		m.korteweg(m.s4, m.s5, sv[m.iPhi], phiR)
		for idx := range fx {
			fx[idx] += m.s4[idx]
			fy[idx] += m.s5[idx]
		}
	}
}

// activeForce sets (fx, fy) to the coefficients of s ∇·Q, Q = [[q11, q12],
// [q12, −q11]]: f_x = s(∂x Q₁₁ + ∂y Q₁₂), f_y = s(∂x Q₁₂ − ∂y Q₁₁).
func activeForce(g *spectral.Grid, fx, fy, q11, q12 []complex128, s float64) {
	kx, ky := g.Kx(), g.Ky()
	nk := g.Nkx()
	for j := 0; j < g.Ny; j++ {
		row := j * nk
		b := ky[j]
		for i := 0; i < nk; i++ {
			a := kx[i]
			x, y := q11[row+i], q12[row+i]
			// i(a x + b y) and i(a y − b x), times s.
			px := complex(a*real(x)+b*real(y), a*imag(x)+b*imag(y))
			py := complex(a*real(y)-b*real(x), a*imag(y)-b*imag(x))
			fx[row+i] = complex(-s*imag(px), s*real(px))
			fy[row+i] = complex(-s*imag(py), s*real(py))
		}
	}
}

// korteweg sets (kx, ky) to the coefficients of −Aφ∇μ, μ = φ³ − φ − ε²∇²φ,
// from φ's coefficients phi, its real values phiR and m.cube = (φ³)^, with
// μ and the force dealiased. It uses s3 and t1, t2.
func (m *Model) korteweg(kx, ky, phi []complex128, phiR []float64) {
	l := m.p.Lipid
	e2 := l.Interface * l.Interface
	k2 := m.g.K2()
	for idx, v := range phi {
		m.s3[idx] = m.cube[idx] - v + complex(e2*k2[idx], 0)*v
	}
	m.g.Dealias(m.s3)
	m.g.Dx(kx, m.s3)
	m.g.Dy(ky, m.s3)
	m.invOver(m.t1, kx)
	m.invOver(m.t2, ky)
	a := -l.Energy
	for i, v := range phiR {
		m.t1[i] *= a * v
		m.t2[i] *= a * v
	}
	m.fwd(kx, m.t1)
	m.fwd(ky, m.t2)
	// The force drives the flow, which must stay band-limited for the
	// products it enters.
	m.g.Dealias(kx)
	m.g.Dealias(ky)
}

// velocityReal sets ux, uy, w (vorticity) and, if needed, e11, e12 (strain
// rate) in real space from the velocity coefficients in s1, s2, which it
// destroys. It uses s3, s4, s5.
func (m *Model) velocityReal() {
	if m.needE {
		flow.Gradients(m.g, m.s3, m.s4, m.s5, m.s1, m.s2)
		m.invOver(m.e11, m.s4)
		m.invOver(m.e12, m.s5)
	} else {
		flow.Vorticity(m.g, m.s3, m.s1, m.s2, m.s4)
	}
	m.invOver(m.w, m.s3)
	m.invOver(m.ux, m.s1)
	m.invOver(m.uy, m.s2)
}

// solveComp sets (fx, fy) to the velocity driven by the force (fx, fy)
// with the composition-dependent solver, the viscosity set from the
// real-space composition phiR, and adds the work to w. A failure is
// returned as a *FlowError for the current step (the stepper fills in the
// stage and step size).
func (m *Model) solveComp(fx, fy []complex128, phiR []float64, w *flowWork) error {
	err := m.comp.SetComposition(phiR)
	if err == nil {
		var r flow.PCGResult
		r, err = m.comp.Solve(fx, fy, fx, fy)
		w.add(r)
	}
	if err != nil {
		return &FlowError{Step: m.steps, Time: m.time, Err: err}
	}
	return nil
}

// primeGuess makes the next composition-dependent solve start from the
// warm-start velocity (zero if there is none), so that each step, and each
// diagnostics solve, depends only on the state and the warm start, not on
// what was solved in between.
func (m *Model) primeGuess() {
	if m.haveWarm {
		m.comp.SetGuess(m.warmX, m.warmY)
	} else {
		m.comp.SetGuess(nil, nil)
	}
}

// commitGuess makes the velocity of the last solve of a successful step the
// warm start of the next.
func (m *Model) commitGuess() {
	if m.comp == nil || !m.havePend {
		return
	}
	m.warmX, m.pendX = m.pendX, m.warmX
	m.warmY, m.pendY = m.pendY, m.warmY
	m.haveWarm, m.havePend = true, false
}

// FlowGuess returns the velocity coefficients (ux, uy) that the first flow
// solve of the next step starts from, with a composition-dependent
// viscosity: the velocity of the last solve of the previous step. The
// slices are owned by the model and must not be modified. ok is false if
// there is none (uniform viscosity, no step taken, or no flow). A
// checkpoint that stores them and a resume that restores them with
// SetFlowGuess continue bit for bit; without them the first solve after a
// resume starts from zero and the run departs from the uninterrupted one
// at the level of the solver tolerance.
func (m *Model) FlowGuess() (ux, uy []complex128, ok bool) {
	if !m.haveWarm {
		return nil, nil, false
	}
	return m.warmX, m.warmY, true
}

// SetFlowGuess copies (ux, uy) into the velocity the next step's first flow
// solve starts from (see FlowGuess); nil slices clear it. It panics on a
// wrong length, or if the viscosity does not depend on the composition.
func (m *Model) SetFlowGuess(ux, uy []complex128) {
	if m.comp == nil {
		panic("fields: SetFlowGuess on a model with a uniform viscosity")
	}
	if ux == nil && uy == nil {
		m.haveWarm = false
		return
	}
	if len(ux) != m.n || len(uy) != m.n {
		panic(fmt.Sprintf("fields: SetFlowGuess lengths %d, %d, want %d", len(ux), len(uy), m.n))
	}
	copy(m.warmX, ux)
	copy(m.warmY, uy)
	m.haveWarm = true
}

// stats returns the step-size statistics and checks the velocity fields
// for non-finite values; vx, vy carry the inclusions (u, or u + drift).
func (m *Model) stats(vx, vy []float64) (rhsStats, error) {
	st := rhsStats{speed: m.p.Inclusions.Speed}
	if m.flowOn {
		for _, c := range []struct {
			name string
			v    []float64
		}{{"ux", m.ux}, {"uy", m.uy}, {"vorticity", m.w}} {
			if err := m.finiteCheck(c.name, c.v); err != nil {
				return st, err
			}
		}
	}
	if m.drift {
		if err := m.finiteCheck("inclusion drift velocity x", vx); err != nil {
			return st, err
		}
		if err := m.finiteCheck("inclusion drift velocity y", vy); err != nil {
			return st, err
		}
	}
	var u2, v2 float64
	if m.flowOn {
		for i, x := range m.ux {
			u2 = math.Max(u2, x*x+m.uy[i]*m.uy[i])
		}
	}
	if m.flowOn || m.drift {
		for i, x := range vx {
			v2 = math.Max(v2, x*x+vy[i]*vy[i])
		}
	}
	st.speed = math.Max(math.Sqrt(v2)+m.p.Inclusions.Speed, math.Sqrt(u2))
	if m.flowOn && m.harm > 0 {
		beta := math.Abs(m.p.Inclusions.Alignment)
		var r float64
		if m.needE {
			for i, w := range m.w {
				r = math.Max(r, math.Abs(w)/2+beta*math.Hypot(m.e11[i], m.e12[i]))
			}
		} else {
			for _, w := range m.w {
				r = math.Max(r, math.Abs(w)/2)
			}
		}
		st.rot = float64(m.harm) * r
	}
	return st, nil
}

// scalarTerm sets d to −∇·(v s) for the real field s: the advective term of
// c and φ. With on false (v ≡ 0) it sets d to 0.
func (m *Model) scalarTerm(d []complex128, s, vx, vy []float64, on bool) {
	if !on {
		clear(d)
		return
	}
	for i, v := range s {
		m.t1[i] = vx[i] * v
		m.t2[i] = vy[i] * v
	}
	m.fluxInto(d, m.t1, m.t2, false)
}

// negDiv sets d to −(i kx fx + i ky fy), or adds that to d if add, on the
// modes the 2/3 rule keeps (the others are discarded by the integrator).
func (m *Model) negDiv(d, fx, fy []complex128, add bool) {
	kx, ky := m.g.Kx(), m.g.Ky()
	nk := m.g.Nkx()
	for _, j := range m.rows {
		row := j * nk
		b := ky[j]
		for i := 0; i < m.ncol; i++ {
			a := kx[i]
			x, y := fx[row+i], fy[row+i]
			// −i(a x + b y)
			s := complex(a*imag(x)+b*imag(y), -(a*real(x) + b*real(y)))
			if add {
				d[row+i] += s
			} else {
				d[row+i] = s
			}
		}
	}
}

// momentTerm sets d11, d12 to the explicit part of the Q equation of the
// moment model, written for q = Q₁₁ + iQ₁₂:
//
//	−∇·(v q) + iωq + (β/2)(c e − ē m₄),  e = E₁₁ + iE₁₂,
//
// with m₄ from the closure.
func (m *Model) momentTerm(d11, d12 []complex128, vx, vy []float64) {
	if !m.incReal {
		clear(d11)
		clear(d12)
		return
	}
	x, y, c := m.rf[m.iQ11], m.rf[m.iQ12], m.rf[m.iC]
	if !m.flowOn {
		for i := range x {
			m.t1[i], m.t2[i] = vx[i]*x[i], vy[i]*x[i]
			m.t3[i], m.t4[i] = vx[i]*y[i], vy[i]*y[i]
		}
		m.fluxInto(d11, m.t1, m.t2, false)
		m.fluxInto(d12, m.t3, m.t4, false)
		return
	}
	hb := m.p.Inclusions.Alignment / 2
	// With the truncation closure the terms are those of the mode kernel
	// for q with rotation factor 1, P = c, S = 0 and coefficient β/2.
	if m.p.Inclusions.Closure == Quadratic {
		quadKernel(m.t1, m.t2, m.t3, m.t4, m.t5, m.t6, x, y, c, vx, vy, m.w, m.e11, m.e12, hb)
	} else {
		modeKernel(m.t1, m.t2, m.t3, m.t4, m.t5, m.t6, x, y, vx, vy, m.w, m.e11, m.e12, c, m.zero, m.zero, m.zero, 1, hb, 1)
	}
	m.fwd(d11, m.t5)
	m.fwd(d12, m.t6)
	m.fluxInto(d11, m.t1, m.t2, true)
	m.fluxInto(d12, m.t3, m.t4, true)
}

// quadKernel is the moment kernel with the quadratic closure: fluxes
// v·(x, y) and the rotation terms Re, Im of
// iωq + hb(c e − ē m₄), q = x + iy, m₄ = 4q²/c (0 where c ≤ 0).
func quadKernel(fxa, fya, fxb, fyb, ra, rb, x, y, c, vx, vy, w, e11, e12 []float64, hb float64) {
	n := len(x)
	fxa, fya, fxb, fyb, ra, rb = fxa[:n], fya[:n], fxb[:n], fyb[:n], ra[:n], rb[:n]
	y, c, vx, vy, w, e11, e12 = y[:n], c[:n], vx[:n], vy[:n], w[:n], e11[:n], e12[:n]
	for i := 0; i < n; i++ {
		a, b, ci := x[i], y[i], c[i]
		ux, uy := vx[i], vy[i]
		fxa[i], fya[i] = ux*a, uy*a
		fxb[i], fyb[i] = ux*b, uy*b
		er, ei := e11[i], e12[i]
		var m4r, m4i float64
		if ci > 0 {
			s := 4 / ci
			m4r, m4i = s*(a*a-b*b), s*2*a*b
		}
		o := w[i]
		ra[i] = -o*b + hb*(ci*er-(er*m4r+ei*m4i))
		rb[i] = o*a + hb*(ci*ei-(er*m4i-ei*m4r))
	}
}

// fluxInto transforms the flux (fx, fy) (real) and sets d to −∇·flux, or
// adds it to d if add.
func (m *Model) fluxInto(d []complex128, fx, fy []float64, add bool) {
	m.fwd(m.s1, fx)
	m.fwd(m.s2, fy)
	m.negDiv(d, m.s1, m.s2, add)
}

// modeTerm sets da, db to the explicit part of the equation of the angular
// mode m_n = a_n + i b_n (n ≥ 1) of the kinetic model, without
// self-propulsion:
//
//	−∇·(v m_n) + i n (ω/2) m_n + (nβ/2)(e m_{n−2} − ē m_{n+2}),
//
// with m_{−1} = conj(m₁), m₀ = c and m_n = 0 for n > M.
func (m *Model) modeTerm(n int, da, db []complex128, vx, vy []float64) {
	if !m.incReal {
		clear(da)
		clear(db)
		return
	}
	a, b := m.rf[2*n-1], m.rf[2*n]
	if !m.flowOn {
		for i := range a {
			m.t1[i], m.t2[i] = vx[i]*a[i], vy[i]*a[i]
			m.t3[i], m.t4[i] = vx[i]*b[i], vy[i]*b[i]
		}
		m.fluxInto(da, m.t1, m.t2, false)
		m.fluxInto(db, m.t3, m.t4, false)
		return
	}
	// m_{n−2} = pr + i·psign·pi and m_{n+2} = sr + i si; absent parts are
	// read from the zero field so that the loop has no branches.
	pr, pi, sr, si := m.zero, m.zero, m.zero, m.zero
	psign := 1.0
	switch {
	case n == 1:
		pr, pi, psign = m.rf[1], m.rf[2], -1
	case n == 2:
		pr = m.rf[m.iC]
	default:
		pr, pi = m.rf[2*n-5], m.rf[2*n-4]
	}
	if n+2 <= m.harm {
		sr, si = m.rf[2*n+3], m.rf[2*n+4]
	}
	hw := float64(n) / 2
	hb := float64(n) * m.p.Inclusions.Alignment / 2
	modeKernel(m.t1, m.t2, m.t3, m.t4, m.t5, m.t6, a, b, vx, vy, m.w, m.e11, m.e12, pr, pi, sr, si, hw, hb, psign)
	m.fwd(da, m.t5)
	m.fwd(db, m.t6)
	m.fluxInto(da, m.t1, m.t2, true)
	m.fluxInto(db, m.t3, m.t4, true)
}

// modeKernel forms, pointwise, the fluxes (fxa, fya, fxb, fyb) = v·(a, b)
// and the rotation terms (ra, rb) = Re, Im of
// i hw ω (a + ib) + hb (e P − ē S), e = e11 + i e12, P = pr + i psign pi,
// S = sr + i si. All slices have the length of a.
func modeKernel(fxa, fya, fxb, fyb, ra, rb, a, b, vx, vy, w, e11, e12, pr, pi, sr, si []float64, hw, hb, psign float64) {
	n := len(a)
	fxa, fya, fxb, fyb, ra, rb = fxa[:n], fya[:n], fxb[:n], fyb[:n], ra[:n], rb[:n]
	b, vx, vy, w, e11, e12 = b[:n], vx[:n], vy[:n], w[:n], e11[:n], e12[:n]
	pr, pi, sr, si = pr[:n], pi[:n], sr[:n], si[:n]
	for i := 0; i < n; i++ {
		x, y := a[i], b[i]
		ux, uy := vx[i], vy[i]
		fxa[i], fya[i] = ux*x, uy*x
		fxb[i], fyb[i] = ux*y, uy*y
		o := hw * w[i]
		er, ei := e11[i], e12[i]
		p, q := pr[i], psign*pi[i]
		s, u := sr[i], si[i]
		ra[i] = -o*y + hb*(er*p-ei*q-er*s-ei*u)
		rb[i] = o*x + hb*(er*q+ei*p-er*u+ei*s)
	}
}

// propulsion adds the self-propulsion term −V₀[∂x(m_{n+1}+m_{n−1})/2 +
// ∂y(m_{n+1}−m_{n−1})/(2i)] of every mode 0 ≤ n ≤ M to dst, from the state
// src. In real parts, with m_{−1} = conj(m₁), m₀ = c and m_{M+1} = 0:
//
//	N(a_n) −= (V₀/2)[∂x(a_{n+1}+a_{n−1}) + ∂y(b_{n+1}−b_{n−1})]
//	N(b_n) −= (V₀/2)[∂x(b_{n+1}+b_{n−1}) − ∂y(a_{n+1}−a_{n−1})]
func (m *Model) propulsion(dst, src []complex128) {
	g := m.g
	h := m.p.Inclusions.Speed / 2
	kx, ky := g.Kx(), g.Ky()
	nk := g.Nkx()
	field := func(buf []complex128, f int) []complex128 {
		if f < 0 {
			return nil
		}
		return buf[f*m.stride : f*m.stride+m.n]
	}
	for n := 0; n <= m.harm; n++ {
		ap, bp := -1, -1 // a_{n+1}, b_{n+1}
		if n+1 <= m.harm {
			ap, bp = 2*n+1, 2*n+2
		}
		am, bm, bs := 2*n-3, 2*n-2, 1.0 // a_{n−1}, b_{n−1} and the sign of b_{n−1}
		switch n {
		case 0:
			am, bm, bs = 1, 2, -1
		case 1:
			am, bm = m.iC, -1
		}
		Ap, Bp, Am, Bm := field(src, ap), field(src, bp), field(src, am), field(src, bm)
		da := field(dst, m.aIndex(n))
		var db []complex128
		if n > 0 {
			db = field(dst, 2*n)
		}
		for _, j := range m.rows {
			row := j * nk
			y := ky[j]
			for i := 0; i < m.ncol; i++ {
				idx := row + i
				x := kx[i]
				var apv, bpv, bmv complex128
				amv := Am[idx]
				if Ap != nil {
					apv, bpv = Ap[idx], Bp[idx]
				}
				if Bm != nil {
					bmv = complex(bs, 0) * Bm[idx]
				}
				// −(V₀/2)·i·(…) = (V₀/2)·(imag, −real) of (…)
				ta := complex(x, 0)*(apv+amv) + complex(y, 0)*(bpv-bmv)
				da[idx] += complex(h*imag(ta), -h*real(ta))
				if db != nil {
					tb := complex(x, 0)*(bpv+bmv) - complex(y, 0)*(apv-amv)
					db[idx] += complex(h*imag(tb), -h*real(tb))
				}
			}
		}
	}
}

// aIndex returns the state index of a_n (c for n = 0).
func (m *Model) aIndex(n int) int {
	if n == 0 {
		return m.iC
	}
	return 2*n - 1
}
