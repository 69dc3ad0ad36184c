package fields

import "math"

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
// nothing.
func (m *Model) UpdateViews() {
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
		return
	}
	m.solveCurrent()
	g := m.g
	kx, ky := g.Kx(), g.Ky()
	nk := g.Nkx()
	for j := 0; j < g.Ny; j++ {
		b := ky[j]
		for i := 0; i < nk; i++ {
			idx := j*nk + i
			x, y := m.dux[idx], m.duy[idx]
			v := complex(kx[i]*real(y)-b*real(x), kx[i]*imag(y)-b*imag(x))
			m.s3[idx] = complex(-imag(v), real(v))
		}
	}
	m.invOver(w, m.s3)
	m.inv(ux, m.dux)
	m.inv(uy, m.duy)
}

// solveCurrent sets dfx, dfy to the active force, dkx, dky to the Korteweg
// force and dux, duy to the velocity of the current state.
func (m *Model) solveCurrent() {
	var phiR []float64
	l := m.p.Lipid
	kort := l.Backreaction && l.Energy != 0
	if kort {
		phiR = m.rf[m.iPhi]
		m.inv(phiR, m.views[m.iPhi])
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
	m.flow.Solve(m.dux, m.duy, m.dux, m.duy)
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
	// equals the dissipation. The viscous term uses the uniform viscosity
	// Params.Membrane.Viscosity (it does not describe a variable-viscosity
	// FlowSolver).
	ActivePower, InterfacePower, Dissipation float64

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
// nothing; it costs a few FFTs and one flow solve.
func (m *Model) Diagnostics() Diagnostics {
	d := Diagnostics{Time: m.time, Steps: m.steps}
	g := m.g
	if m.flowOn {
		m.solveCurrent()
		d.ActivePower = g.Dot(m.dfx, m.dux) + g.Dot(m.dfy, m.duy)
		d.InterfacePower = g.Dot(m.dkx, m.dux) + g.Dot(m.dky, m.duy)
		u2 := g.MeanSquare(m.dux) + g.MeanSquare(m.duy)
		d.KineticEnergy = u2 / 2
		d.Dissipation = m.dissipation(m.dux, m.duy)
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
			m.inv(m.t1, phi)
			var bulk float64
			for _, x := range m.t1 {
				y := x*x - 1
				bulk += y * y
			}
			bulk /= 4 * float64(len(m.t1))
			e := m.p.Lipid.Interface
			d.FreeEnergy = bulk + e*e/2*m.gradSquare(phi)
		}
	}
	return d
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

// dissipation returns ⟨2η_m E:E⟩ + Σ_k (Γ₊+Γ₋)(k)|û_k|² + ξ⟨|u|²⟩ of the
// velocity coefficients (ux, uy), with E:E = E₁₁² + E₂₂² + 2E₁₂² from the
// spectral strain rate (Parseval).
//
// TODO(flow): use the flow package's dissipation helper when it lands.
func (m *Model) dissipation(ux, uy []complex128) float64 {
	g := m.g
	kx, ky := g.Kx(), g.Ky()
	nk := g.Nkx()
	mem := m.p.Membrane
	var visc, sub, fr float64
	for j := 0; j < g.Ny; j++ {
		b := ky[j]
		for i := 0; i < nk; i++ {
			idx := j*nk + i
			w := g.Weight(i)
			x, y := ux[idx], uy[idx]
			a := kx[i]
			// |E₁₁|² = a²|x|², |E₂₂|² = b²|y|², |E₁₂|² = |a y + b x|²/4.
			ax, by := a*a*(real(x)*real(x)+imag(x)*imag(x)), b*b*(real(y)*real(y)+imag(y)*imag(y))
			sr, si := a*real(y)+b*real(x), a*imag(y)+b*imag(x)
			visc += w * (ax + by + (sr*sr+si*si)/2)
			u2 := real(x)*real(x) + imag(x)*imag(x) + real(y)*real(y) + imag(y)*imag(y)
			sub += w * m.gamma[idx] * u2
			fr += w * u2
		}
	}
	return 2*mem.Viscosity*visc + sub + mem.Friction*fr
}
