package fields

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
)

// Initial conditions. Every setter leaves the state band-limited (modes
// beyond the 2/3 dealiasing limit are zero) and keeps ⟨c⟩ = 1 unless it
// says otherwise. Random ones draw from the rng passed in; the caller
// records its seed.

// Axis is a coordinate direction.
type Axis int

const (
	AxisX Axis = iota // composition varies along x (stripes parallel to y)
	AxisY             // composition varies along y
)

func (a Axis) String() string {
	if a == AxisY {
		return "y"
	}
	return "x"
}

var errNoInclusions = errors.New("fields: the model has no inclusions (Inclusions.Model is none)")
var errNoLipid = errors.New("fields: the model has no lipid composition (Lipid.Model is none)")

// SetUniform sets the uniform isotropic state: c = 1, every orientational
// field 0, φ = phi0 (ignored without lipid).
func (m *Model) SetUniform(phi0 float64) {
	for _, v := range m.views {
		clear(v)
	}
	if m.iC >= 0 {
		m.views[m.iC][0] = 1
	}
	if m.iPhi >= 0 {
		m.views[m.iPhi][0] = complex(phi0, 0)
	}
}

// setReal sets field f from real values (transform and dealias).
func (m *Model) setReal(f int, data []float64) {
	m.fwd(m.views[f], data)
	m.g.Dealias(m.views[f])
}

// noise fills x with independent uniform values in [−amp, amp].
func noise(x []float64, amp float64, rng *rand.Rand) {
	for i := range x {
		x[i] = amp * (2*rng.Float64() - 1)
	}
}

// InitIsotropic sets the isotropic state with a random perturbation of
// amplitude amp ∈ [0, 1): c = 1 + amp·ξ₀ with the box mean of ξ₀ removed,
// and every angular mode m_n = a_n + i b_n (1 ≤ n ≤ M) = amp·(ξ + iξ′),
// with ξ independent and uniform in [−1, 1] at every grid point before
// dealiasing (a white perturbation of Ψ(x, θ)). The moment model takes
// q = m₂/2. The draws are made in the order c, a₁, b₁, a₂, b₂, …, so the
// kinetic and moment models start from the same c and Q for one seed.
// Lipid fields are not touched.
func (m *Model) InitIsotropic(amp float64, rng *rand.Rand) error {
	if m.iC < 0 {
		return errNoInclusions
	}
	if !(amp >= 0 && amp < 1) {
		return fmt.Errorf("fields: isotropic perturbation amplitude = %g: must be in [0, 1)", amp)
	}
	noise(m.t1, amp, rng)
	m.setReal(m.iC, m.t1)
	m.views[m.iC][0] = 1
	for n := 1; n <= m.harm; n++ {
		for part := 0; part < 2; part++ {
			noise(m.t1, amp, rng)
			switch {
			case m.p.Inclusions.Model == Kinetic:
				m.setReal(2*n-2+part+1, m.t1)
			case n == 2: // moments: Q = m₂/2
				for i := range m.t1 {
					m.t1[i] /= 2
				}
				m.setReal(m.iQ11+part, m.t1)
			}
		}
	}
	return nil
}

// InitAligned sets a uniform aligned (nematic) state, c = 1, with director
// angle (radians, from x) and nematic order S = order ∈ [0, 1]:
// q = (S/2)e^{2i·angle}. The kinetic model gets the angular modes of the
// symmetric pair of wrapped normal distributions about ±director, m_n =
// S^{n²/4} e^{in·angle} for even n and 0 for odd n [standard moments of
// the wrapped normal distribution; practice].
func (m *Model) InitAligned(angle, order float64) error {
	if m.iC < 0 {
		return errNoInclusions
	}
	if !(order >= 0 && order <= 1) || !finite(angle) {
		return fmt.Errorf("fields: aligned state order = %g, angle = %g rad: order must be in [0, 1] and the angle finite", order, angle)
	}
	for f, v := range m.views {
		if f != m.iPhi {
			clear(v)
		}
	}
	m.views[m.iC][0] = 1
	switch m.p.Inclusions.Model {
	case Moments:
		m.views[m.iQ11][0] = complex(order/2*math.Cos(2*angle), 0)
		m.views[m.iQ12][0] = complex(order/2*math.Sin(2*angle), 0)
	case Kinetic:
		for n := 2; n <= m.harm; n += 2 {
			a := math.Pow(order, float64(n*n)/4)
			m.views[2*n-1][0] = complex(a*math.Cos(float64(n)*angle), 0)
			m.views[2*n][0] = complex(a*math.Sin(float64(n)*angle), 0)
		}
	}
	return nil
}

