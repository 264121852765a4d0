#!/usr/bin/python3
"""Reference timing for rvfit's Kepler solver (BenchmarkKepler).

A vectorised numpy Newton solver of E - e sin E = M, e uniform in [0, 0.95],
M uniform in [0, 2pi), same distribution as keplerBenchInputs in
rvfit/kepler_test.go. Run with /usr/bin/python3 (Debian numpy). Prints the
time per solve in ns and the worst residual.
"""
import time
import numpy as np

n = 1 << 16
i = np.arange(n, dtype=float)
M = 2 * np.pi * np.mod(i * 0.6180339887498949, 1)
e = 0.95 * np.mod(i * 0.7548776662466927, 1)


def newton(M, e):
    E = M + 0.85 * e * np.sign(np.sin(M))
    for _ in range(100):
        dE = (E - e * np.sin(E) - M) / (1 - e * np.cos(E))
        E -= dE
        if np.max(np.abs(dE)) < 1e-14:
            break
    return E


newton(M, e)
reps = 50
t0 = time.perf_counter()
for _ in range(reps):
    E = newton(M, e)
dt = (time.perf_counter() - t0) / reps / n
print("numpy %s newton: %.1f ns/solve, worst residual %.2g" % (np.__version__, dt * 1e9, np.max(np.abs(E - e * np.sin(E) - M))))
