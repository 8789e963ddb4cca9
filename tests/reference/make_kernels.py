#!/usr/bin/python3
"""Writes tests/reference/kernels.json: correlation functions and covariance matrices from scikit-learn.

Source: sklearn.gaussian_process.kernels (Debian python3-sklearn): Matern(length_scale, nu) uses
sqrt(2 nu)*d/length_scale like our "matern" (and nu = 0.5 is our "exponential"); RBF(length_scale) is
exp(-d^2/(2 length_scale^2)), our "gaussian"; ConstantKernel carries the sill, sums of kernels are sums of
structures, WhiteKernel is the nugget (added on the diagonal of K(X) only).
Geometric anisotropy with azimuth a (degrees clockwise from grid north) and ratio r is given to sklearn
as coordinates rotated to (along, across) = (x sin a + y cos a, x cos a - y sin a) with the anisotropic
length scale [scale, scale * r]; for a = 0 and a = 90 no rotation is done here (axis-aligned length
scales on (x, y)), so the rotation convention is checked independently.
Run with /usr/bin/python3 (Debian's, not a pyenv one).
"""
import json
import os

import numpy as np
import sklearn
from sklearn.gaussian_process.kernels import RBF, ConstantKernel, Matern, WhiteKernel

REL = 1e-12
ABS = 1e-15

# --- one-dimensional correlations rho(h) --------------------------------------------------------
H_OVER_SCALE = [1e-9, 1e-6, 1e-3, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 4.5, 6.0, 9.0, 14.0]
SCALES = [1.0, 150.0]
cases = []
for scale in SCALES:
    hs = np.array([[q * scale] for q in H_OVER_SCALE])
    origin = np.zeros((1, 1))
    for nu in [0.5, 1.5, 2.5, 0.8, 1.0, 3.7]:
        values = Matern(length_scale=scale, nu=nu)(origin, hs)[0]
        for h, v in zip(hs[:, 0], values):
            cases.append({"family": "matern", "nu": nu, "scale": scale, "h": float(h), "value": float(v)})
        if nu == 0.5:
            for h, v in zip(hs[:, 0], values):
                cases.append({"family": "exponential", "scale": scale, "h": float(h), "value": float(v)})
    values = RBF(length_scale=scale)(origin, hs)[0]
    for h, v in zip(hs[:, 0], values):
        cases.append({"family": "gaussian", "scale": scale, "h": float(h), "value": float(v)})


# --- covariance matrices for whole models ---------------------------------------------------------
def term(structure, length_scale):
    s = structure
    if s["type"] == "nugget":
        return WhiteKernel(noise_level=s["sill"])
    if s["type"] == "gaussian":
        base = RBF(length_scale=length_scale)
    elif s["type"] == "exponential":
        base = Matern(length_scale=length_scale, nu=0.5)
    elif s["type"] == "matern":
        base = Matern(length_scale=length_scale, nu=s["nu"])
    else:
        raise ValueError(s["type"])
    return ConstantKernel(constant_value=s["sill"], constant_value_bounds="fixed") * base


def sk_kernel(model):
    aniso = model.get("anisotropy")
    kernel = None
    for s in model["structures"]:
        if aniso is None:
            ls = s.get("scale", 1.0)
        elif aniso["azimuth"] == 0:  # long axis north: x across, y along
            ls = [s.get("scale", 1.0) * aniso["ratio"], s.get("scale", 1.0)]
        elif aniso["azimuth"] == 90:  # long axis east: x along, y across
            ls = [s.get("scale", 1.0), s.get("scale", 1.0) * aniso["ratio"]]
        else:  # coordinates are rotated to (along, across) first
            ls = [s.get("scale", 1.0), s.get("scale", 1.0) * aniso["ratio"]]
        t = term(s, ls)
        kernel = t if kernel is None else kernel + t
    return kernel


def sk_coords(model, xy):
    aniso = model.get("anisotropy")
    if aniso is None or aniso["azimuth"] in (0, 90):
        return xy
    a = np.radians(aniso["azimuth"])
    along = xy[:, 0] * np.sin(a) + xy[:, 1] * np.cos(a)
    across = xy[:, 0] * np.cos(a) - xy[:, 1] * np.sin(a)
    return np.column_stack([along, across])


MODELS = [
    {"structures": [{"type": "nugget", "sill": 0.1}, {"type": "matern", "sill": 1.2, "scale": 150, "nu": 1.5}],
     "trend": "constant", "transform": "none"},
    {"structures": [{"type": "matern", "sill": 2.0, "scale": 200, "nu": 0.8}],
     "trend": "constant", "transform": "none", "anisotropy": {"azimuth": 0, "ratio": 0.5}},
    {"structures": [{"type": "gaussian", "sill": 1.0, "scale": 100}, {"type": "exponential", "sill": 0.5, "scale": 300}],
     "trend": "constant", "transform": "none", "anisotropy": {"azimuth": 90, "ratio": 0.25}},
    {"structures": [{"type": "nugget", "sill": 0.05}, {"type": "matern", "sill": 0.7, "scale": 120, "nu": 2.5},
                    {"type": "matern", "sill": 0.3, "scale": 400, "nu": 3.7}],
     "trend": "constant", "transform": "none", "anisotropy": {"azimuth": 30, "ratio": 0.4}},
    {"structures": [{"type": "matern", "sill": 1.0, "scale": 80, "nu": 1.0}, {"type": "exponential", "sill": 0.2, "scale": 50}],
     "trend": "constant", "transform": "none", "anisotropy": {"azimuth": 125, "ratio": 0.7}},
]

rng = np.random.default_rng(20240611)
samples = rng.uniform(-400, 400, size=(14, 2))
targets = rng.uniform(-450, 450, size=(6, 2))
matrices = []
for model in MODELS:
    k = sk_kernel(model)
    xs = sk_coords(model, samples)
    ts = sk_coords(model, targets)
    matrices.append({
        "model": model,
        "K": k(xs).ravel().tolist(),             # samples x samples, nugget on the diagonal
        "cross": k(ts, xs).ravel().tolist(),     # targets x samples, no nugget (WhiteKernel is 0 off X = Y)
    })

out = {
    "source": f"scikit-learn {sklearn.__version__} sklearn.gaussian_process.kernels Matern, RBF, ConstantKernel, "
              f"WhiteKernel (numpy {np.__version__})",
    "script": "tests/reference/make_kernels.py",
    "tolerance": {"rel": REL, "abs": ABS},
    "cases": cases,
    "samples": {"x": samples[:, 0].tolist(), "y": samples[:, 1].tolist()},
    "targets": {"x": targets[:, 0].tolist(), "y": targets[:, 1].tolist()},
    "matrices": matrices,
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "kernels.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print(f"wrote {len(cases)} correlation cases and {len(matrices)} model matrices to {path}")
