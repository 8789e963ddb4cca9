#!/usr/bin/python3
"""Writes tests/reference/surface.json: kriging surfaces on small masked grids, for
tests/core/prediction/surface.test.ts.

Simple kriging (known mean m): scikit-learn GaussianProcessRegressor with a fixed kernel
ConstantKernel(sill) * Matern(length_scale=scale, nu) and alpha = nugget (optimizer=None), fitted to
y - m; its predictive std excludes alpha, i.e. it is the sd of the noise-free surface.
Ordinary kriging (unknown constant mean): scipy.linalg.solve of the bordered system
[[K, 1], [1^T, 0]] (lambda; mu) = (k0; 1), mean = lambda . y, variance = c0 - lambda . k0 - mu
(Cressie 1993, ch. 3), with sklearn's Matern kernel for the covariances.
P(exceed) = scipy.stats.norm.sf(T, mean, sd); for the log transform on the log scale.
Grid convention: cell (i, j) centre = (x0 + (i + 0.5) cell, y0 - (j + 0.5) cell), row-major from the top.

Run with Debian's python: /usr/bin/python3 tests/reference/make_surface.py
"""
import json
import os

import numpy as np
import scipy
import sklearn
from scipy import linalg, stats
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import ConstantKernel, Matern

rng = np.random.default_rng(20240611)
n = 30
x = 500200.0 + rng.uniform(0, 600, n)
y = 4980100.0 + rng.uniform(0, 450, n)
trend = 40.0 + 0.02 * (x - 500200) - 0.015 * (y - 4980100)
value = trend + 6.0 * np.sin((x - 500200) / 170.0) * np.cos((y - 4980100) / 140.0) + rng.normal(0, 1.5, n)
value_pos = np.exp(np.log(np.abs(value) + 5) / 1.3)

grid = {"x0": 500150.0, "y0": 4980600.0, "cell": 50.0, "nx": 15, "ny": 11}
ii, jj = np.meshgrid(np.arange(grid["nx"]), np.arange(grid["ny"]))
tx = (grid["x0"] + (ii + 0.5) * grid["cell"]).ravel()
ty = (grid["y0"] - (jj + 0.5) * grid["cell"]).ravel()
# A mask: an ellipse of cells plus a cut-out corner.
cxm, cym = grid["x0"] + 375, grid["y0"] - 275
mask = ((((tx - cxm) / 360) ** 2 + ((ty - cym) / 260) ** 2) <= 1).astype(int)
mask[(tx > grid["x0"] + 550) & (ty > grid["y0"] - 150)] = 0


def kernel_of(sill, scale, nu):
    return ConstantKernel(sill, constant_value_bounds="fixed") * Matern(length_scale=scale, length_scale_bounds="fixed", nu=nu)


def simple(z, m, sill, scale, nu, nugget):
    gp = GaussianProcessRegressor(kernel=kernel_of(sill, scale, nu), alpha=nugget, optimizer=None, normalize_y=False)
    P = np.column_stack([x, y])
    gp.fit(P, z - m)
    mu, sd = gp.predict(np.column_stack([tx, ty]), return_std=True)
    return mu + m, sd


def ordinary(z, sill, scale, nu, nugget):
    k = kernel_of(sill, scale, nu)
    P = np.column_stack([x, y])
    K = k(P) + nugget * np.eye(n)
    A = np.zeros((n + 1, n + 1))
    A[:n, :n] = K
    A[:n, n] = 1
    A[n, :n] = 1
    k0 = k(P, np.column_stack([tx, ty]))  # n x m
    rhs = np.vstack([k0, np.ones((1, tx.size))])
    sol = linalg.solve(A, rhs)
    lam, mu = sol[:n], sol[n]
    mean = lam.T @ z
    var = sill - np.sum(lam * k0, axis=0) - mu
    return mean, np.sqrt(np.maximum(var, 0))


cases = []
m1 = {"structures": [{"type": "nugget", "sill": 1.2}, {"type": "matern", "sill": 9.0, "scale": 120.0, "nu": 1.5}],
      "trend": {"known": 42.0}, "transform": "none"}
mean, sd = simple(value, 42.0, 9.0, 120.0, 1.5, 1.2)
T = 45.0
cases.append({"name": "simple kriging, Matern 3/2 + nugget (sklearn GPR)", "model": m1, "threshold": T,
              "values": list(value), "mean": list(mean), "sd": list(sd), "pExceed": list(stats.norm.sf(T, mean, sd))})

m2 = {"structures": [{"type": "nugget", "sill": 0.8}, {"type": "matern", "sill": 12.0, "scale": 90.0, "nu": 2.5}],
      "trend": "constant", "transform": "none"}
mean, sd = ordinary(value, 12.0, 90.0, 2.5, 0.8)
T = 38.0
cases.append({"name": "ordinary kriging, Matern 5/2 + nugget (scipy bordered solve)", "model": m2, "threshold": T,
              "values": list(value), "mean": list(mean), "sd": list(sd), "pExceed": list(stats.norm.sf(T, mean, sd))})

lz = np.log(value_pos)
m3 = {"structures": [{"type": "nugget", "sill": 0.01}, {"type": "matern", "sill": 0.09, "scale": 150.0, "nu": 0.5}],
      "trend": {"known": float(np.mean(lz))}, "transform": "log"}
lmean, lsd = simple(lz, float(np.mean(lz)), 0.09, 150.0, 0.5, 0.01)
T = float(np.exp(np.mean(lz) + 0.1))
cases.append({"name": "simple kriging of ln(value), exponential (sklearn GPR); P(exceed) on the log scale",
              "model": m3, "threshold": T, "values": list(value_pos),
              "median": list(np.exp(lmean)), "mean": list(np.exp(lmean + lsd ** 2 / 2)),
              "pExceed": list(stats.norm.sf(np.log(T), lmean, lsd))})

out = {
    "source": f"scikit-learn {sklearn.__version__} GaussianProcessRegressor; scipy {scipy.__version__} linalg.solve and stats.norm.sf",
    "script": "tests/reference/make_surface.py",
    "tolerance": {"rel": 1e-8, "abs": 1e-10},
    "x": list(x), "y": list(y), "grid": grid, "mask": [int(v) for v in mask],
    "cases": cases,
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "surface.json")
with open(path, "w") as f:
    json.dump(out, f)
print("wrote", path, "active cells", int(mask.sum()), "of", mask.size)
