#!/usr/bin/env python3
"""Reference numbers for saddle's Kalman filter and smoother, from statsmodels (a general-purpose
state-space library used here only as an outside cross-check). Run by hand, never at test time:

    python3 -m venv .venv-bench && .venv-bench/bin/pip install numpy scipy statsmodels
    .venv-bench/bin/python tests/reference/kalman_statsmodels.py

and paste the printed constants into tests/numerics/kalman_reference.rs.

statsmodels' timing is a_{t+1} = T a_t + R eta_t, y_t = d + Z a_t + eps_t, a_1 ~ N(0, Sigma) with
Sigma = T Sigma T' + R Q R' (stationary start). saddle's is alpha_t = T alpha_{t-1} + R e_t with
alpha_0 ~ N(0, Sigma), so alpha_1 ~ N(0, Sigma) too and the samples agree; statsmodels' smoothed
eta_t is saddle's smoothed e_{t+1}. Every system and data set is a closed formula (no random
numbers), so the Rust test rebuilds them exactly.
"""
import math
import numpy as np
import statsmodels.api as sm


def fmt(name, xs):
    xs = np.asarray(xs, dtype=float).ravel()
    body = ", ".join(repr(float(x)) for x in xs)
    print(f"const {name}: [f64; {xs.size}] = [{body}];")


def run(Y, T, R, Q, Z, H, d=None, init="stationary"):
    n, p = T.shape[0], Z.shape[0]
    mod = sm.tsa.statespace.MLEModel(Y, k_states=n, k_posdef=R.shape[1])
    mod.ssm["design"] = Z
    mod.ssm["obs_cov"] = H
    mod.ssm["transition"] = T
    mod.ssm["selection"] = R
    mod.ssm["state_cov"] = Q
    if d is not None:
        mod.ssm["obs_intercept"] = d.reshape(p, 1)
    if init == "stationary":
        mod.ssm.initialize_stationary()
    else:
        mod.ssm.initialize_diffuse()
    mod.ssm.tolerance = 0.0
    res = mod.ssm.smooth()
    return res


def ar1_noise():
    # AR(1) plus noise: alpha_t = 0.8 alpha_{t-1} + e_t (sd 1), y_t = 0.3 + alpha_t + u_t (sd 0.5);
    # 30 periods, y_t = sin(0.7 t) + 0.5 cos(1.9 t + 0.3) for t = 1..30, periods 5 and 17 missing.
    N = 30
    Y = np.array([[math.sin(0.7 * t) + 0.5 * math.cos(1.9 * t + 0.3)] for t in range(1, N + 1)])
    Y[4, 0] = np.nan
    Y[16, 0] = np.nan
    res = run(Y, np.array([[0.8]]), np.eye(1), np.eye(1), np.eye(1), np.array([[0.25]]),
              d=np.array([0.3]))
    print("// AR(1) plus noise")
    print(f"const AR1_LOGLIK: f64 = {float(res.llf)!r};")
    fmt("AR1_FILTERED", res.filtered_state[0])
    fmt("AR1_SMOOTHED", res.smoothed_state[0])
    fmt("AR1_SMOOTHED_VAR", res.smoothed_state_cov[0, 0])
    fmt("AR1_SMOOTHED_ETA", res.smoothed_state_disturbance[0])
    fmt("AR1_SMOOTHED_ETA_VAR", res.smoothed_state_disturbance_cov[0, 0])


def arma11():
    # ARMA(1,1): y_t = 0.6 y_{t-1} + eps_t + 0.4 eps_{t-1}, sd(eps) = 0.7, no measurement error.
    # State [y_t; 0.4 eps_t]: T = [[0.6, 1], [0, 0]], R = [1; 0.4], Z = [1, 0], H = 0.
    # 25 periods, y_t = cos(0.45 t) - 0.3 sin(1.3 t), period 9 missing.
    N = 25
    Y = np.array([[math.cos(0.45 * t) - 0.3 * math.sin(1.3 * t)] for t in range(1, N + 1)])
    Y[8, 0] = np.nan
    T = np.array([[0.6, 1.0], [0.0, 0.0]])
    R = np.array([[1.0], [0.4]])
    res = run(Y, T, R, np.array([[0.49]]), np.array([[1.0, 0.0]]), np.zeros((1, 1)))
    print("// ARMA(1,1)")
    print(f"const ARMA_LOGLIK: f64 = {float(res.llf)!r};")
    fmt("ARMA_SMOOTHED_0", res.smoothed_state[0])
    fmt("ARMA_SMOOTHED_1", res.smoothed_state[1])
    fmt("ARMA_SMOOTHED_VAR_0", res.smoothed_state_cov[0, 0])
    fmt("ARMA_SMOOTHED_ETA", res.smoothed_state_disturbance[0])


