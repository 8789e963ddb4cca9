#!/usr/bin/python3
"""Writes tests/reference/kriging.json: kriging means, sds and leave-one-out results computed by an
independent numpy implementation of the bordered kriging system.

For every target the system [[K, X], [X^T, 0]] (lambda; mu) = (k0; x0) is solved with
numpy.linalg.solve (LAPACK LU with partial pivoting); then mean = lambda . y (simple kriging:
m + lambda . (y - m)) and variance = c0 - lambda . k0 - mu . x0 (universal kriging, Cressie 1993, ch. 3;
the simple-kriging form drops mu). Covariances are written here from the covariance model contract
(documented in src/core/covariance/model.ts), not from the engine's code: nugget on the diagonal of K only;
exponential exp(-h/l); gaussian exp(-h^2/(2 l^2)); spherical 1 - 1.5 r + 0.5 r^3 for r < 1;
Matern 2^(1-nu)/Gamma(nu) z^nu K_nu(z), z = sqrt(2 nu) h/l, with K_nu from scipy.special.kv for EVERY nu (no closed forms).
Anisotropy: azimuth of the long axis clockwise from north, distances across it divided by the ratio.
Leave-one-out: brute force, one bordered solve per left-out sample on the other n - 1 samples.
Trend columns here are (1, (x - xmin)/1000, (y - ymin)/1000): a different basis from the engine's,
with the same column space, so results must agree.

Run with Debian's python: /usr/bin/python3 tests/reference/make_kriging.py
"""
import json
import math
import os

import numpy as np
import scipy
from scipy.special import kv, gamma

HERE = os.path.dirname(os.path.abspath(__file__))


def correlation(s, h):
    """Correlation of one non-nugget structure at effective distance h (array)."""
    h = np.asarray(h, dtype=float)
    l = s["scale"]
    t = s["type"]
    if t == "exponential":
        return np.exp(-h / l)
    if t == "gaussian":
        return np.exp(-0.5 * (h / l) ** 2)
    if t == "spherical":
        r = h / l
        return np.where(r < 1, 1 - 1.5 * r + 0.5 * r ** 3, 0.0)
    if t == "matern":
        nu = s["nu"]
        z = math.sqrt(2 * nu) * h / l
        out = np.ones_like(z)
        pos = z > 0
        zp = z[pos]
        out[pos] = 2 ** (1 - nu) / gamma(nu) * zp ** nu * kv(nu, zp)
        return out
    raise ValueError(t)


def distance(ax, ay, bx, by, aniso):
    """Effective distances between points a (rows) and b (columns)."""
    dx = np.subtract.outer(np.asarray(ax, float), np.asarray(bx, float))
    dy = np.subtract.outer(np.asarray(ay, float), np.asarray(by, float))
    if not aniso:
        return np.sqrt(dx * dx + dy * dy)
    a = math.radians(aniso["azimuth"])
    along = dx * math.sin(a) + dy * math.cos(a)      # component along the long axis
    across = dx * math.cos(a) - dy * math.sin(a)     # component across it
    return np.sqrt(along ** 2 + (across / aniso["ratio"]) ** 2)


def surface_cov(model, h):
    c = np.zeros_like(h)
    for s in model["structures"]:
        if s["type"] != "nugget":
            c = c + s["sill"] * correlation(s, h)
    return c


def nugget(model):
    return sum(s["sill"] for s in model["structures"] if s["type"] == "nugget")


def c0(model):
    return sum(s["sill"] for s in model["structures"] if s["type"] != "nugget")


def trend_cols(model, x, y, x_ref, y_ref):
    t = model["trend"]
    n = len(x)
    if isinstance(t, dict):
        return np.zeros((n, 0))
    if t == "constant":
        return np.ones((n, 1))
    return np.column_stack([np.ones(n), (np.asarray(x) - x_ref) / 1000.0, (np.asarray(y) - y_ref) / 1000.0])


