package fields

import "fmt"

// NonFiniteError reports a NaN or infinite value in a field: the field's
// name, the number of steps taken when it was found, the model time and
// the grid point (I, J), at x = I·Lx/Nx, y = J·Ly/Ny, of the first bad
// value in storage order. After a blow-up has passed through a transform
// every point is non-finite and (I, J) is (0, 0); the index is informative
// for a local overflow or bad input data.
type NonFiniteError struct {
	Field string
	Step  int
	Time  float64
	I, J  int
	Value float64
}

func (e *NonFiniteError) Error() string {
	return fmt.Sprintf("fields: non-finite value %v in field %q at grid point (%d, %d) after step %d (t = %g τ₀)",
		e.Value, e.Field, e.I, e.J, e.Step, e.Time)
}

// StepError reports that the step-size limit fell below the floor
// Stepping.DtMin: the run is unresolved or unstable.
type StepError struct {
	Step   int     // steps taken before the failed step
	Time   float64 // model time, τ₀
	Dt     float64 // the step the limits allow, τ₀
	DtMin  float64 // the floor, τ₀
	Limit  Limit   // the binding limit
	Speed  float64 // max advective speed, ℓ₀/τ₀
	RotMax float64 // max rotation rate, 1/τ₀
}

func (e *StepError) Error() string {
	return fmt.Sprintf("fields: step %d at t = %g τ₀: the %v limit allows dt = %g τ₀, below Stepping.DtMin = %g τ₀ (max speed %g ℓ₀/τ₀, max rotation rate %g 1/τ₀)",
		e.Step+1, e.Time, e.Limit, e.Dt, e.DtMin, e.Speed, e.RotMax)
}

// finiteSum reports whether every value of s is finite: v − v is NaN
// exactly for NaN and ±Inf, and a NaN propagates through the sum.
func finiteSum(s []complex128) bool {
	var a float64
	for _, v := range s {
		a += (real(v) - real(v)) + (imag(v) - imag(v))
	}
	return a == a
}

// finiteCheck returns a NonFiniteError for the first non-finite value of
// the real field x, or nil.
func (m *Model) finiteCheck(name string, x []float64) error {
	var a float64
	for _, v := range x {
		a += v - v
	}
	if a == a {
		return nil
	}
	for idx, v := range x {
		if v-v != 0 {
			return &NonFiniteError{Field: name, Step: m.steps, Time: m.time, I: idx % m.g.Nx, J: idx / m.g.Nx, Value: v}
		}
	}
	return nil
}
