#!/usr/bin/python3
"""Writes tests/reference/block.json: block kriging (predictions of block averages) computed by an
independent numpy implementation.

A block of width w and height h centred at (cx, cy) is discretised into k x k points at the centres of
its k x k sub-rectangles. Covariances follow the covariance model contract (documented in
src/core/covariance/model.ts), written here from that contract and not from the engine's code:
  point-to-sample   C(p, s_i)                   (noise-free; the nugget is on K's diagonal only)
  block-to-sample   kbar_i = mean_p C(p, s_i)
  block-to-block    Cbar   = mean_{p,q} C(p, q) (every pair of discretisation points, the p = q pairs
                                                 included with C(0) = sum of non-nugget sills; no nugget)
Trend columns are averaged over the discretisation points as well: (1, (x - xmin)/1000, (y - ymin)/1000)
for a linear trend (a different basis from the engine's, same column space), (1) for a constant one,
none for a known mean. The bordered system [[K, X], [X^T, 0]] (lambda; mu) = (kbar; xbar) is solved
with numpy.linalg.solve (LAPACK LU); block mean = lambda . z (simple kriging: m + lambda . (z - m)),
block kriging variance = Cbar - lambda . kbar - mu . xbar (Cressie 1993, sec. 3.2 and 5.x for block
kriging, from memory; Journel & Huijbregts 1978 ch. V, from memory). Matern correlations use
scipy.special.kv for every nu. P(block mean > T) = 1 - Phi((T - mean)/sd) with scipy.stats.norm.

Run with Debian's python: /usr/bin/python3 tests/reference/make_block.py
"""
import json
import math
import os

import numpy as np
import scipy
from scipy.special import kv, gamma
from scipy.stats import norm

HERE = os.path.dirname(os.path.abspath(__file__))


def correlation(s, h):
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
    dx = np.subtract.outer(np.asarray(ax, float), np.asarray(bx, float))
    dy = np.subtract.outer(np.asarray(ay, float), np.asarray(by, float))
    if not aniso:
        return np.sqrt(dx * dx + dy * dy)
    a = math.radians(aniso["azimuth"])
    along = dx * math.sin(a) + dy * math.cos(a)
    across = dx * math.cos(a) - dy * math.sin(a)
    return np.sqrt(along ** 2 + (across / aniso["ratio"]) ** 2)


def surface_cov(model, h):
    c = np.zeros_like(h)
    for s in model["structures"]:
        if s["type"] != "nugget":
            c = c + s["sill"] * correlation(s, h)
    return c


def nugget(model):
    return sum(s["sill"] for s in model["structures"] if s["type"] == "nugget")


def trend_cols(model, x, y, x_ref, y_ref):
    t = model["trend"]
    n = len(x)
    if isinstance(t, dict):
        return np.zeros((n, 0))
    if t == "constant":
        return np.ones((n, 1))
    return np.column_stack([np.ones(n), (np.asarray(x) - x_ref) / 1000.0, (np.asarray(y) - y_ref) / 1000.0])


def discretise(cx, cy, w, h, k):
    """The k*k discretisation points of one block (sub-rectangle centres)."""
    off = (np.arange(k) + 0.5) / k - 0.5
    px = (cx + off[None, :] * w).repeat(k, axis=0).ravel()
    py = (cy + off[:, None] * h).repeat(k, axis=1).ravel()
    return px, py


def block_krige(model, x, y, z, blocks, w, h, k):
    an = model.get("anisotropy")
    n = len(x)
    x_ref, y_ref = x.min(), y.min()
    K = surface_cov(model, distance(x, y, x, y, an)) + nugget(model) * np.eye(n)
    X = trend_cols(model, x, y, x_ref, y_ref)
    p = X.shape[1]
    A = np.zeros((n + p, n + p))
    A[:n, :n] = K
    A[:n, n:] = X
    A[n:, :n] = X.T
    means, variances = [], []
    cbar = None
    for (cx, cy) in blocks:
        px, py = discretise(cx, cy, w, h, k)
        kbar = surface_cov(model, distance(x, y, px, py, an)).mean(axis=1)
        xbar = trend_cols(model, px, py, x_ref, y_ref).mean(axis=0)
        cbar = surface_cov(model, distance(px, py, px, py, an)).mean()
        sol = np.linalg.solve(A, np.concatenate([kbar, xbar]))
        lam, mu = sol[:n], sol[n:]
        t = model["trend"]
        mean = t["known"] + lam @ (z - t["known"]) if isinstance(t, dict) else lam @ z
        means.append(float(mean))
        variances.append(float(cbar - lam @ kbar - mu @ xbar))
    return np.array(means), np.array(variances), float(cbar)


CASES = [
    ("ok-exponential-nugget", "constant", [{"type": "nugget", "sill": 0.3}, {"type": "exponential", "sill": 2, "scale": 150}], None, 20.0, 20.0, 4),
    ("uk-matern15-anisotropic", "linear", [{"type": "nugget", "sill": 0.1}, {"type": "matern", "sill": 1.5, "scale": 120, "nu": 1.5}], {"azimuth": 30, "ratio": 0.5}, 25.0, 25.0, 4),
    ("sk-spherical-rectangle", {"known": 10}, [{"type": "spherical", "sill": 2, "scale": 300}], None, 30.0, 15.0, 3),
    ("ok-gaussian-nugget", "constant", [{"type": "nugget", "sill": 0.05}, {"type": "gaussian", "sill": 1, "scale": 80}], None, 40.0, 40.0, 5),
    ("ok-matern07", "constant", [{"type": "matern", "sill": 1.2, "scale": 100, "nu": 0.7}], None, 10.0, 10.0, 4),
]


def main():
    rng = np.random.default_rng(31)
    out = []
    for name, trend, structures, aniso, w, h, k in CASES:
        n = 25
        x = rng.uniform(0, 400, n)
        y = rng.uniform(0, 400, n)
        z = 10 + 0.004 * x - 0.002 * y + np.sin(x / 90) * np.cos(y / 120) + 0.3 * rng.standard_normal(n)
        model = {"structures": structures, "trend": trend, "transform": "none"}
        if aniso:
            model["anisotropy"] = aniso
        blocks = [(50.0, 60.0), (200.0, 210.0), (380.0, 20.0), (float(x[0]), float(y[0])), (520.0, 450.0)]
        mean, var, cbar = block_krige(model, x, y, z, blocks, w, h, k)
        sd = np.sqrt(np.maximum(var, 0))
        threshold = float(np.median(z))
        p_exceed = norm.sf((threshold - mean) / sd)
        out.append({
            "name": name,
            "model": model,
            "samples": {"x": x.tolist(), "y": y.tolist(), "value": z.tolist()},
            "blocks": {"x": [b[0] for b in blocks], "y": [b[1] for b in blocks]},
            "width": w,
            "height": h,
            "points": k,
            "threshold": threshold,
            "expected": {"mean": mean.tolist(), "sd": sd.tolist(), "pExceed": p_exceed.tolist(), "blockVariance": cbar},
        })
        print(f"{name:28s} cbar = {cbar:.6f}  sd = {np.round(sd, 4)}")
    doc = {
        "source": f"numpy {np.__version__} linalg.solve of the bordered block-kriging system; scipy {scipy.__version__} special.kv, stats.norm",
        "script": "tests/reference/make_block.py",
        "tolerance": {"rel": 1e-8, "abs": 1e-12},
        "cases": out,
    }
    with open(os.path.join(HERE, "block.json"), "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