def krige(model, x, y, z, tx, ty, x_ref, y_ref):
    """Bordered-system kriging; returns (mean, variance of the noise-free surface) at the targets."""
    an = model.get("anisotropy")
    n = len(x)
    K = surface_cov(model, distance(x, y, x, y, an)) + nugget(model) * np.eye(n)
    X = trend_cols(model, x, y, x_ref, y_ref)
    p = X.shape[1]
    A = np.zeros((n + p, n + p))
    A[:n, :n] = K
    A[:n, n:] = X
    A[n:, :n] = X.T
    k0 = surface_cov(model, distance(x, y, tx, ty, an))          # n x m
    X0 = trend_cols(model, tx, ty, x_ref, y_ref)                 # m x p
    rhs = np.vstack([k0, X0.T])
    sol = np.linalg.solve(A, rhs)
    lam = sol[:n]
    mu = sol[n:]
    t = model["trend"]
    if isinstance(t, dict):
        m = t["known"]
        mean = m + lam.T @ (z - m)
    else:
        mean = lam.T @ z
    var = c0(model) - np.sum(lam * k0, axis=0) - np.sum(mu * X0.T, axis=0)
    return mean, var, np.linalg.cond(A)


def field(x, y, rng):
    return 10 + 0.004 * x - 0.003 * y + 2 * np.sin(x / 180) * np.cos(y / 230) + 0.3 * rng.standard_normal(len(x))


CASES = [
    ("sk-exponential", {"known": 10}, [{"type": "exponential", "sill": 2, "scale": 200}], None, False, "none"),
    ("sk-matern05-nugget", {"known": 9.5}, [{"type": "nugget", "sill": 0.2}, {"type": "matern", "sill": 1.5, "scale": 250, "nu": 0.5}], None, False, "none"),
    ("ok-exponential-nugget", "constant", [{"type": "nugget", "sill": 0.3}, {"type": "exponential", "sill": 2, "scale": 300}], None, False, "none"),
    ("ok-gaussian-nugget", "constant", [{"type": "nugget", "sill": 0.1}, {"type": "gaussian", "sill": 2, "scale": 120}], None, False, "none"),
    ("ok-spherical", "constant", [{"type": "spherical", "sill": 2, "scale": 400}], None, False, "none"),
    ("ok-matern15", "constant", [{"type": "matern", "sill": 2, "scale": 150, "nu": 1.5}], None, False, "none"),
    ("ok-matern25-nugget", "constant", [{"type": "nugget", "sill": 0.2}, {"type": "matern", "sill": 1.8, "scale": 120, "nu": 2.5}], None, False, "none"),
    ("uk-matern12", "linear", [{"type": "matern", "sill": 1.5, "scale": 200, "nu": 1.2}], None, False, "none"),
    ("uk-matern37-nugget", "linear", [{"type": "nugget", "sill": 0.1}, {"type": "matern", "sill": 1.5, "scale": 100, "nu": 3.7}], None, False, "none"),
    ("uk-exponential-nugget", "linear", [{"type": "nugget", "sill": 0.25}, {"type": "exponential", "sill": 1, "scale": 250}], None, False, "none"),
    ("ok-anisotropic-matern15-nugget", "constant", [{"type": "nugget", "sill": 0.1}, {"type": "matern", "sill": 2, "scale": 300, "nu": 1.5}], {"azimuth": 30, "ratio": 0.5}, False, "none"),
    ("uk-nested-anisotropic", "linear", [{"type": "nugget", "sill": 0.15}, {"type": "exponential", "sill": 0.8, "scale": 80}, {"type": "spherical", "sill": 1.2, "scale": 500}], {"azimuth": 120, "ratio": 0.6}, False, "none"),
    ("ok-utm-matern25-nugget", "constant", [{"type": "nugget", "sill": 0.1}, {"type": "matern", "sill": 2, "scale": 150, "nu": 2.5}], None, True, "none"),
    ("uk-utm-nested", "linear", [{"type": "nugget", "sill": 0.05}, {"type": "matern", "sill": 1, "scale": 100, "nu": 1.5}, {"type": "gaussian", "sill": 0.5, "scale": 300}], None, True, "none"),
    ("sk-utm-spherical-nugget", {"known": 10}, [{"type": "nugget", "sill": 0.1}, {"type": "spherical", "sill": 2, "scale": 350}], {"azimuth": 75, "ratio": 0.7}, True, "none"),
    ("ok-log-exponential-nugget", "constant", [{"type": "nugget", "sill": 0.05}, {"type": "exponential", "sill": 0.5, "scale": 250}], None, False, "log"),
]

