package fields

// RHS exposes the explicit right-hand side N(state, t) for tests: it
// returns one slice per evolved field (copies).
func (m *Model) RHS(t float64) [][]complex128 {
	dst := make([]complex128, m.nf*m.stride)
	if _, err := m.rhs(dst, m.state, t, false); err != nil {
		panic(err)
	}
	out := make([][]complex128, m.nf)
	for f := range out {
		out[f] = append([]complex128(nil), dst[f*m.stride:f*m.stride+m.n]...)
	}
	return out
}

// Coef exposes the ETDRK4 coefficients for tests.
func Coef(l, h float64) (e, e2, q, f1, f2, f3 float64) {
	c := etdCoef(l, h)
	return c.e, c.e2, c.q, c.f1, c.f2, c.f3
}

// DiagnosticForce returns a copy of the total force density (active plus
// Korteweg) of the last Diagnostics or UpdateViews.
func (m *Model) DiagnosticForce() (fx, fy []complex128) {
	fx, fy = make([]complex128, m.n), make([]complex128, m.n)
	for i := range fx {
		fx[i] = m.dfx[i] + m.dkx[i]
		fy[i] = m.dfy[i] + m.dky[i]
	}
	return fx, fy
}
