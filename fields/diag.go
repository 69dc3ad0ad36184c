package fields

import (
	"math"

	"github.com/memix-sim/memix/flow"
)

// View is a real-space field for the output writers.
type View struct {
	Name string    // "c", "Q11", …, "phi", "ux", "uy", "vorticity"
	Unit string    // reduced unit label (UnitDensity, …)
	Data []float64 // value at grid point (i, j) is Data[j*Nx+i]
}

func (m *Model) initViews() {
	m.viewQ11, m.viewQ12 = -1, -1
	add := func(name, unit string) int {
		m.viewList = append(m.viewList, View{Name: name, Unit: unit, Data: m.g.NewReal()})
		return len(m.viewList) - 1
	}
	for f, name := range m.names {
		add(name, m.units[f])
	}
	if m.p.Inclusions.Model == Kinetic {
		m.viewQ11 = add("Q11", UnitDensity)
		m.viewQ12 = add("Q12", UnitDensity)
	}
	m.viewUx = add("ux", UnitVelocity)
	m.viewUy = add("uy", UnitVelocity)
	m.viewVor = add("vorticity", UnitRate)
}

// Views returns the real-space views: every evolved field (in
// [Model.FieldNames] order), then for the kinetic model Q11 = a₂/2 and
// Q12 = b₂/2, then ux, uy (ℓ₀/τ₀) and the vorticity ω = ∂x uy − ∂y ux
// (1/τ₀). The slice and the data are owned by the model and hold the
// values of the last [Model.UpdateViews]; they must not be modified.
func (m *Model) Views() []View { return m.viewList }

// UpdateViews computes the views from the current state. It allocates
// nothing. With a composition-dependent viscosity its flow solve can fail
// (a *FlowError, Stage 0); the velocity views are then not to be used.
func (m *Model) UpdateViews() error {
	for f := range m.names {
		m.inv(m.viewList[f].Data, m.views[f])
	}
	if m.viewQ11 >= 0 {
		for i, v := range m.viewList[m.iQ11].Data {
			m.viewList[m.viewQ11].Data[i] = v / 2
			m.viewList[m.viewQ12].Data[i] = m.viewList[m.iQ12].Data[i] / 2
		}
	}
	ux, uy, w := m.viewList[m.viewUx].Data, m.viewList[m.viewUy].Data, m.viewList[m.viewVor].Data
	if !m.flowOn {
		clear(ux)
		clear(uy)
		clear(w)
		return nil
	}
	var phiR []float64
	if m.iPhi >= 0 {
		phiR = m.viewList[m.iPhi].Data
	}
	err := m.solveCurrent(phiR, &flowWork{})
	flow.Vorticity(m.g, m.s3, m.dux, m.duy, m.s4)
	m.invOver(w, m.s3)
	m.inv(ux, m.dux)
	m.inv(uy, m.duy)
	return err
}

// needPhiReal reports whether solveCurrent needs φ in real space.
func (m *Model) needPhiReal() bool {
	l := m.p.Lipid
	return m.flowOn && ((l.Backreaction && l.Energy != 0) || m.comp != nil)
}

// solveCurrent sets dfx, dfy to the active force, dkx, dky to the Korteweg
// force and dux, duy to the velocity of the current state. phiR must hold
// φ in real space if needPhiReal. A composition-dependent solve starts
// from the warm start and adds its work to w; its failure is returned.
func (m *Model) solveCurrent(phiR []float64, w *flowWork) error {
	l := m.p.Lipid
	if l.Backreaction && l.Energy != 0 {
		for i, v := range phiR {
			m.t1[i] = v * v * v
		}
		m.fwd(m.cube, m.t1)
		m.korteweg(m.dkx, m.dky, m.views[m.iPhi], phiR)
	} else {
		clear(m.dkx)
		clear(m.dky)
	}
	m.force(m.dfx, m.dfy, m.views, nil, false)
	for i := range m.dux {
		m.dux[i] = m.dfx[i] + m.dkx[i]
		m.duy[i] = m.dfy[i] + m.dky[i]
	}
	if m.comp == nil {
		m.flow.Solve(m.dux, m.duy, m.dux, m.duy)
		return nil
	}
	m.primeGuess()
	return m.solveComp(m.dux, m.duy, phiR, w)
}

