#!/usr/bin/python3
"""Reference values for the stability package tests.

Run with the Debian interpreter (it has SciPy and NumPy):

    /usr/bin/python3 stability/testdata/gen_reference.py > stability/testdata/reference.json

Everything here is computed independently of the Go code:
  * D(k) from the subphase tractions of MODEL.md section 1 (numpy coth/tanh);
  * s_act(k) = -(beta sigma0 c0 / 4) k^2 / D(k) - 4 D_r - D_t k^2 (MODEL.md 2.3);
  * the fastest-growing wavenumber by scipy.optimize.minimize_scalar (bounded,
    in ln k), the band edges by scipy.optimize.brentq, the critical activity
    by minimising the marginal activity g(k) = (4 D_r + D_t k^2) D(k) / k^2
    (s_act > 0 iff -beta sigma0 c0 / 4 > g(k));
  * the kinetic growth rates for V0 != 0 from the complex operator built
    directly in the angular moments m_n (not the real b_n variables or the
    mirror sectors the Go code uses), with the flow computed step by step
    (Q12 -> force -> projected velocity -> strain rate) and
    numpy.linalg.eigvals on its projections onto the mirror-odd
    (m_n = -m_{-n}) and mirror-even (m_n = m_{-n}) subspaces.
The test re-runs this script when SciPy is present and fails if the
committed output is stale.
"""
import json

import numpy as np
from scipy.optimize import brentq, minimize_scalar


def gamma(side, k):
    kind, eta, h = side["kind"], side.get("viscosity", 0.0), side.get("depth", 0.0)
    if kind == "none":
        return 0.0
    if kind == "deep":
        return eta * k
    if kind == "wall":
        return eta * k / np.tanh(k * h)
    if kind == "slip":
        return eta * k * np.tanh(k * h)
    raise ValueError(kind)


def D(mem, k):
    return mem["viscosity"] * k * k + gamma(mem["upper"], k) + gamma(mem["lower"], k) + mem["friction"]


def s_act(c, k):
    return -(c["beta"] * c["stress"] / 4) * k * k / D(c["membrane"], k) - 4 * c["dr"] - c["dt"] * k * k


def fastest(c):
    f = lambda k: s_act(c, k)
    ks = np.geomspace(c["kmin"], c["kmax"], 4001)
    ss = np.array([f(k) for k in ks])
    i = int(np.argmax(ss))
    if i == 0 or i == len(ks) - 1:
        return float(ks[i]), float(ss[i])
    r = minimize_scalar(lambda x: -f(np.exp(x)), bounds=(np.log(ks[i - 1]), np.log(ks[i + 1])),
                        method="bounded", options={"xatol": 1e-12})
    return float(np.exp(r.x)), float(f(np.exp(r.x)))


def bands(c):
    f = lambda k: s_act(c, k)
    ks = np.geomspace(c["kmin"], c["kmax"], 4001)
    ss = np.array([f(k) for k in ks])
    out = []
    lo = c["kmin"] if ss[0] > 0 else None
    for a, b, sa, sb in zip(ks[:-1], ks[1:], ss[:-1], ss[1:]):
        if (sa > 0) != (sb > 0):
            r = brentq(f, a, b, xtol=1e-300, rtol=1e-15, maxiter=500)
            if sb > 0:
                lo = r
            else:
                out.append([float(lo), float(r)])
                lo = None
    if lo is not None:
        out.append([float(lo), float(c["kmax"])])
    return out


def critical(c):
    """sigma0 c0 at threshold on [kmin, kmax]: -4 min_k g(k) / beta."""
    g = lambda k: (4 * c["dr"] + c["dt"] * k * k) * D(c["membrane"], k) / (k * k)
    ks = np.geomspace(c["kmin"], c["kmax"], 4001)
    gs = np.array([g(k) for k in ks])
    i = int(np.argmin(gs))
    if i == 0 or i == len(ks) - 1:
        kc, gc = ks[i], gs[i]
    else:
        r = minimize_scalar(lambda x: g(np.exp(x)), bounds=(np.log(ks[i - 1]), np.log(ks[i + 1])),
                            method="bounded", options={"xatol": 1e-12})
        kc, gc = np.exp(r.x), g(np.exp(r.x))
    return float(-4 * gc / c["beta"]), float(kc)


