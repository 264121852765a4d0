#!/usr/bin/python3
"""astropy timings beside rvfit's BenchmarkGLS (run with /usr/bin/python3).

Same problem as rvtest.BenchSeries(1000): 1000 epochs x 100000 uniform
frequencies from 0.0005 c/d in steps of 1e-5 c/d. Prints the time of
astropy's exact ('cython') and approximate ('fast') methods and the fast
method's worst power error. Compare with
  go test ./rvfit/ -run XXX -bench 'GLS/n=1000'
"""
import time

import astropy
import numpy as np
from astropy.timeseries import LombScargle

n = 1000
i = np.arange(n, dtype=float)
tt = 2000 * np.mod(i * 0.6180339887498949, 1)
dy = 1 + np.mod(i * 0.7548776662466927, 1)
y = 3 * np.sin(2 * np.pi * tt / 23.7) + 1.5 * np.cos(2 * np.pi * tt / 3.1 + 0.3) + np.sin(12.9898 * i) * 2
f = 0.0005 + 1e-5 * np.arange(100000)
ls = LombScargle(tt, y, dy)


def best(fn, reps):
    out, dt = None, np.inf
    for _ in range(reps):
        t0 = time.perf_counter()
        out = fn()
        dt = min(dt, time.perf_counter() - t0)
    return out, dt


exact, te = best(lambda: ls.power(f, method="cython"), 2)
fast, tf = best(lambda: ls.power(f, method="fast"), 10)
print("astropy %s: exact (cython) %.3f s, fast %.4f s, fast worst |dp| %.2g"
      % (astropy.__version__, te, tf, np.max(np.abs(fast - exact))))