// Diagnostics are box averages of the current state, in reduced units.
// They are model predictions, not measurements.
type Diagnostics struct {
	Time  float64 // τ₀
	Steps int

	KineticEnergy float64 // ½⟨|u|²⟩, (ℓ₀/τ₀)²
	MaxSpeed      float64 // max |u| on the grid, ℓ₀/τ₀
	// ActivePower ⟨f_a·u⟩ of the active force, InterfacePower ⟨f_φ·u⟩ of the
	// Korteweg force and Dissipation ⟨2η_m E:E⟩ + Σ_k (Γ₊+Γ₋)(k)|û_k|² +
	// ξ⟨|u|²⟩, all per area in η_m/τ₀². In Stokes flow the power input
	// equals the dissipation. The viscous term uses Membrane.Viscosity, or,
	// with a composition-dependent viscosity, η_m(φ(x)) at the grid points
	// (the rule the iterative solver is built on); the power then equals
	// the dissipation up to the solver's residual (at most
	// FlowResidual·‖Pf‖·‖u‖ in box L² norms).
	ActivePower, InterfacePower, Dissipation float64
	// FlowIterations and FlowResidual are the iterations and final
	// relative residual of the flow solve of a composition-dependent
	// viscosity behind these diagnostics (0 otherwise).
	FlowIterations int
	FlowResidual   float64

	MeanDensity float64 // ⟨c⟩, c₀ (1 unless set otherwise)
	// Order is the density-weighted local nematic order 2⟨|q|⟩/⟨c⟩ ∈ [0, 1]
	// (|q| = √(Q₁₁²+Q₁₂²)); GlobalOrder is the order of the box-averaged
	// tensor, 2|⟨q⟩|/⟨c⟩, and Director the angle ½arg⟨q⟩ of its director
	// (radians from x). Both are 1 for perfect alignment and 0 for an
	// isotropic state; Order stays large for locally aligned domains with
	// varying directors, GlobalOrder does not.
	Order, GlobalOrder, Director float64

	LipidMean     float64 // ⟨φ⟩
	LipidVariance float64 // ⟨φ²⟩ − ⟨φ⟩²
	// FreeEnergy is ⟨(φ²−1)²/4 + (ε²/2)|∇φ|²⟩ in units of A (Cahn–Hilliard).
	FreeEnergy float64
}

// Diagnostics returns the diagnostics of the current state. It allocates
// nothing; it costs a few FFTs and one flow solve. With a
// composition-dependent viscosity the solve starts from the warm start of
// the next step (see FlowGuess) and leaves it unchanged, so diagnostics do
// not alter the run; if it fails the error is a *FlowError (Stage 0) and
// the flow diagnostics are not to be used.
func (m *Model) Diagnostics() (Diagnostics, error) {
	d := Diagnostics{Time: m.time, Steps: m.steps}
	g := m.g
	var phiR []float64 // φ in real space, if it is needed
	if m.needPhiReal() || (m.iPhi >= 0 && m.p.Lipid.Model == CahnHilliard) {
		phiR = m.rf[m.iPhi]
		m.inv(phiR, m.views[m.iPhi])
	}
	var err error
	if m.flowOn {
		var w flowWork
		err = m.solveCurrent(phiR, &w)
		d.FlowIterations, d.FlowResidual = w.iters, w.maxRes
		d.ActivePower = g.Dot(m.dfx, m.dux) + g.Dot(m.dfy, m.duy)
		d.InterfacePower = g.Dot(m.dkx, m.dux) + g.Dot(m.dky, m.duy)
		u2 := g.MeanSquare(m.dux) + g.MeanSquare(m.duy)
		d.KineticEnergy = u2 / 2
		if m.comp != nil {
			d.Dissipation = m.comp.Dissipation(m.dux, m.duy)
		} else {
			d.Dissipation = m.budget.Dissipation(m.dux, m.duy)
		}
		m.inv(m.t1, m.dux)
		m.inv(m.t2, m.duy)
		var mx float64
		for i, x := range m.t1 {
			mx = math.Max(mx, x*x+m.t2[i]*m.t2[i])
		}
		d.MaxSpeed = math.Sqrt(mx)
	}
	if m.iC >= 0 {
		c := real(m.views[m.iC][0])
		d.MeanDensity = c
		m.inv(m.t1, m.views[m.iQ11])
		m.inv(m.t2, m.views[m.iQ12])
		var s float64
		for i, x := range m.t1 {
			s += math.Hypot(x, m.t2[i])
		}
		s *= m.qScale / float64(len(m.t1))
		q := complex(m.qScale, 0) * complex(real(m.views[m.iQ11][0]), real(m.views[m.iQ12][0]))
		d.Order = 2 * s / c
		d.GlobalOrder = 2 * math.Hypot(real(q), imag(q)) / c
		d.Director = math.Atan2(imag(q), real(q)) / 2
	}
	if m.iPhi >= 0 {
		phi := m.views[m.iPhi]
		mean := real(phi[0])
		d.LipidMean = mean
		d.LipidVariance = g.MeanSquare(phi) - mean*mean
		if m.p.Lipid.Model == CahnHilliard {
			var bulk float64
			for _, x := range phiR {
				y := x*x - 1
				bulk += y * y
			}
			bulk /= 4 * float64(len(phiR))
			e := m.p.Lipid.Interface
			d.FreeEnergy = bulk + e*e/2*m.gradSquare(phi)
		}
	}
	return d, err
}

// gradSquare returns ⟨|∇f|²⟩ = Σ_k k²|f_k|² over the full spectrum.
func (m *Model) gradSquare(f []complex128) float64 {
	g := m.g
	nk := g.Nkx()
	k2 := g.K2()
	var s float64
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < nk; i++ {
			v := f[j*nk+i]
			s += g.Weight(i) * k2[j*nk+i] * (real(v)*real(v) + imag(v)*imag(v))
		}
	}
	return s
}
