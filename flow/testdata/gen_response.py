#!/usr/bin/python3
"""Reference values for the point-force response of the infinite membrane
(memix flow package, MODEL.md section 1.1). Run with the Debian SciPy:

    /usr/bin/python3 flow/testdata/gen_response.py > flow/testdata/response.csv

The response of a point force F is u = G.F, G = Gpar rr + Gperp (I - rr),
written here scaled as 4 pi eta_m G (dimensionless). Two kinds of rows:

closed  Closed forms [derived, MODEL.md 1.1], evaluated without the
        cancellations of their textbook shape:
        * deep subphases, D = eta_m k^2 + eta_s k, x = r eta_s/eta_m (same form
          as Levine & MacKintosh, Phys. Rev. E 66, 061606 (2002); Oppenheimer &
          Diamant, Biophys. J. 96, 3041 (2009)):
            4 pi eta_m Gpar  = (pi/x)[H1 - Y1] - 2/x^2
            4 pi eta_m Gperp = pi[H0 - Y0] - (pi/x)[H1 - Y1] + 2/x^2
          with the Laplace-integral form of the Struve-Neumann difference
          (Abramowitz & Stegun 12.1.29), H_nu - Y_nu =
          2 (x/2)^nu / (sqrt(pi) Gamma(nu+1/2)) int_0^inf e^{-xt}(1+t^2)^{nu-1/2} dt,
          and 2/x^2 = 2 int_0^inf t e^{-xt} dt, which gives
            4 pi eta_m Gpar  = 2 int_0^inf e^{-xt} [sqrt(1+t^2) - t] dt
            4 pi eta_m Gperp = 2 int_0^inf e^{-xt} [1/sqrt(1+t^2) - sqrt(1+t^2) + t] dt
          (scipy.integrate.quad). Checked here against scipy.special.struve,
          y0, y1 where the textbook form is well conditioned.
        * friction, D = eta_m k^2 + xi, x = r sqrt(xi/eta_m):
            4 pi eta_m Gpar  = 2/x^2 - 2 K1(x)/x
            4 pi eta_m Gperp = 2 K0(x) + 2 K1(x)/x - 2/x^2
          with scipy.special.k0, k1; for x < 1 the difference K1(x) - 1/x
          comes from its ascending series (Abramowitz & Stegun 9.6.11) to
          avoid cancelling 1/x^2 terms.
hankel  Direct numerical Hankel quadrature of P/D for any membrane:
            Gpar  = (1/(2 pi r)) int_0^inf J1(kr)/D(k) dk,
            Gperp = (1/(2 pi))   int_0^inf k J1'(kr)/D(k) dk
        (the second from the angular integral of P: J0 - J2 = 2 J1').
        The integrals are split at the zeros of J1 resp. J1'
        (scipy.special.jn_zeros, jnp_zeros); the first piece is done by
        scipy.integrate.quad (adaptive), the others by 40-point Gauss-Legendre
        (numpy.polynomial.legendre.leggauss), and the alternating partial sums
        are accelerated by repeated averaging (Euler's transformation of an
        alternating series, practice). This is deliberately a different
        route from the Go code (which uses the J1 form of Gperp after
        integrating by parts, adaptive bisection and Wynn's epsilon
        algorithm); on the deep and friction cases it is checked here
        against the closed forms.

Columns: case, method, r, par, perp, err. par and perp are 4 pi eta_m G, err
an absolute error estimate for both (the larger of the method's own
estimates, see below). Cases and their membranes are listed in CASES and
mirrored in the Go test.
"""
import math
import sys

import numpy as np
from scipy import integrate, special

# name: (eta_m, xi, upper (kind, eta, H), lower (kind, eta, H))
CASES = {
    "deep": (1.0, 0.0, ("deep", 0.5, 0.0), ("deep", 0.5, 0.0)),
    "friction": (1.0, 1.0, ("none", 0.0, 0.0), ("none", 0.0, 0.0)),
    "wall": (1.0, 0.0, ("none", 0.0, 0.0), ("wall", 1.0, 0.2)),
    "slip+deep": (1.0, 0.0, ("deep", 1.0, 0.0), ("slip", 1.0, 2.0)),
    "mixed": (1.0, 0.3, ("wall", 2.0, 1.0), ("deep", 0.5, 0.0)),
}
EPS = np.finfo(float).eps