N = 40
OFFSET = (500000.0, 6000000.0)


def main():
    out_cases = []
    rng_t = np.random.default_rng(7)
    base_tx = np.concatenate([rng_t.uniform(-100, 1100, 30), [3000.0]])
    base_ty = np.concatenate([rng_t.uniform(-100, 1100, 30), [-2000.0]])
    for k, (name, trend, structures, aniso, utm, transform) in enumerate(CASES):
        rng = np.random.default_rng(1000 + k)
        lx = rng.uniform(0, 1000, N)
        ly = rng.uniform(0, 1000, N)
        values = field(lx, ly, rng)
        if transform == "log":
            values = np.exp(0.25 * (values - 10))
        ox, oy = OFFSET if utm else (0.0, 0.0)
        x = lx + ox
        y = ly + oy
        model = {"structures": structures, "trend": trend, "transform": transform}
        if aniso:
            model["anisotropy"] = aniso
        tx = base_tx + ox
        ty = base_ty + oy
        if nugget(model) > 0:
            # Two targets exactly at samples: sd > 0 there when there is a nugget.
            tx = np.concatenate([tx, x[:2]])
            ty = np.concatenate([ty, y[:2]])
        z = np.log(values) if transform == "log" else values
        x_ref, y_ref = x.min(), y.min()
        mean, var, cond = krige(model, x, y, z, tx, ty, x_ref, y_ref)
        sd = np.sqrt(np.maximum(var, 0))
        tau2 = nugget(model)
        expected = {"mean": mean.tolist(), "sd": sd.tolist(), "sdObserved": np.sqrt(sd ** 2 + tau2).tolist()}
        if transform == "log":
            expected = {
                "logMean": mean.tolist(),
                "logSd": sd.tolist(),
                "median": np.exp(mean).tolist(),
                "mean": np.exp(mean + sd ** 2 / 2).tolist(),
            }
        loo_pred = np.zeros(N)
        loo_var = np.zeros(N)
        for i in range(N):
            keep = np.arange(N) != i
            mi, vi, _ = krige(model, x[keep], y[keep], z[keep], x[i:i + 1], y[i:i + 1], x_ref, y_ref)
            loo_pred[i] = mi[0]
            loo_var[i] = vi[0]
        print(f"{name:34s} cond(bordered) = {cond:.2e}")
        out_cases.append({
            "name": name,
            "model": model,
            "samples": {"x": x.tolist(), "y": y.tolist(), "value": values.tolist()},
            "targets": {"x": tx.tolist(), "y": ty.tolist()},
            "expected": expected,
            "looScale": "log" if transform == "log" else "data",
            "loo": {"prediction": loo_pred.tolist(), "sdObserved": np.sqrt(np.maximum(loo_var, 0) + tau2).tolist()},
            "absFloor": 1e-10 * math.sqrt(sum(s["sill"] for s in structures)),
            "conditionNumber": float(cond),
        })
    doc = {
        "source": f"numpy {np.__version__} linalg.solve of the bordered kriging system; scipy {scipy.__version__} special.kv for Matern",
        "script": "tests/reference/make_kriging.py",
        "tolerance": {"rel": 1e-10},
        "note": "abs floor per case: absFloor = 1e-10 * sqrt(sum of sills); loo is on the kriging scale (ln for log)",
        "cases": out_cases,
    }
    with open(os.path.join(HERE, "kriging.json"), "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
