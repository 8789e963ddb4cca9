"""Writes likelihood.json: profiled ML / REML log-likelihoods evaluated directly with numpy/scipy.

For y = X beta + e, Cov = sigma^2 R(theta), R = rho(h; scale, nu) + eta I (Patterson & Thompson 1971;
Harville 1977): sigma2_hat = Q/(n-p) (REML) or Q/n (ML) and
  l*(theta) = -1/2 [(n-p)(ln sigma2_hat + 1 + ln 2 pi) + ln|R| + ln|X' R^-1 X|]   (ML: drop last term, n).
Everything here is computed the plain way (numpy.linalg.slogdet, numpy.linalg.solve; scipy.special.kv
for the general Matern), independently of the TypeScript code. The identity "full Gaussian
log-likelihood at sigma2_hat equals the profiled one" is checked here against
scipy.stats.multivariate_normal.logpdf, and the full values are stored for the TypeScript test.
Run with Debian's /usr/bin/python3 (python3-scipy).
"""
import json
import math
import os

import numpy as np
from scipy import special, stats

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20240611)

# Invented data: 40 points in a 500 m square, offset like projected coordinates to exercise centring.
n = 40
x = 500000.0 + rng.uniform(0, 500, n)
y = 4100000.0 + rng.uniform(0, 500, n)
D0 = np.sqrt((x[:, None] - x[None, :]) ** 2 + (y[:, None] - y[None, :]) ** 2)
field = np.linalg.cholesky(2.0 * np.exp(-D0 / 100.0) + 1e-12 * np.eye(n)) @ rng.standard_normal(n)
value = 10.0 + 0.002 * (x - x.mean()) - 0.001 * (y - y.mean()) + field + math.sqrt(0.3) * rng.standard_normal(n)


def distances(aniso):
    dx = x[:, None] - x[None, :]
    dy = y[:, None] - y[None, :]
    if aniso is None:
        return np.sqrt(dx * dx + dy * dy)
    a = math.radians(aniso["azimuth"])
    along = dx * math.sin(a) + dy * math.cos(a)
    across = dx * math.cos(a) - dy * math.sin(a)
    return np.sqrt(along ** 2 + (across / aniso["ratio"]) ** 2)


def rho(family, h, scale, nu):
    r = h / scale
    if family == "exponential":
        return np.exp(-r)
    if family == "gaussian":
        return np.exp(-0.5 * r * r)
    if family == "spherical":
        return np.where(r < 1, 1 - 1.5 * r + 0.5 * r ** 3, 0.0)
    # Matern, R&W 2006 eq. 4.14, evaluated with scipy.special.kv
    z = math.sqrt(2 * nu) * r
    out = np.ones_like(z)
    pos = z > 0
    out[pos] = 2 ** (1 - nu) / special.gamma(nu) * z[pos] ** nu * special.kv(nu, z[pos])
    return out


def design(trend):
    if isinstance(trend, dict):
        return np.zeros((n, 0)), value - trend["known"]
    cols = [np.ones(n)]
    if trend == "linear":
        cols += [x - x.mean(), y - y.mean()]
    return np.column_stack(cols), value.copy()


def evaluate(case):
    Dm = distances(case.get("anisotropy"))
    R = rho(case["family"], Dm, case["theta"]["scale"], case.get("nu", 1.5)) + case["theta"]["nuggetRatio"] * np.eye(n)
    X, r0 = design(case["trend"])
    p = X.shape[1]
    sign, logdet_r = np.linalg.slogdet(R)
    assert sign > 0
    Rinv_X = np.linalg.solve(R, X)
    Rinv_y = np.linalg.solve(R, r0)
    if p:
        A = X.T @ Rinv_X
        beta = np.linalg.solve(A, X.T @ Rinv_y)
        sa, logdet_a = np.linalg.slogdet(A)
        assert sa > 0
    else:
        beta = np.zeros(0)
        logdet_a = 0.0
    resid = r0 - X @ beta
    Q = float(resid @ np.linalg.solve(R, resid))
    reml = case["method"] == "reml"
    dof = n - p if reml else n
    s2 = Q / dof
    extra = logdet_a if reml else 0.0
    profiled = -0.5 * (dof * (math.log(s2) + 1 + math.log(2 * math.pi)) + logdet_r + extra)

    def full(sig2):
        # Gaussian log-density of y at the GLS mean, plus the REML adjustment for the p contrasts.
        lp = stats.multivariate_normal.logpdf(r0, mean=X @ beta, cov=sig2 * R)
        if reml:
            lp += 0.5 * p * (math.log(2 * math.pi) + math.log(sig2)) - 0.5 * logdet_a
        return float(lp)

    full_hat = full(s2)
    assert abs(full_hat - profiled) <= 1e-9 * abs(profiled), (full_hat, profiled)
    other = 1.7 * s2
    return {
        "logLikelihood": profiled,
        "sigma2": s2,
        "beta": beta.tolist(),
        "logDetR": float(logdet_r),
        "logDetInformation": float(logdet_a),
        "quadraticForm": Q,
        "fullAtSigma2Hat": full_hat,
        "sigma2Other": other,
        "fullAtSigma2Other": full(other),
    }


cases = []
for method in ("reml", "ml"):
    for trend in ("constant", "linear"):
        for fam, nu in (("matern", 1.5), ("exponential", None), ("matern", 2.5)):
            for scale, eta in ((60.0, 0.05), (150.0, 0.3), (400.0, 1.0)):
                c = {"family": fam, "trend": trend, "method": method, "theta": {"scale": scale, "nuggetRatio": eta}}
                if nu is not None:
                    c["nu"] = nu
                cases.append(c)
    cases.append({"family": "gaussian", "trend": "constant", "method": method, "theta": {"scale": 80.0, "nuggetRatio": 0.1}})
    cases.append({"family": "spherical", "trend": "linear", "method": method, "theta": {"scale": 250.0, "nuggetRatio": 0.2}})
    cases.append({"family": "matern", "nu": 0.5, "trend": {"known": 10.0}, "method": method, "theta": {"scale": 120.0, "nuggetRatio": 0.15}})
    cases.append({"family": "matern", "nu": 1.5, "trend": "constant", "method": method,
                  "anisotropy": {"azimuth": 30.0, "ratio": 0.5}, "theta": {"scale": 150.0, "nuggetRatio": 0.1}})
    # General smoothness through K_nu: a looser tolerance (depends on the Bessel routine's accuracy).
    cases.append({"family": "matern", "nu": 1.2, "trend": "constant", "method": method,
                  "theta": {"scale": 120.0, "nuggetRatio": 0.1}, "tolerance": {"rel": 1e-7}})

for c in cases:
    c["expected"] = evaluate(c)

out = {
    "source": f"numpy {np.__version__} (linalg.slogdet, linalg.solve), scipy {__import__('scipy').__version__} (special.kv, stats.multivariate_normal.logpdf); direct evaluation of the profiled ML/REML formulas",
    "script": "tests/reference/make_likelihood.py",
    "tolerance": {"rel": 1e-9},
    "data": {"x": x.tolist(), "y": y.tolist(), "value": value.tolist()},
    "cases": cases,
}
with open(os.path.join(HERE, "likelihood.json"), "w") as f:
    json.dump(out, f, indent=1)
print(f"wrote {len(cases)} cases")