def gamma(side, k):
    kind, eta, h = side
    if kind == "deep":
        return eta * k
    if kind == "wall":
        return eta * k / np.tanh(k * h)
    if kind == "slip":
        return eta * k * np.tanh(k * h)
    return 0.0 * k


def dfun(case):
    eta_m, xi, up, lo = CASES[case]
    return lambda k: eta_m * k * k + gamma(up, k) + gamma(lo, k) + xi


def features(case):
    """Wavenumbers where D changes form (for splitting and the tail start)."""
    eta_m, xi, up, lo = CASES[case]
    ks = [math.sqrt(xi / eta_m)] if xi > 0 else []
    for kind, eta, h in (up, lo):
        if kind != "none":
            ks.append(eta / eta_m)
        if kind in ("wall", "slip"):
            ks.append(1.0 / h)
    return ks


def crossover_length(case):
    """1/k_c with eta_m k_c^2 = D(k_c) - eta_m k_c^2 (independent of the Go code)."""
    eta_m, xi, up, lo = CASES[case]
    rest = lambda k: gamma(up, k) + gamma(lo, k) + xi
    f = lambda lk: math.log(rest(math.exp(lk)) / (eta_m * math.exp(2 * lk)))
    from scipy.optimize import brentq
    return math.exp(-brentq(f, -30, 30, xtol=1e-15))


# ---- closed forms -------------------------------------------------------
def deep_closed(x):
    # sqrt(1+t^2) - t = 1/(sqrt(1+t^2) + t) and
    # 1/sqrt(1+t^2) - sqrt(1+t^2) + t = t/(sqrt(1+t^2) (sqrt(1+t^2) + t)),
    # written without cancellation; the range is split at t = 1 and t = 1/x.
    fp = lambda t: math.exp(-x * t) / (math.hypot(1, t) + t)
    fq = lambda t: math.exp(-x * t) * t / (math.hypot(1, t) * (math.hypot(1, t) + t))
    ip = ep = iq = eq = 0.0
    cuts = sorted({0.0, 1.0, 1.0 / x})
    for a, b in zip(cuts, cuts[1:] + [np.inf]):
        opts = dict(epsabs=0, epsrel=2e-14, limit=400)
        v, e = integrate.quad(fp, a, b, **opts)
        ip, ep = ip + v, ep + e
        v, e = integrate.quad(fq, a, b, **opts)
        iq, eq = iq + v, eq + e
    par, perp = 2 * ip, 2 * iq
    err = max(2 * ep, 2 * eq, 4 * EPS * max(abs(par), abs(perp)))
    # Cross-check with the textbook Struve/Neumann form where it is well
    # conditioned: its rounding error is ~eps times its largest term.
    a = math.pi / x * (special.struve(1, x) - special.y1(x))
    b = math.pi * (special.struve(0, x) - special.y0(x))
    tp, tq = a - 2 / x**2, b - a + 2 / x**2
    # Allowance: 1e3 eps for the cancellation of the largest term, and 2e-12
    # of the largest term for scipy's Struve functions themselves, whose
    # large-x accuracy is about 1e-12 (observed: up to 7e-13 of the term
    # near x = 500 against the integral form).
    cond = (1e3 * EPS + 2e-12) * max(abs(a), abs(b), 2 / x**2)
    assert abs(tp - par) <= cond + err and abs(tq - perp) <= cond + err, (x, par, tp, perp, tq)
    return par, perp, err


def k1_minus_inv(x):
    """K1(x) - 1/x by the ascending series (A&S 9.6.11) for x < 1."""
    s = 0.0
    q = x * x / 4
    term = 1.0
    for k in range(30):
        if k > 0:
            term *= q / (k * (k + 1))
        s += (special.digamma(k + 1) + special.digamma(k + 2)) * term
    return special.i1(x) * math.log(x / 2) - x / 4 * s


