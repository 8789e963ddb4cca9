"""Writes local_kriging.json: exact kriging on 2,000 invented samples, the reference for local kriging.

Data: 2,000 points uniform in a 1,000 m square (mean spacing about 22 m), a Gaussian field with a
Matern 3/2 covariance (sill 1, scale 40 m, so a practical range of about 110 m, five spacings;
Rasmussen & Williams 2006, eq. 4.17) plus a nugget of 0.1 and a mean of 5, from a seeded generator.
Exact answers with all samples, computed with numpy/scipy (scipy.linalg.cho_factor / cho_solve):
  ordinary kriging (unknown constant mean, GLS beta; Cressie 1993 eq. 3.2.12-3.2.16 in dual form)
  and simple kriging with the known mean 5: mean and sd of the noise-free surface at 15 x 15 grid
  points over the square (edges included) and at 25 sample locations.
Run with Debian's /usr/bin/python3.
"""
import json
import math
import os

import numpy as np
import scipy
from scipy import linalg

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20240613)
n = 2000
x = rng.uniform(0, 1000, n)
y = rng.uniform(0, 1000, n)
SILL, SCALE, NUGGET, MEAN = 1.0, 40.0, 0.1, 5.0


def matern32(h):
    a = math.sqrt(3) * h / SCALE
    return SILL * (1 + a) * np.exp(-a)


D = np.sqrt((x[:, None] - x[None, :]) ** 2 + (y[:, None] - y[None, :]) ** 2)
C = matern32(D)
value = MEAN + np.linalg.cholesky(C + 1e-10 * np.eye(n)) @ rng.standard_normal(n) + math.sqrt(NUGGET) * rng.standard_normal(n)

g = np.linspace(0, 1000, 15)
GX, GY = np.meshgrid(g, g)
tx = np.concatenate([GX.ravel(), x[:25]])
ty = np.concatenate([GY.ravel(), y[:25]])

K = C + NUGGET * np.eye(n)
cf = linalg.cho_factor(K, lower=True)
k0 = matern32(np.sqrt((tx[:, None] - x[None, :]) ** 2 + (ty[:, None] - y[None, :]) ** 2))  # targets x samples
Kik0 = linalg.cho_solve(cf, k0.T)  # n x targets
one = np.ones(n)
Ki1 = linalg.cho_solve(cf, one)
G = one @ Ki1
beta = (Ki1 @ value) / G
alpha_ok = linalg.cho_solve(cf, value - beta)
alpha_sk = linalg.cho_solve(cf, value - MEAN)
quad = np.einsum("ij,ji->i", k0, Kik0)
mean_ok = beta + k0 @ alpha_ok
var_ok = SILL - quad + (1 - one @ Kik0) ** 2 / G
mean_sk = MEAN + k0 @ alpha_sk
var_sk = SILL - quad

model = {"structures": [{"type": "nugget", "sill": NUGGET}, {"type": "matern", "sill": SILL, "scale": SCALE, "nu": 1.5}],
         "transform": "none"}
out = {
    "source": f"numpy {np.__version__} / scipy {scipy.__version__}: dense Cholesky kriging with all samples",
    "script": "tests/reference/make_local_kriging.py",
    "tolerance": {"meanAbsOverPriorSd": 0.01, "sdRel": 0.02},
    "data": {"x": x.tolist(), "y": y.tolist(), "value": value.tolist()},
    "targets": {"x": tx.tolist(), "y": ty.tolist()},
    "cases": [
        {"name": "ordinary", "model": {**model, "trend": "constant"}, "beta": beta,
         "mean": mean_ok.tolist(), "sd": np.sqrt(np.maximum(var_ok, 0)).tolist()},
        {"name": "simple", "model": {**model, "trend": {"known": MEAN}},
         "mean": mean_sk.tolist(), "sd": np.sqrt(np.maximum(var_sk, 0)).tolist()},
    ],
}
with open(os.path.join(HERE, "local_kriging.json"), "w") as f:
    json.dump(out, f)
print("beta", beta, "sd range", np.sqrt(var_ok).min(), np.sqrt(var_ok).max())
