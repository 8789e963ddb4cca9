#!/usr/bin/python3
"""Writes tests/reference/covariates.json: kriging with covariates in the mean (kriging with external
drift), GLS trend coefficients with standard errors, and REML fits with covariates, computed by an
independent numpy/scipy implementation.

Kriging: for every target the bordered system [[K, X], [X^T, 0]] (lambda; mu) = (k0; x0) is solved with
numpy.linalg.solve (LAPACK LU); mean = lambda . z and variance = c0 - lambda . k0 - mu . x0
(Cressie 1993, ch. 3). z is ln(value) for a log model (results compared on the ln scale). Covariances
from the covariance model contract (src/core/covariance/model.ts), via make_kriging.py's functions.
Trend columns here: 1, (x - xmin)/1000, (y - ymin)/1000 (with coordinates), the numeric covariate in its
own unit, and one indicator per categorical level after the first (levels sorted, first = reference).
A different basis from the engine's (which centres and scales every column): same column space, so
the kriging results must agree.

GLS coefficients: beta = (X^T K^-1 X)^-1 X^T K^-1 z and Cov = (X^T K^-1 X)^-1 through numpy.linalg.solve
and numpy.linalg.inv, with X in the columns' own units (1, x - mean x, y - mean y in metres,
covariates per unit): the units the engine reports in.

REML: the restricted log-likelihood
  l = -1/2 [(n - p) ln 2 pi + ln|K| + ln|X^T K^-1 X| + r^T K^-1 r],  r = z - X beta_GLS
(Patterson & Thompson 1971; Harville 1977) with K = s2 (R(scale) + eta I), X the raw columns
(1, x, y, covariates), maximised by scipy.optimize.minimize (Nelder-Mead, then L-BFGS-B) over
ln s2, ln scale, ln(eta s2) from several starts; the best optimum is recorded.

Run with Debian's python: /usr/bin/python3 tests/reference/make_covariates.py
"""
import json
import math
import os
import sys

import numpy as np
import scipy
from scipy.optimize import minimize

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
from make_kriging import surface_cov, distance, nugget, c0  # noqa: E402

LEVELS = ["clay", "loam", "sand"]


def make_data(n, seed):
    rng = np.random.default_rng(seed)
    x = 5000 + rng.uniform(0, 1000, n)
    y = 6_200_000 + rng.uniform(0, 1000, n)
    # Distance to an invented old building at (5300, 6200600), metres; its square root as covariate.
    dist = np.sqrt((x - 5300) ** 2 + (y - 6_200_600) ** 2)
    sqrt_dist = np.sqrt(dist)
    soil = np.where((x - 5000) + 0.5 * (y - 6_200_000) < 600, 0, np.where(y - 6_200_000 < 500, 1, 2))
    # A correlated field by Cholesky of an exponential covariance, plus noise.
    h = distance(x, y, x, y, None)
    C = 0.6 * np.exp(-h / 150.0) + 1e-10 * np.eye(n)
    f = np.linalg.cholesky(C) @ rng.standard_normal(n)
    z = 4.0 - 0.08 * sqrt_dist + np.array([0.0, 0.7, -0.5])[soil] + f + 0.2 * rng.standard_normal(n)
    return x, y, sqrt_dist, soil, z


def columns(x, y, sqrt_dist, soil, coordinates, categorical, xref, yref, scale=1000.0):
    cols = [np.ones(len(x))]
    if coordinates:
        cols += [(np.asarray(x) - xref) / scale, (np.asarray(y) - yref) / scale]
    cols.append(np.asarray(sqrt_dist, float))
    if categorical:
        for level in (1, 2):
            cols.append((np.asarray(soil) == level).astype(float))
    return np.column_stack(cols)


def krige(model, x, y, z, X, tx, ty, X0):
    n = len(x)
    K = surface_cov(model, distance(x, y, x, y, None)) + nugget(model) * np.eye(n)
    p = X.shape[1]
    A = np.zeros((n + p, n + p))
    A[:n, :n] = K
    A[:n, n:] = X
    A[n:, :n] = X.T
    k0 = surface_cov(model, distance(x, y, tx, ty, None))
    sol = np.linalg.solve(A, np.vstack([k0, X0.T]))
    lam, mu = sol[:n], sol[n:]
    mean = lam.T @ z
    var = c0(model) - np.sum(lam * k0, axis=0) - np.sum(mu * X0.T, axis=0)
    return mean, var


def gls(model, x, y, z, X):
    n = len(x)
    K = surface_cov(model, distance(x, y, x, y, None)) + nugget(model) * np.eye(n)
    KiX = np.linalg.solve(K, X)
    info = X.T @ KiX
    beta = np.linalg.solve(info, KiX.T @ z)
    cov = np.linalg.inv(info)
    return beta, np.sqrt(np.diag(cov))