def kinetic_operator(c, speed, modes, k):
    """Complex operator of d/dt m_n, n = -M..M (index n + M)."""
    n_all = np.arange(-modes, modes + 1)
    size = 2 * modes + 1
    A = np.zeros((size, size), dtype=complex)
    for r, n in enumerate(n_all):
        A[r, r] = -n * n * c["dr"] - c["dt"] * k * k
        # self-propulsion: d/dt m_n += -V0 * (i k) * (m_{n+1} + m_{n-1}) / 2
        if r + 1 < size:
            A[r, r + 1] += -1j * k * speed / 2
        if r - 1 >= 0:
            A[r, r - 1] += -1j * k * speed / 2
    # flow, linear in m_2 and m_-2, built step by step for a unit perturbation
    # of each: Q12 = (m2 - m_-2)/(4i), f_y = i k sigma0 c0 Q12 (the stress
    # amplitude sigma0 multiplies Q, whose density is already in m_n; the
    # state has c0 = 1 here because the Go parameter is the product
    # sigma0 c0), u_y = f_y / D, E12 = i k u_y / 2, e = i E12, ebar = -i E12,
    # d/dt m_2 += beta c0 e, d/dt m_-2 += beta c0 ebar.
    i2, im2 = modes + 2, modes - 2
    for col, (dm2, dmm2) in ((i2, (1, 0)), (im2, (0, 1))):
        q12 = (dm2 - dmm2) / 4j
        fy = 1j * k * c["stress"] * q12
        uy = fy / D(c["membrane"], k)
        e12 = 1j * k * uy / 2
        A[i2, col] += c["beta"] * 1j * e12
        A[im2, col] += c["beta"] * (-1j) * e12
    return A


def kinetic_rates(c, speed, modes, k):
    """Leading real parts of the mirror-odd and mirror-even sectors.

    The reflection y -> -y maps m_n to m_{-n} (the matrix R reverses the
    index); the operator commutes with it (checked), so projecting it on
    the orthonormal bases of R = -1 and R = +1 gives the two sectors.
    """
    A = kinetic_operator(c, speed, modes, k)
    size = A.shape[0]
    R = np.eye(size)[::-1]
    if np.abs(R @ A - A @ R).max() > 1e-13 * np.abs(A).max():
        raise RuntimeError("operator does not commute with the mirror")
    odd = np.zeros((size, modes))
    even = np.zeros((size, modes + 1))
    even[modes, 0] = 1.0
    for n in range(1, modes + 1):
        odd[modes + n, n - 1], odd[modes - n, n - 1] = 2 ** -0.5, -(2 ** -0.5)
        even[modes + n, n], even[modes - n, n] = 2 ** -0.5, 2 ** -0.5
    lead = lambda B: float(np.linalg.eigvals(B.T @ A @ B).real.max())
    return lead(odd), lead(even)


def side(kind, viscosity=0.0, depth=0.0):
    return {"kind": kind, "viscosity": viscosity, "depth": depth}


CASES = [
    {"name": "deep", "membrane": {"viscosity": 1.0, "friction": 0.0,
                                  "upper": side("deep", 0.5), "lower": side("deep", 0.5)},
     "stress": -40.0, "beta": 1.0, "dr": 1.0, "dt": 0.1},
    {"name": "wall", "membrane": {"viscosity": 1.0, "friction": 0.0,
                                  "upper": side("wall", 1.0, 0.3), "lower": side("none")},
     "stress": -30.0, "beta": 0.8, "dr": 1.0, "dt": 0.05},
    {"name": "slip-deep-friction", "membrane": {"viscosity": 0.8, "friction": 0.2,
                                                "upper": side("slip", 0.7, 2.0), "lower": side("deep", 0.4)},
     "stress": 50.0, "beta": -0.6, "dr": 0.5, "dt": 0.02},
    {"name": "none", "membrane": {"viscosity": 1.0, "friction": 0.0,
                                  "upper": side("none"), "lower": side("none")},
     "stress": -20.0, "beta": 1.0, "dr": 1.0, "dt": 0.1},
]
KS = [0.01, 0.1, 0.5, 1.0, 2.0, 5.0, 10.0, 30.0]
KINETIC = [("deep", 0.5), ("deep", 3.0), ("wall", 2.0)]
KINETIC_KS = [0.2, 1.0, 3.0, 8.0]
KINETIC_MODES = 64


def main():
    out = {"cases": [], "kinetic": []}
    for c in CASES:
        c = dict(c, kmin=0.01, kmax=100.0)
        kf, sf = fastest(c)
        sc, kc = critical(c)
        out["cases"].append(dict(c, k=KS, s_act=[float(s_act(c, k)) for k in KS],
                                 fastest_k=kf, fastest_rate=sf, bands=bands(c),
                                 critical_stress=sc, critical_k=kc))
    by_name = {c["name"]: c for c in CASES}
    for name, speed in KINETIC:
        c = by_name[name]
        odd, even = zip(*(kinetic_rates(c, speed, KINETIC_MODES, k) for k in KINETIC_KS))
        out["kinetic"].append({"case": name, "speed": speed, "modes": KINETIC_MODES,
                               "k": KINETIC_KS, "odd": list(odd), "even": list(even)})
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
