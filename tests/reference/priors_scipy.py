#!/usr/bin/env python3
"""Reference log-densities of saddle's priors (spec section 10), from scipy.stats. Run by hand, never
at test time:

    python3 -m venv .venv-bench && .venv-bench/bin/pip install numpy scipy
    .venv-bench/bin/python tests/reference/priors_scipy.py

and paste the printed table into src/estimation/prior.rs (test `log_densities_match_scipy`).

Conventions checked (spec section 10): every prior is on the quantity itself; gamma(shape, scale)
is scipy's gamma(a=shape, scale=scale); invgamma(shape, scale) has density proportional to
x^(-shape-1) exp(-scale/x), which is scipy's invgamma(a=shape, scale=scale); the moments forms are
converted here independently of the Rust code:
  beta(mean m, sd s):     k = m(1-m)/s^2 - 1, a = m k, b = (1-m) k
  gamma(mean m, sd s):    shape = m^2/s^2, scale = s^2/m
  invgamma(mean m, sd s): shape = 2 + m^2/s^2, scale = m (shape - 1)
A truncated prior in [lo, hi] is the density divided by its probability of [lo, hi].
Each row: (Rust constructor, truncation or None, x, log density).
"""
import math
from scipy import stats


def beta_m(m, s):
    k = m * (1 - m) / s**2 - 1
    return stats.beta(m * k, (1 - m) * k), f"Distribution::beta_from_moments({m}, {s})"


def gamma_m(m, s):
    return stats.gamma(m**2 / s**2, scale=s**2 / m), f"Distribution::gamma_from_moments({m}, {s})"


def invgamma_m(m, s):
    a = 2 + m**2 / s**2
    return stats.invgamma(a, scale=m * (a - 1)), f"Distribution::inv_gamma_from_moments({m}, {s})"


cases = [
    ((stats.norm(1.5, 0.25), "Distribution::normal(1.5, 0.25)"), None, [1.0, 1.5, 2.2]),
    (beta_m(0.6, 0.2), None, [0.1, 0.6, 0.95]),
    ((stats.beta(2, 5), "Distribution::beta(2.0, 5.0)"), None, [0.3, 0.001]),
    ((stats.gamma(2, scale=0.5), "Distribution::gamma(2.0, 0.5)"), None, [0.3, 2.0]),
    (gamma_m(1.5, 0.4), None, [1.0, 2.5]),
    ((stats.invgamma(3, scale=0.5), "Distribution::inv_gamma(3.0, 0.5)"), None, [0.1, 0.3, 1.0]),
    (invgamma_m(0.5, 0.2), None, [0.2, 0.7]),
    ((stats.uniform(0.3, 0.6), "Distribution::uniform(0.3, 0.9)"), None, [0.5]),
    ((stats.norm(1.5, 0.25), "Distribution::normal(1.5, 0.25)"), (1.0, 3.0), [1.2, 2.9]),
    (beta_m(0.6, 0.2), (0.2, 0.8), [0.25, 0.7]),
    ((stats.gamma(2, scale=0.5), "Distribution::gamma(2.0, 0.5)"), (0.5, 2.0), [0.6]),
    ((stats.invgamma(3, scale=0.5), "Distribution::inv_gamma(3.0, 0.5)"), (0.2, 1.0), [0.3]),
    ((stats.uniform(0.0, 1.0), "Distribution::uniform(0.0, 1.0)"), (0.2, 0.5), [0.4]),
    ((stats.norm(0.0, 1.0), "Distribution::normal(0.0, 1.0)"), (4.0, 6.0), [4.5]),
]

print("// (distribution, truncation, x, log density) from tests/reference/priors_scipy.py")
for (dist, ctor), trunc, xs in cases:
    for x in xs:
        lp = float(dist.logpdf(x))
        t = "None"
        if trunc is not None:
            lo, hi = trunc
            mass = float(dist.cdf(hi) - dist.cdf(lo))
            if lo >= 4.0:  # upper normal tail: the survival functions keep the digits
                mass = float(dist.sf(lo) - dist.sf(hi))
            lp -= math.log(mass)
            t = f"Some(({lo!r}, {hi!r}))"
        print(f"    ({ctor}, {t}, {x!r}, {lp!r}),")
