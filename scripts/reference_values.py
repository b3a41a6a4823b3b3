#!/usr/bin/env python3
"""Reference values used by beamwright's tests, computed with SciPy.

Run: python3 scripts/reference_values.py   (needs numpy and scipy)

Each block prints the value and says which test uses it. Nothing here
imports beamwright: these are independent numbers.
"""
import numpy as np
from scipy.integrate import quad
from scipy.optimize import brentq, minimize_scalar
from scipy.special import i0e, i1e, iv, j0, j1, jn_zeros

print("# Focus of a Gaussian times exp(i*phi) (charge-1 spiral plate, lens f)")
# U(rho) ∝ ∫ exp(-a r²) J1(b r) r dr = sqrt(pi) b / (8 a^1.5) e^{-x} [I0(x) - I1(x)],
# x = b²/(8a)  (Gradshteyn & Ryzhik 6.618.4, from memory). Check by quadrature:
a, b = 1.0, 2.0
x = b * b / (8 * a)
closed = np.sqrt(np.pi) * b / (8 * a**1.5) * np.exp(-x) * (iv(0, x) - iv(1, x))
numeric = quad(lambda r: np.exp(-a * r * r) * j1(b * r) * r, 0, 20)[0]
print(f"closed form {closed:.15f}  quadrature {numeric:.15f}")
# |U|² ∝ x e^{-2x} (I0 - I1)²; with a = 1/w0², b = 2π ρ/(λ f): ρ = sqrt(2x)·w_f,
# w_f = λ f/(π w0). Ring maximum:
res = minimize_scalar(lambda x: -(x * (i0e(x) - i1e(x)) ** 2), bounds=(0.01, 5), method="bounded",
                      options={"xatol": 1e-12})
print(f"ring radius / w_f = {np.sqrt(2 * res.x):.5f}   (tests/cli.rs donut example: 0.84424)")

print("\n# Airy pattern (Born & Wolf §8.5, from memory)")
z1 = jn_zeros(1, 3)
print("first zeros of J1 / pi:", z1 / np.pi, " (1.21967, 2.23313, 3.23832 λf/D)")
print("encircled energy at the dark rings:", 1 - j0(z1) ** 2 - j1(z1) ** 2, " (0.83778, 0.90993, 0.93765)")

print("\n# Strehl of pure defocus, uniform pupil: (sin β/β)², β = 2√3 π a4")
for a4 in [0.02, 0.05, 0.1]:
    beta = 2 * np.sqrt(3) * np.pi * a4
    print(f"a4 = {a4}: exact {np.sin(beta)**2/beta**2:.5f}  Maréchal {np.exp(-(2*np.pi*a4)**2):.5f}")

print("\n# Spiral phase plate on a Gaussian: LG_p,1 fractions (PHYSICS.md §3)")
from math import gamma, factorial, pi
for p in range(3):
    l = 1
    c = gamma(l / 2 + 1) * gamma(p + l / 2) / (gamma(l / 2) * np.sqrt(factorial(p) * factorial(p + l)))
    print(f"p = {p}: {c*c:.7f}")
print("pi/4 =", pi / 4)