// AddMode adds amp·cos(k·x + phase), k = 2π(nx/Lx, ny/Ly), to the evolved
// field called name (for the kinetic model "Q11" and "Q12" name ½a₂ and
// ½b₂). The mode must lie within the 2/3 dealiasing limits.
func (m *Model) AddMode(name string, nx, ny int, amp, phase float64) error {
	f, scale, err := m.fieldByName(name)
	if err != nil {
		return err
	}
	kxMax, kyMax := m.g.DealiasLimits()
	if nx < -kxMax || nx > kxMax || ny < -kyMax || ny > kyMax {
		return fmt.Errorf("fields: mode (%d, %d) of %q: indices must be within the dealiasing limits |nx| ≤ %d, |ny| ≤ %d", nx, ny, name, kxMax, kyMax)
	}
	if !finite(amp) || !finite(phase) {
		return fmt.Errorf("fields: mode of %q: amplitude %g and phase %g must be finite", name, amp, phase)
	}
	amp *= scale
	v := m.views[f]
	c := cmplx.Rect(amp/2, phase) // coefficient of e^{ik·x}; conj at −k
	if nx < 0 || (nx == 0 && ny < 0) {
		nx, ny, c = -nx, -ny, cmplx.Conj(c)
	}
	nk := m.g.Nkx()
	switch {
	case nx == 0 && ny == 0:
		v[0] += complex(amp*math.Cos(phase), 0)
	case nx == 0:
		v[m.g.RowOfModeY(ny)*nk] += c
		v[m.g.RowOfModeY(-ny)*nk] += cmplx.Conj(c)
	default:
		v[m.g.RowOfModeY(ny)*nk+nx] += c
	}
	return nil
}

// fieldByName returns the state index of name and the factor from the
// named quantity to the stored field (2 for Q₁₁, Q₁₂ of the kinetic model).
func (m *Model) fieldByName(name string) (int, float64, error) {
	if f := m.FieldIndex(name); f >= 0 {
		return f, 1, nil
	}
	if m.p.Inclusions.Model == Kinetic {
		switch name {
		case "Q11":
			return m.iQ11, 2, nil
		case "Q12":
			return m.iQ12, 2, nil
		}
	}
	return 0, 0, fmt.Errorf("fields: no field %q: valid are %v", name, m.names)
}

// SetFromReal sets the field called name from real values on the grid
// (value at (i, j) is data[j*Nx+i]), dropping modes beyond the dealiasing
// limit. For the kinetic model "Q11" and "Q12" set a₂ = 2Q₁₁, b₂ = 2Q₁₂. It
// returns a [NonFiniteError] naming the first bad point, and panics if the
// length does not match the grid.
func (m *Model) SetFromReal(name string, data []float64) error {
	if len(data) != m.g.RealLen() {
		panic(fmt.Sprintf("fields: SetFromReal(%q) length %d, want %d", name, len(data), m.g.RealLen()))
	}
	f, scale, err := m.fieldByName(name)
	if err != nil {
		return err
	}
	if err := m.finiteCheck(name, data); err != nil {
		return err
	}
	for i, v := range data {
		m.t1[i] = scale * v
	}
	m.setReal(f, m.t1)
	return nil
}

// InterfaceWidth returns the default width w of the smoothed interfaces of
// the lipid initial conditions, whose profile is tanh(d/w) at signed
// distance d: √2ε for Cahn–Hilliard (its equilibrium profile), else twice
// the grid spacing.
func (m *Model) InterfaceWidth() float64 {
	if m.p.Lipid.Model == CahnHilliard {
		return math.Sqrt2 * m.p.Lipid.Interface
	}
	return 2 * m.g.MinSpacing()
}

func (m *Model) lipidWidth(w float64) (float64, error) {
	if m.iPhi < 0 {
		return 0, errNoLipid
	}
	if w == 0 {
		return m.InterfaceWidth(), nil
	}
	if !(w > 0) || !finite(w) {
		return 0, fmt.Errorf("fields: interface width = %g ℓ₀: must be finite and > 0 (0 selects the default)", w)
	}
	return w, nil
}

