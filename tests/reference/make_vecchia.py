"""Writes vecchia.json: an exact (dense) REML fit on 2,000 invented samples, for the nearest-neighbour fit.

Data: 2,000 points uniform in a 1,000 m square, a Gaussian field with a Matern 3/2 covariance
(sill 1.5, scale 80 m; Rasmussen & Williams 2006, eq. 4.17) plus a nugget of 0.3 and a mean of 10,
drawn with numpy's Cholesky from a seeded generator.
Exact REML (Patterson & Thompson 1971; Harville 1977) for y = 1*beta + e, Cov = sigma^2 (rho + eta I):
  sigma2_hat = Q/(n-1),  l*(theta) = -1/2 [(n-1)(ln sigma2_hat + 1 + ln 2 pi) + ln|R| + ln|1' R^-1 1|],
maximised over (ln scale, ln eta) with scipy.optimize.minimize (Nelder-Mead) from three starts,
every quantity from scipy.linalg.cho_factor / cho_solve. Run with Debian's /usr/bin/python3.
"""
import json
import math
import os

import numpy as np
import scipy
from scipy import linalg, optimize

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20240612)
n = 2000
x = rng.uniform(0, 1000, n)
y = rng.uniform(0, 1000, n)
D = np.sqrt((x[:, None] - x[None, :]) ** 2 + (y[:, None] - y[None, :]) ** 2)


def matern32(h, scale):
    a = math.sqrt(3) * h / scale
    return (1 + a) * np.exp(-a)


TRUE = {"sill": 1.5, "scale": 80.0, "nugget": 0.3, "mean": 10.0}
K = TRUE["sill"] * matern32(D, TRUE["scale"])
field = np.linalg.cholesky(K + 1e-10 * np.eye(n)) @ rng.standard_normal(n)
value = TRUE["mean"] + field + math.sqrt(TRUE["nugget"]) * rng.standard_normal(n)


def reml(log_scale, log_eta):
    scale, eta = math.exp(log_scale), math.exp(log_eta)
    R = matern32(D, scale) + eta * np.eye(n)
    c = linalg.cho_factor(R, lower=True)
    logdet = 2 * np.sum(np.log(np.diag(c[0])))
    one = np.ones(n)
    Ri1 = linalg.cho_solve(c, one)
    Riy = linalg.cho_solve(c, value)
    info = one @ Ri1
    beta = (one @ Riy) / info
    r = value - beta
    Q = r @ linalg.cho_solve(c, r)
    s2 = Q / (n - 1)
    ll = -0.5 * ((n - 1) * (math.log(s2) + 1 + math.log(2 * math.pi)) + logdet + math.log(info))
    return ll, s2, beta


best = None
for start in ([math.log(50), math.log(0.1)], [math.log(150), math.log(0.5)], [math.log(25), math.log(0.01)]):
    res = optimize.minimize(lambda t: -reml(t[0], t[1])[0], start, method="Nelder-Mead",
                            options={"xatol": 1e-6, "fatol": 1e-8, "maxiter": 2000})
    if best is None or res.fun < best.fun:
        best = res
ll, s2, beta = reml(*best.x)
scale, eta = math.exp(best.x[0]), math.exp(best.x[1])

out = {
    "source": f"numpy {np.__version__} / scipy {scipy.__version__}: dense REML maximised by scipy.optimize.minimize (Nelder-Mead)",
    "script": "tests/reference/make_vecchia.py",
    "tolerance": {"rel": 0.10},
    "truth": TRUE,
    "data": {"x": x.tolist(), "y": y.tolist(), "value": value.tolist()},
    "cases": [{
        "family": "matern", "nu": 1.5, "trend": "constant", "method": "reml",
        "expected": {"scale": scale, "nuggetRatio": eta, "sill": s2, "nugget": eta * s2,
                     "logLikelihood": ll, "beta": beta},
    }],
}
with open(os.path.join(HERE, "vecchia.json"), "w") as f:
    json.dump(out, f)
print("exact REML:", out["cases"][0]["expected"])
