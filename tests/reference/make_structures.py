"""Writes structures.json: anisotropic REML maximised by scipy, and nested (two-structure) REML values.

Likelihood (Patterson & Thompson 1971; Harville 1977), sill profiled out, constant unknown mean:
  R = rho(h_eff; scale) + eta I,  sigma2_hat = Q/(n-1),
  l*(theta) = -1/2 [(n-1)(ln sigma2_hat + 1 + ln 2 pi) + ln|R| + ln|1' R^-1 1|].
Geometric anisotropy: the long axis points `azimuth` degrees clockwise from north, (sin a, cos a) in
(east, north); h_eff = sqrt(along^2 + (across/ratio)^2). Matern nu = 3/2: (1 + z) exp(-z), z = sqrt(3) h/scale
(Rasmussen & Williams 2006, eq. 4.17).
Part 1: invented data (numpy, seeded), the REML maximised over (scale, eta, azimuth, ratio) with
scipy.optimize (Nelder-Mead from a grid of starts, then L-BFGS-B with bounds), all in numpy, independently
of the TypeScript code. Part 2: nested correlation w rho(h; s1) + (1 - w) rho(h; s2) + eta I at fixed
parameters, evaluated the same plain way.
Run with Debian's /usr/bin/python3 (python3-scipy).
"""
import json
import math
import os

import numpy as np
from scipy import optimize

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261203)

n = 150
x = 600000.0 + rng.uniform(0, 1000, n)
y = 5200000.0 + rng.uniform(0, 1000, n)
dx = x[:, None] - x[None, :]
dy = y[:, None] - y[None, :]


def h_eff(azimuth, ratio):
    a = math.radians(azimuth)
    along = dx * math.sin(a) + dy * math.cos(a)
    across = dx * math.cos(a) - dy * math.sin(a)
    return np.sqrt(along ** 2 + (across / ratio) ** 2)


def m32(h, scale):
    z = math.sqrt(3) * h / scale
    return (1 + z) * np.exp(-z)


TRUE = {"azimuth": 60.0, "ratio": 0.35, "scale": 250.0, "nugget": 0.1, "sill": 1.0, "mean": 5.0}
K = TRUE["sill"] * m32(h_eff(TRUE["azimuth"], TRUE["ratio"]), TRUE["scale"]) + TRUE["nugget"] * np.eye(n)
value = TRUE["mean"] + np.linalg.cholesky(K) @ rng.standard_normal(n)


def reml(R):
    one = np.ones(n)
    sign, logdet_r = np.linalg.slogdet(R)
    if sign <= 0:
        return -np.inf
    Ri1 = np.linalg.solve(R, one)
    Riy = np.linalg.solve(R, value)
    a = float(one @ Ri1)
    beta = float(one @ Riy) / a
    r = value - beta
    Q = float(r @ np.linalg.solve(R, r))
    s2 = Q / (n - 1)
    return -0.5 * ((n - 1) * (math.log(s2) + 1 + math.log(2 * math.pi)) + logdet_r + math.log(a)), s2


def aniso_loglik(scale, eta, azimuth, ratio):
    R = m32(h_eff(azimuth, ratio), scale) + eta * np.eye(n)
    return reml(R)


def negative(z):
    # z = (ln scale, ln eta, azimuth in degrees, ln ratio)
    if not (math.log(5) < z[0] < math.log(1e5) and -14 < z[1] < math.log(1e3) and math.log(0.02) <= z[3] <= 0):
        return 1e10
    return -aniso_loglik(math.exp(z[0]), math.exp(z[1]), z[2], math.exp(z[3]))[0]


best = None
for azimuth in (0, 45, 90, 135):
    for ratio in (0.6, 0.3):
        for scale in (150.0, 400.0):
            res = optimize.minimize(negative, [math.log(scale), math.log(0.1), azimuth, math.log(ratio)], method="Nelder-Mead",
                                    options={"xatol": 1e-9, "fatol": 1e-11, "maxiter": 20000, "maxfev": 20000})
            if best is None or res.fun < best.fun:
                best = res
polish = optimize.minimize(negative, best.x, method="L-BFGS-B",
                           bounds=[(math.log(5), math.log(1e5)), (-14, math.log(1e3)), (-720, 720), (math.log(0.02), 0)],
                           options={"ftol": 1e-15, "gtol": 1e-10})
z = polish.x if polish.fun <= best.fun else best.x
ll, s2 = aniso_loglik(math.exp(z[0]), math.exp(z[1]), z[2], math.exp(z[3]))
azimuth = z[2] % 180.0
optimum = {"scale": math.exp(z[0]), "nuggetRatio": math.exp(z[1]), "azimuth": azimuth, "ratio": math.exp(z[3]),
           "logLikelihood": ll, "sigma2": s2}

# Values at fixed points (the function itself, not only its optimum).
points = []
for scale, eta, az, ratio in ((250.0, 0.1, 60.0, 0.35), (120.0, 0.5, 150.0, 0.8), (400.0, 0.02, 10.0, 0.2)):
    l, s = aniso_loglik(scale, eta, az, ratio)
    points.append({"scale": scale, "nuggetRatio": eta, "azimuth": az, "ratio": ratio, "logLikelihood": l, "sigma2": s})

nested = []
for s1, s2_, w, eta in ((60.0, 400.0, 0.4, 0.1), (30.0, 900.0, 0.7, 0.02), (150.0, 300.0, 0.5, 0.3)):
    h = np.sqrt(dx * dx + dy * dy)
    R = w * m32(h, s1) + (1 - w) * m32(h, s2_) + eta * np.eye(n)
    l, s = reml(R)
    nested.append({"shortScale": s1, "longScale": s2_, "shortShare": w, "nuggetRatio": eta, "logLikelihood": l, "sigma2": s})

out = {
    "source": "numpy/scipy: REML (profiled sill, constant mean) written with numpy.linalg; the anisotropic optimum by "
              "scipy.optimize Nelder-Mead from 16 starts then L-BFGS-B",
    "script": "tests/reference/make_structures.py",
    "tolerance": {"rel": 1e-9},
    "optimumTolerance": {"logLikelihoodAbs": 2e-3, "azimuthDegrees": 1.0, "rel": 0.03},
    "family": "matern", "nu": 1.5,
    "truth": TRUE,
    "x": x.tolist(), "y": y.tolist(), "value": value.tolist(),
    "optimum": optimum,
    "cases": points,
    "nested": nested,
}
with open(os.path.join(HERE, "structures.json"), "w") as f:
    json.dump(out, f, indent=1)
print("optimum", optimum)
