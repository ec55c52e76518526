#!/usr/bin/env python3
"""Reference rank-normalised split R-hat and bulk ESS (Vehtari et al. 2021) from ArviZ, on fixed
deterministic draws. Run by hand, never at test time:

    python3 -m venv .venv-bench && .venv-bench/bin/pip install numpy scipy arviz
    .venv-bench/bin/python tests/reference/diagnostics_arviz.py

and paste the printed REFERENCE table into src/estimation/diagnostics.rs. The draws are built by
the same closed formula as `fixed_draws` there: chain m, draw i, an AR(1) with coefficient 0.8
driven by sin((i+1)(m+1) 0.7), plus 0.1 m.
"""
import math
import warnings

warnings.simplefilter("ignore")
import numpy as np
import arviz as az


def fixed_draws(chains, n):
    out = np.zeros((chains, n))
    for m in range(chains):
        x = 0.0
        for i in range(n):
            x = 0.8 * x + math.sin((i + 1) * (m + 1) * 0.7)
            out[m, i] = x + 0.1 * m
    return out


rows = []
for chains, n in [(2, 50), (4, 101), (3, 400)]:
    d = fixed_draws(chains, n)
    r = float(az.rhat(d, method="rank"))
    e = float(az.ess(d, method="bulk"))
    rows.append(f"({chains}, {n}, {r!r}, {e!r})")
print(f"// arviz {az.__version__}")
print(f"const REFERENCE: [(usize, usize, f64, f64); {len(rows)}] = [")
for r in rows:
    print(f"    {r},")
print("];")
