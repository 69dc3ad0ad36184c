#!/usr/bin/python3
"""Reference values for the test of memix response (cmd/memix/response_test.go).

Run with Debian's interpreter, which has SciPy:

    /usr/bin/python3 cmd/memix/testdata/response_ref.py > cmd/memix/testdata/response_ref.csv

A point force F on the membrane drives u = G.F, G = Gpar rr + Gperp (I - rr).
Each row is: case, x, 4 pi eta_m Gpar, 4 pi eta_m Gperp (dimensionless), at
x = 10^(-1 + i/4), i = 0..8, the distances that

    memix response CONFIG --rmin 0.1L --rmax 10L --points 9

asks for, with L the length of the case. Closed forms [derived, MODEL.md 1.1]:

deep     D = eta_m k^2 + eta_s k, eta_s = eta_+ + eta_-, x = r eta_s/eta_m
         (same form as Levine & MacKintosh, Phys. Rev. E 66, 061606 (2002);
         Oppenheimer & Diamant, Biophys. J. 96, 3041 (2009)):
           4 pi eta_m Gpar  = (pi/x)[H1(x) - Y1(x)] - 2/x^2
           4 pi eta_m Gperp = pi[H0(x) - Y0(x)] - (pi/x)[H1(x) - Y1(x)] + 2/x^2
friction D = eta_m k^2 + xi, x = r sqrt(xi/eta_m):
           4 pi eta_m Gpar  = 2/x^2 - 2 K1(x)/x
           4 pi eta_m Gperp = 2 K0(x) + 2 K1(x)/x - 2/x^2

with scipy.special.struve, y0, y1, k0, k1. On 0.1 <= x <= 10 the 2/x^2 terms
cancel at most a factor of about 100 above the result, so the values are good
to about 1e-13. Values are written with repr() so that a re-run reproduces the
file byte for byte.
"""
import numpy as np
from scipy import special as sp

print("case,x,par_scaled,perp_scaled")
for i in range(9):
    x = 10.0 ** (-1 + i / 4)
    sh1 = sp.struve(1, x) - sp.y1(x)
    sh0 = sp.struve(0, x) - sp.y0(x)
    par = np.pi / x * sh1 - 2 / x**2
    perp = np.pi * sh0 - np.pi / x * sh1 + 2 / x**2
    print("deep,%r,%r,%r" % (x, float(par), float(perp)))
for i in range(9):
    x = 10.0 ** (-1 + i / 4)
    k0, k1 = sp.k0(x), sp.k1(x)
    par = 2 / x**2 - 2 * k1 / x
    perp = 2 * k0 + 2 * k1 / x - 2 / x**2
    print("friction,%r,%r,%r" % (x, float(par), float(perp)))
