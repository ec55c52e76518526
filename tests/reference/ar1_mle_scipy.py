#!/usr/bin/env python3
"""Reference maximum-likelihood estimates of an AR(1), x_t = rho x_{t-1} + sigma e_t, by the exact
stationary likelihood (x_1 ~ N(0, sigma^2 / (1 - rho^2)); Hamilton 1994, Time Series Analysis,
sec. 5.2, eq. 5.2.9), maximised by scipy.optimize. Run by hand, never at test time:

    python3 -m venv .venv-bench && .venv-bench/bin/pip install numpy scipy
    .venv-bench/bin/python tests/reference/ar1_mle_scipy.py

It simulates the data (numpy default_rng(2031), rho 0.7, sigma 0.5, 120 periods, stationary
start), writes tests/data/estimation_ar1.csv, and prints the estimates, the log-likelihood at
the maximum and the standard errors from the analytic Hessian (in rho and sigma) for
tests/numerics/estimation_reference.rs. With S(rho) = (1 - rho^2) x_1^2 + sum_{t>=2} (x_t - rho x_{t-1})^2:
  l = -T/2 log 2 pi - T log sigma + 1/2 log(1 - rho^2) - S / (2 sigma^2)
  l_rr = -(1 + rho^2)/(1 - rho^2)^2 - S''/(2 sigma^2),  S'' = 2 (sum_{t>=2} x_{t-1}^2 - x_1^2)
  l_ss = T/sigma^2 - 3 S/sigma^4,   l_rs = S'/sigma^3,  S' = -2 rho x_1^2 - 2 sum x_{t-1}(x_t - rho x_{t-1})
"""
import math
import os
import numpy as np
from scipy import optimize

rng = np.random.default_rng(2031)
T, rho0, sig0 = 120, 0.7, 0.5
x = np.zeros(T)
x[0] = rng.standard_normal() * sig0 / math.sqrt(1 - rho0**2)
for t in range(1, T):
    x[t] = rho0 * x[t - 1] + sig0 * rng.standard_normal()

here = os.path.dirname(os.path.abspath(__file__))
path = os.path.join(here, "..", "data", "estimation_ar1.csv")
with open(path, "w") as f:
    f.write("period,y\n")
    for t in range(T):
        f.write(f"{t + 1},{float(x[t])!r}\n")


def S(r):
    return (1 - r * r) * x[0] ** 2 + np.sum((x[1:] - r * x[:-1]) ** 2)


def loglik(r, s):
    return -T / 2 * math.log(2 * math.pi) - T * math.log(s) + 0.5 * math.log(1 - r * r) - S(r) / (2 * s * s)


def negll(p):
    r, ls = p
    if abs(r) >= 1:
        return 1e300
    return -loglik(r, math.exp(ls))


res = optimize.minimize(negll, [0.3, math.log(1.0)], method="Nelder-Mead",
                        options={"xatol": 1e-12, "fatol": 1e-14, "maxiter": 20000})
res = optimize.minimize(negll, res.x, method="BFGS", options={"gtol": 1e-10})
r, s = res.x[0], math.exp(res.x[1])
Sv = S(r)
S1 = -2 * r * x[0] ** 2 - 2 * np.sum(x[:-1] * (x[1:] - r * x[:-1]))
S2 = 2 * (np.sum(x[:-1] ** 2) - x[0] ** 2)
H = np.array([
    [-(1 + r * r) / (1 - r * r) ** 2 - S2 / (2 * s * s), S1 / s**3],
    [S1 / s**3, T / s**2 - 3 * Sv / s**4],
])
cov = np.linalg.inv(-H)
print(f"// scipy.optimize (Nelder-Mead then BFGS) on the exact AR(1) likelihood; data tests/data/estimation_ar1.csv")
print(f"const AR1_RHO: f64 = {float(r)!r};")
print(f"const AR1_SIGMA: f64 = {s!r};")
print(f"const AR1_LOGLIK: f64 = {float(loglik(r, s))!r};")
print(f"const AR1_SE_RHO: f64 = {math.sqrt(cov[0, 0])!r};")
print(f"const AR1_SE_SIGMA: f64 = {math.sqrt(cov[1, 1])!r};")