def friction_closed(x):
    if x < 1:
        t = k1_minus_inv(x)  # K1 - 1/x
        par = -2 * t / x
        perp = 2 * special.k0(x) + 2 * t / x
    else:
        par = 2 / x**2 - 2 * special.k1(x) / x
        perp = 2 * special.k0(x) + 2 * special.k1(x) / x - 2 / x**2
    err = 16 * EPS * max(abs(par), abs(perp))
    if x >= 1e-2:  # the textbook form keeps enough digits here to compare
        tp = 2 / x**2 - 2 * special.k1(x) / x
        cond = 16 * EPS * 2 / x**2
        assert abs(tp - par) <= cond + err, (x, par, tp)
    return par, perp, err


# ---- direct Hankel quadrature --------------------------------------------
GLX, GLW = np.polynomial.legendre.leggauss(40)


def alternating_limit(pieces):
    """Limit of the partial sums of an alternating tail by repeated averaging,
    with an error estimate from the last two averaging levels and from
    dropping the last 10% of the terms."""
    def avg(seq, levels):
        s = np.cumsum(seq)[-(levels + 1):]
        for _ in range(levels):
            s = 0.5 * (s[1:] + s[:-1])
        return s[0]
    n = len(pieces)
    e0 = avg(pieces, 12)
    e1 = avg(pieces, 11)
    e2 = avg(pieces[: int(0.9 * n)], 12)
    return e0, max(abs(e0 - e1), abs(e0 - e2))


def hankel_one(integrand, zeros, r, feat):
    # First piece by adaptive quad with the features as break points.
    pts = sorted(x for x in (f * r for f in feat) if 0 < x < zeros[0])
    first, e_first = integrate.quad(integrand, 0, zeros[0], points=pts or None, epsabs=0, epsrel=1e-13, limit=1000)
    a, b = zeros[:-1], zeros[1:]
    xs = 0.5 * (a + b)[:, None] + 0.5 * (b - a)[:, None] * GLX[None, :]
    pieces = (integrand(xs) * GLW[None, :]).sum(axis=1) * 0.5 * (b - a)
    tail, e_tail = alternating_limit(pieces)
    # Rounding: the pieces alternate and may be much larger than their sum;
    # allow 10 eps of the sum of their magnitudes.
    e_round = 10 * EPS * (abs(first) + np.abs(pieces).sum())
    return first + tail, e_first + e_tail + e_round


def hankel(case, r):
    eta_m = CASES[case][0]
    d = dfun(case)
    feat = features(case)
    xend = max(2000.0, 60 * r * max(feat))
    n = int(xend / math.pi) + 50
    z1 = special.jn_zeros(1, n)
    zp = special.jnp_zeros(1, n)
    fpar = lambda x: special.j1(x) / d(x / r) / r
    fperp = lambda x: x * special.jvp(1, x) / d(x / r) / r**2
    ip, ep = hankel_one(fpar, z1, r, feat)
    iq, eq = hankel_one(fperp, zp, r, feat)
    s = 4 * math.pi * eta_m / (2 * math.pi)
    par, perp = s * ip / r, s * iq
    err = max(s * ep / r, s * eq, 8 * EPS * max(abs(par), abs(perp)))
    return par, perp, err


def main(out):
    out.write("case,method,r,par,perp,err\n")
    rows = []
    for case, x2r, closed in (("deep", lambda x: x * 1.0, deep_closed), ("friction", lambda x: x * 1.0, friction_closed)):
        # deep: L_SD = eta_m/(eta_+ + eta_-) = 1; friction: sqrt(eta_m/xi) = 1.
        for x in np.logspace(-3, 3, 25):
            par, perp, err = closed(x)
            rows.append((case, "closed", x2r(x), par, perp, err))
    for case in CASES:
        lc = crossover_length(case)
        for p in range(-3, 4):
            r = lc * 10.0**p
            par, perp, err = hankel(case, r)
            if case in ("deep", "friction"):
                cp, cq, ce = (deep_closed if case == "deep" else friction_closed)(r)
                # The two references must agree within their error estimates
                # (times 2 for the estimates' own uncertainty).
                assert abs(cp - par) <= 2 * (err + ce) and abs(cq - perp) <= 2 * (err + ce), (case, r, par, cp, perp, cq, err)
            rows.append((case, "hankel", r, par, perp, err))
    for row in rows:
        out.write("%s,%s,%.17g,%.17g,%.17g,%.3g\n" % row)


if __name__ == "__main__":
    main(sys.stdout)
