// Package special evaluates the special functions memix needs and the Go
// standard library lacks: the modified Bessel functions of the second kind
// K_ν (K₀ and K₁ in particular) and the spherical Bessel functions j_n
// (equivalently the half-integer Bessel functions
// J_{n+1/2}(x) = sqrt(2x/π) j_n(x)), and all integer orders J_n(x) of one
// argument at once (math.Jn computes one order per call).
//
// # Methods and accuracy
//
// K_ν(x) is the integral K_ν(x) = ∫₀^∞ e^{−x cosh t} cosh(νt) dt evaluated
// with the trapezoidal rule, which converges exponentially for integrands
// analytic in a strip about the real axis (here |Im t| < π/2); the step is
// chosen from the strip width and x so that the discretisation error is
// below double-precision round-off (see [KScaled]). The Bessel functions
// of integer and half-integer order use upward recurrence where it is
// stable (n ≤ x) and Miller's downward recurrence above, matched at ⌊x⌋.
//
// All are checked against SciPy (scipy.special.kv, kve, k0, k1, jv,
// spherical_jn) and the Bessel functions also against their power series
// summed in high-precision decimal arithmetic (correctly rounded), by
// testdata/gen.py, whose output
// testdata/bessel.csv is committed; the tests re-run the generator when
// /usr/bin/python3 has SciPy and fail if the committed table is stale.
//
// The functions are pure: they keep no state and allocate nothing unless
// documented.
package special