// SetLipidUniform sets φ = mean everywhere.
func (m *Model) SetLipidUniform(mean float64) error {
	if m.iPhi < 0 {
		return errNoLipid
	}
	clear(m.views[m.iPhi])
	m.views[m.iPhi][0] = complex(mean, 0)
	return nil
}

// InitLipidRandom sets φ = mean + amp·ξ with ξ uniform in [−1, 1] at every
// grid point, its box mean removed, then dealiased (a quench from the mixed
// state).
func (m *Model) InitLipidRandom(mean, amp float64, rng *rand.Rand) error {
	if m.iPhi < 0 {
		return errNoLipid
	}
	if !finite(mean) || !(amp >= 0) || !finite(amp) {
		return fmt.Errorf("fields: random lipid mean = %g, amplitude = %g: must be finite, amplitude ≥ 0", mean, amp)
	}
	noise(m.t1, amp, rng)
	m.setReal(m.iPhi, m.t1)
	m.views[m.iPhi][0] = complex(mean, 0)
	return nil
}

// InitStripes sets count periods of φ = +1 | −1 bands along axis, each
// band half a period P wide, the first +1 band starting at the origin:
// φ = tanh(A sin(2πs/P)) with A = P/(2π·width), a smooth (analytic)
// square wave whose interfaces have the profile tanh(d/width) up to a
// relative distortion (2π·width/P)²/6 (width 0: [Model.InterfaceWidth]).
// The bulk value tanh(A) is within 1 % of ±1 when P ≥ 17·width.
func (m *Model) InitStripes(count int, axis Axis, width float64) error {
	w, err := m.lipidWidth(width)
	if err != nil {
		return err
	}
	if count < 1 {
		return fmt.Errorf("fields: stripe count = %d: must be ≥ 1", count)
	}
	L := m.g.Lx
	if axis == AxisY {
		L = m.g.Ly
	}
	period := L / float64(count)
	a := period / (2 * math.Pi * w)
	for j := 0; j < m.g.Ny; j++ {
		for i := 0; i < m.g.Nx; i++ {
			x := m.g.X(i)
			if axis == AxisY {
				x = m.g.Y(j)
			}
			m.t1[j*m.g.Nx+i] = math.Tanh(a * math.Sin(2*math.Pi*x/period))
		}
	}
	m.setReal(m.iPhi, m.t1)
	return nil
}

// InitHalves sets φ = +1 in the lower half of the box along axis and −1 in
// the upper half (two separated phases, to be mixed), interfaces smoothed
// as in InitStripes.
func (m *Model) InitHalves(axis Axis, width float64) error { return m.InitStripes(1, axis, width) }

// InitDisks sets φ = +1 inside count disks of the given radius and −1
// outside: each disk d has the indicator s_d = (1 + tanh((radius − r_d)/width))/2
// with r_d the periodic (nearest-image) distance to its centre, and
// φ = 1 − 2∏_d(1 − s_d), a smooth union (overlapping disks merge). Centres
// are uniform in the box. The radius plus a few widths should stay below
// half the box, where the nearest image switches.
func (m *Model) InitDisks(count int, radius, width float64, rng *rand.Rand) error {
	w, err := m.lipidWidth(width)
	if err != nil {
		return err
	}
	if count < 1 || !(radius > 0) || !finite(radius) {
		return fmt.Errorf("fields: disks count = %d, radius = %g ℓ₀: need count ≥ 1 and a finite radius > 0", count, radius)
	}
	g := m.g
	cx, cy := make([]float64, count), make([]float64, count)
	for d := range cx {
		cx[d], cy[d] = g.Lx*rng.Float64(), g.Ly*rng.Float64()
	}
	wrap := func(d, L float64) float64 { return d - L*math.Round(d/L) }
	for j := 0; j < g.Ny; j++ {
		for i := 0; i < g.Nx; i++ {
			out := 1.0
			for d := range cx {
				r := math.Hypot(wrap(g.X(i)-cx[d], g.Lx), wrap(g.Y(j)-cy[d], g.Ly))
				out *= (1 - math.Tanh((radius-r)/w)) / 2
			}
			m.t1[j*g.Nx+i] = 1 - 2*out
		}
	}
	m.setReal(m.iPhi, m.t1)
	return nil
}
