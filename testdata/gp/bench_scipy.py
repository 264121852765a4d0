#!/usr/bin/python3
"""Side-by-side timing of scipy's Cholesky for the gp dense benchmarks.

Run:  /usr/bin/python3 testdata/gp/bench_scipy.py
then: go test ./gp -run XXX -bench 'Cholesky|DenseQPLogLikelihood'

Same matrices as BenchmarkCholesky / BenchmarkDenseQPLogLikelihood: a
quasi-periodic kernel (eta = 1, 50, 25, 1) plus unit diagonal at n sorted
uniform epochs over n/3 days. Reports the best of several runs, in ms.
Timings depend on machine load; nothing here is compared in tests.
"""
import sys
import time

import numpy as np
import scipy
import scipy.linalg as sl


def qp(tau):
    return np.exp(-tau**2 / 50.0**2 - 2 * np.sin(np.pi * tau / 25.0)**2)


def best(f, reps):
    b = float("inf")
    for _ in range(reps):
        t0 = time.perf_counter()
        f()
        b = min(b, time.perf_counter() - t0)
    return b * 1e3


rng = np.random.default_rng(1)
print(f"# python {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}")
for n in (500, 1000, 2000):
    t = np.sort(2459000 + n / 3 * rng.random(n))
    r = rng.normal(size=n)
    K = qp(t[:, None] - t[None, :]) + np.eye(n)

    def lnl():
        Kb = qp(t[:, None] - t[None, :]) + np.eye(n)
        c = sl.cho_factor(Kb, lower=True, check_finite=False)
        a = sl.cho_solve(c, r, check_finite=False)
        return -0.5 * r @ a - np.sum(np.log(np.diag(c[0]))) - 0.5 * n * np.log(2 * np.pi)

    reps = 20 if n < 2000 else 8
    fac = best(lambda: sl.cho_factor(K, lower=True, check_finite=False), reps)
    full = best(lnl, reps)
    print(f"n={n}: cho_factor {fac:.2f} ms, full log-likelihood {full:.2f} ms")
