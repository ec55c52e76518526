#!/usr/bin/env python3
"""Reference numbers for src/riccati/tests.rs (run by hand, never at test time):
scipy.linalg.solve_discrete_are on small discounted problems with a cross term and a singular A.

The discounted DARE X = Q + beta A'XA - (beta A'XB + S)(R + beta B'XB)^{-1}(beta B'XA + S') is
SciPy's undiscounted one with A -> sqrt(beta) A, B -> sqrt(beta) B (s = S).
Usage: .venv-bench/bin/python tests/reference/dare_scipy.py
"""
import numpy as np
import scipy
from scipy.linalg import solve_discrete_are

CASES = {
    # n = 3, m = 2, beta = 0.96, A singular (third row zero), explosive root 1.3.
    "singular_a_cross_term": dict(
        A=[[1.3, 0.2, -0.1], [0.0, 0.6, 0.4], [0.0, 0.0, 0.0]],
        B=[[1.0, 0.0], [0.3, 1.0], [0.0, 0.5]],
        Q=[[2.0, 0.1, 0.0], [0.1, 1.0, 0.2], [0.0, 0.2, 0.5]],
        R=[[1.0, 0.2], [0.2, 0.5]],
        S=[[0.1, 0.0], [0.0, -0.1], [0.05, 0.02]],
        beta=0.96,
    ),
    # n = 4, m = 1, beta = 0.99, a lightly damped rotation and a unit root, rank-one Q.
    "rank_one_q": dict(
        A=[[0.9, -0.4, 0.0, 0.0], [0.4, 0.9, 0.0, 0.0], [0.0, 0.0, 1.0, 0.1], [0.0, 0.0, 0.0, 0.5]],
        B=[[0.0], [1.0], [1.0], [0.2]],
        Q=[[1.0, 1.0, 1.0, 0.0], [1.0, 1.0, 1.0, 0.0], [1.0, 1.0, 1.0, 0.0], [0.0, 0.0, 0.0, 0.0]],
        R=[[0.3]],
        S=[[0.0], [0.0], [0.0], [0.0]],
        beta=0.99,
    ),
    # Benner, Laub and Mehrmann (1995, "A collection of benchmark examples for the numerical
    # solution of algebraic Riccati equations II: discrete-time case", example 1, from memory):
    # closed form X = (1 + sqrt 5)/2 Q; SciPy gives the same.
    "blm_example_1": dict(
        A=[[4.0, 3.0], [-4.5, -3.5]],
        B=[[1.0], [-1.0]],
        Q=[[9.0, 6.0], [6.0, 4.0]],
        R=[[1.0]],
        S=[[0.0], [0.0]],
        beta=1.0,
    ),
}

print(f"# scipy {scipy.__version__}, numpy {np.__version__}")
for name, c in CASES.items():
    A, B, Q, R, S = (np.array(c[k], dtype=float) for k in "ABQRS")
    sb = np.sqrt(c["beta"])
    X = solve_discrete_are(sb * A, sb * B, Q, R, s=S)
    print(f"// {name}: X row by row")
    for row in X:
        print("    " + ", ".join(repr(float(v)) for v in row) + ",")
