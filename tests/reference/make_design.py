"""Writes tests/reference/design.json for tests/core/design/design-misclassification.test.ts:
the bivariate normal distribution function from scipy.stats.multivariate_normal.cdf (cross-checked
here against scipy.integrate.quad of phi(x)*Phi((y - rho*x)/sqrt(1 - rho^2))), and the expected future
misclassification probability E[Phi(-|M' - T|/s')] with M' ~ N(m, s^2 - s'^2) by scipy.integrate.quad
over M' (Debian python3-scipy)."""
import json
import math
import os

import numpy as np
import scipy
from scipy import integrate, stats
from scipy.special import ndtr

rng = np.random.default_rng(20240611)


def bvn_quad(x, y, rho):
    if abs(rho) == 1.0:
        return float(ndtr(min(x, y))) if rho > 0 else max(0.0, float(ndtr(x) - ndtr(-y)))
    s = math.sqrt(1 - rho * rho)
    f = lambda t: stats.norm.pdf(t) * ndtr((y - rho * t) / s)
    v, _ = integrate.quad(f, -40, x, epsabs=1e-15, epsrel=1e-13, limit=500)
    return v


points = [(0.0, 0.0), (0.5, -0.3), (1.2, 2.1), (-1.5, -0.7), (-3.0, 2.5), (2.5, 2.5), (-4.0, -4.5), (0.1, -2.0), (3.5, -3.2)]
rhos = [-0.999, -0.95, -0.93, -0.9, -0.8, -0.6, -0.4, -0.2, -0.05, 0.0, 0.1, 0.29, 0.31, 0.5, 0.74, 0.76, 0.9, 0.926, 0.97, 0.999]
cases = []
worst = 0.0
for (x, y) in points:
    for rho in rhos:
        v = float(stats.multivariate_normal.cdf([x, y], mean=[0, 0], cov=[[1, rho], [rho, 1]], abseps=1e-14, releps=1e-14))
        q = bvn_quad(x, y, rho)
        worst = max(worst, abs(v - q))
        cases.append({"x": x, "y": y, "rho": rho, "cdf": v})
for _ in range(40):
    x, y = rng.uniform(-4, 4, 2)
    rho = float(rng.uniform(-0.999, 0.999))
    v = float(stats.multivariate_normal.cdf([x, y], mean=[0, 0], cov=[[1, rho], [rho, 1]], abseps=1e-14, releps=1e-14))
    worst = max(worst, abs(v - bvn_quad(x, y, rho)))
    cases.append({"x": float(x), "y": float(y), "rho": rho, "cdf": v})
assert worst < 1e-9, worst


def expected_miss(m, s_now, s_after, t):
    sig = math.sqrt(s_now ** 2 - s_after ** 2)
    f = lambda z: stats.norm.pdf(z) * ndtr(-abs(m + sig * z - t) / s_after)
    z0 = (t - m) / sig  # the kink
    w = 40 * s_after / sig  # the width of the peak around the kink, in z
    total = 0.0
    for lo, hi in [(-40, z0 - w), (z0 - w, z0), (z0, z0 + w), (z0 + w, 40)]:
        if hi > lo:
            v, _ = integrate.quad(f, lo, hi, epsabs=1e-16, epsrel=1e-12, limit=500)
            total += v
    return total


expected = []
for (m, s_now, s_after, t) in [(10.0, 2.0, 1.5, 11.0), (10.0, 2.0, 0.5, 11.0), (10.0, 2.0, 1.99, 9.0), (5.0, 1.0, 0.2, 5.0),
                               (5.0, 1.0, 0.7, 7.5), (5.0, 1.0, 0.95, 2.0), (0.0, 3.0, 0.01, 1.0), (-2.0, 0.5, 0.3, -2.1)]:
    expected.append({"mean": m, "sdNow": s_now, "sdAfter": s_after, "threshold": t, "expected": expected_miss(m, s_now, s_after, t)})

out = {
    "source": f"scipy {scipy.__version__} scipy.stats.multivariate_normal.cdf (bivariate cases; agreeing with "
              f"scipy.integrate.quad to {worst:.1e}) and scipy.integrate.quad (expected misclassification)",
    "script": "tests/reference/make_design.py",
    "tolerance": {"abs": 1e-12},
    "cases": cases,
    "expected": expected,
    "expectedTolerance": {"abs": 1e-10},
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "design.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print("wrote", path, len(cases), "bivariate cases,", len(expected), "expectation cases; scipy vs quad", worst)