def system20():
    # 20 states, 5 observables, 40 periods, all closed formulas (i, j from 0):
    #   T_ij = 0.45 sin(1.1 i^2 + 0.7 j + 0.3 i j + 0.2) / sqrt(20)
    #   L_ij = cos(0.9 i + 1.7 j^2 + 0.1) / sqrt(20), Q = L L' + 0.1 I, R = I
    #   Z_kj = sin(0.3 k + 0.5 j + k j + 0.4), H = diag(0.1 + 0.05 k)
    #   y_{t,k} = sin(0.37 t + k) + 0.5 cos(0.11 t k) for t = 1..40; y_{7,2} and all of period 12 missing.
    n, p, N = 20, 5, 40
    T = np.array([[0.45 * math.sin(1.1 * i * i + 0.7 * j + 0.3 * i * j + 0.2) / math.sqrt(n)
                   for j in range(n)] for i in range(n)])
    rho = max(abs(np.linalg.eigvals(T)))
    assert rho < 1.0, rho
    L = np.array([[math.cos(0.9 * i + 1.7 * j * j + 0.1) / math.sqrt(n) for j in range(n)]
                  for i in range(n)])
    Q = L @ L.T + 0.1 * np.eye(n)
    Z = np.array([[math.sin(0.3 * k + 0.5 * j + k * j + 0.4) for j in range(n)] for k in range(p)])
    H = np.diag([0.1 + 0.05 * k for k in range(p)])
    Y = np.array([[math.sin(0.37 * t + k) + 0.5 * math.cos(0.11 * t * k) for k in range(p)]
                  for t in range(1, N + 1)])
    Y[6, 2] = np.nan
    Y[11, :] = np.nan
    res = run(Y, T, np.eye(n), Q, Z, H)
    print(f"// 20-state system (spectral radius of T: {float(rho)!r})")
    print(f"const S20_LOGLIK: f64 = {float(res.llf)!r};")
    fmt("S20_SMOOTHED_T1", res.smoothed_state[:, 0])
    fmt("S20_SMOOTHED_T12", res.smoothed_state[:, 11])
    fmt("S20_SMOOTHED_T40", res.smoothed_state[:, 39])
    fmt("S20_FILTERED_T40", res.filtered_state[:, 39])
    fmt("S20_SMOOTHED_VAR_T12", np.diag(res.smoothed_state_cov[:, :, 11]))
    fmt("S20_SMOOTHED_ETA_T20", res.smoothed_state_disturbance[:, 19])


def nile():
    # Local level on the Nile flow data (100 annual values, 1871-1970; the data set of Durbin and
    # Koopman 2012, ch. 2, as bundled with statsmodels), exact diffuse start, at the variances
    # Durbin and Koopman (2012, sec. 2.10) report as maximum likelihood estimates:
    # sigma^2_eps = 15099, sigma^2_eta = 1469.1.
    y = sm.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=float)
    fmt("NILE", y)
    res = run(y.reshape(-1, 1), np.eye(1), np.eye(1), np.array([[1469.1]]), np.eye(1),
              np.array([[15099.0]]), init="diffuse")
    print("// Nile local level, exact diffuse start")
    print(f"const NILE_LOGLIK: f64 = {float(res.llf)!r};")
    print(f"const NILE_LLF_OBS_1: f64 = {float(res.llf_obs[0])!r};  // statsmodels' term for t = 1")
    print(f"const NILE_LLF_OBS_2: f64 = {float(res.llf_obs[1])!r};")
    fmt("NILE_SMOOTHED", res.smoothed_state[0])
    fmt("NILE_SMOOTHED_VAR", res.smoothed_state_cov[0, 0])
    fmt("NILE_FILTERED", res.filtered_state[0])


if __name__ == "__main__":
    print(f"// statsmodels {sm.__version__}, numpy {np.__version__}")
    ar1_noise()
    arma11()
    system20()
    nile()