def reml(params, h, X, z):
    s2, scale, nug = np.exp(params)
    n, p = X.shape
    K = s2 * np.exp(-h / scale) + nug * np.eye(n)
    try:
        L = np.linalg.cholesky(K)
    except np.linalg.LinAlgError:
        return -np.inf
    Li_X = np.linalg.solve(L, X)
    Li_z = np.linalg.solve(L, z)
    info = Li_X.T @ Li_X
    beta = np.linalg.solve(info, Li_X.T @ Li_z)
    r = Li_z - Li_X @ beta
    sign, logdet_info = np.linalg.slogdet(info)
    logdet_K = 2 * np.sum(np.log(np.diag(L)))
    return -0.5 * ((n - p) * math.log(2 * math.pi) + logdet_K + logdet_info + r @ r)


def main():
    x, y, sqrt_dist, soil, z = make_data(80, 20261203)
    rng = np.random.default_rng(7)
    tx = 5000 + rng.uniform(0, 1000, 12)
    ty = 6_200_000 + rng.uniform(0, 1000, 12)
    tdist = np.sqrt(np.sqrt((tx - 5300) ** 2 + (ty - 6_200_600) ** 2))
    tsoil = rng.integers(0, 3, 12)
    value_plain = z
    value_log = np.exp(z / 2)
    xref, yref = x.min(), y.min()
    models = {
        "exponential": {"structures": [{"type": "nugget", "sill": 0.05}, {"type": "exponential", "sill": 0.6, "scale": 150}]},
        "matern": {"structures": [{"type": "nugget", "sill": 0.02}, {"type": "matern", "sill": 0.5, "scale": 120, "nu": 1.5}]},
    }
    cases = []
    for model_name, base in models.items():
        for coordinates in (False, True):
            for categorical in (False, True):
                for transform in ("none", "log"):
                    values = value_plain if transform == "none" else value_log
                    zz = values if transform == "none" else np.log(values)
                    model = dict(base)
                    trend = {"covariates": ["sqrt_dist"] + (["soil"] if categorical else [])}
                    if coordinates:
                        trend["coordinates"] = True
                    if categorical:
                        trend["levels"] = {"soil": LEVELS}
                    model = {**base, "trend": trend, "transform": transform}
                    X = columns(x, y, sqrt_dist, soil, coordinates, categorical, xref, yref)
                    X0 = columns(tx, ty, tdist, tsoil, coordinates, categorical, xref, yref)
                    mean, var = krige(model, x, y, zz, X, tx, ty, X0)
                    Xown = columns(x, y, sqrt_dist, soil, coordinates, categorical, x.mean(), y.mean(), scale=1.0)
                    beta, se = gls(model, x, y, zz, Xown)
                    cases.append({
                        "name": f"{model_name}{'-xy' if coordinates else ''}{'-soil' if categorical else ''}-{transform}",
                        "model": model,
                        "logMean": mean.tolist(), "logVariance": var.tolist(),
                        "coefficients": beta.tolist(), "standardErrors": se.tolist(),
                    })
    # REML with two covariates (sqrt_dist and soil) and an exponential structure with a nugget.
    h = distance(x, y, x, y, None)
    Xraw = columns(x, y, sqrt_dist, soil, False, True, 0.0, 0.0)
    best = None
    for s0 in (0.3, 1.0):
        for l0 in (50.0, 200.0, 500.0):
            for n0 in (0.01, 0.1):
                start = np.log([s0, l0, n0])
                r1 = minimize(lambda p: -reml(p, h, Xraw, z), start, method="Nelder-Mead",
                              options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000, "maxfev": 40000})
                r2 = minimize(lambda p: -reml(p, h, Xraw, z), r1.x, method="L-BFGS-B", options={"ftol": 1e-15, "gtol": 1e-10})
                r = r2 if r2.fun <= r1.fun else r1
                if best is None or r.fun < best.fun:
                    best = r
    s2, scale, nug = np.exp(best.x)
    doc = {
        "source": f"numpy {np.__version__} linalg.solve of the bordered kriging system and of the GLS normal equations; scipy {scipy.__version__} optimize.minimize (Nelder-Mead, L-BFGS-B) of the restricted likelihood",
        "script": "tests/reference/make_covariates.py",
        "tolerance": {"rel": 1e-8},
        "note": "kriging results on the kriging scale (ln for log models); coefficients in their own units: constant at covariates 0 and the sample centroid, x, y per metre, covariates per unit; reml tolerance: logLikelihood 1e-6 absolute, parameters 1 % relative",
        "samples": {"x": x.tolist(), "y": y.tolist(), "sqrt_dist": sqrt_dist.tolist(),
                    "soil": [LEVELS[k] for k in soil], "value": value_plain.tolist(), "valueLog": value_log.tolist()},
        "targets": {"x": tx.tolist(), "y": ty.tolist(), "sqrt_dist": tdist.tolist(), "soil": [LEVELS[k] for k in tsoil]},
        "cases": cases,
        "reml": {
            "family": "exponential", "covariates": ["sqrt_dist", "soil"],
            "logLikelihood": -best.fun, "sill": s2, "scale": scale, "nugget": nug,
            "tolerance": {"logLikelihood": 1e-6, "parametersRel": 0.01},
        },
    }
    with open(os.path.join(HERE, "covariates.json"), "w") as f:
        json.dump(doc, f, indent=1)
    print(f"wrote {len(cases)} kriging cases; REML optimum {-best.fun:.10f} at sill {s2:.6g}, scale {scale:.6g}, nugget {nug:.6g}")


if __name__ == "__main__":
    main()
