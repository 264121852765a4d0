# Fits the minimax polynomials for sin y and cos y on |y| <= pi/2 used by
# sinCosHalfTurn and the batched Kepler solver (kepler_fast.go): a Remez
# exchange in numpy's extended precision (longdouble, 64-bit mantissa on
# amd64), reference from Taylor series to 40 terms. Prints the Go constants
# of the iteration with the smallest largest error over the grid (the
# exchange does not level the error fully; the grid sizes and iteration
# counts below gave the smallest errors of the few tried, and the sine run
# takes minutes).
# Run with Debian's python3 (numpy 1.24.2): python3 kepler_minimax.py
import numpy as np
L = np.longdouble
PI = L('3.14159265358979323846264338327950288')
h = PI/2
def solve(A, b):
    A = A.copy(); b = b.copy(); n = len(b)
    for k in range(n):
        p = k + np.argmax(abs(A[k:, k])); A[[k, p]] = A[[p, k]]; b[[k, p]] = b[[p, k]]
        for i in range(k+1, n):
            f = A[i, k]/A[k, k]; A[i, k:] -= f*A[k, k:]; b[i] -= f*b[k]
    x = np.zeros(n, dtype=L)
    for k in range(n-1, -1, -1):
        x[k] = (b[k] - A[k, k+1:]@x[k+1:])/A[k, k]
    return x
def taylor(y, odd):
    s = np.zeros_like(y); t = y.copy() if odd else np.ones_like(y); k = 1 if odd else 0
    for i in range(40):
        s += t; t = -t*y*y/((k+1)*(k+2)); k += 2
    return s
def remez(target, powers, npts, iters):
    n = len(powers); m = n+1
    grid = np.linspace(0, 1, npts).astype(L)*h
    Phi = np.stack([grid**p for p in powers], axis=1)
    T = target(grid)
    y = h*(1-np.cos(PI*(np.arange(m, dtype=L)+L(0.5))/m))/2
    best = None
    for it in range(iters):
        A = np.zeros((m, m), dtype=L)
        for i in range(m):
            A[i, :n] = [y[i]**p for p in powers]
            A[i, n] = (-1)**i
        sol = solve(A, target(y)); c = sol[:n]
        err = T - Phi@c
        emax = np.max(abs(err))
        if best is None or emax < best[1]: best = (c, emax, abs(sol[n]))
        s = np.sign(err); idx = []; start = 1  # skip y=0 (err 0)
        for j in range(2, len(grid)+1):
            if j == len(grid) or s[j] != s[start]:
                idx.append(start + np.argmax(abs(err[start:j]))); start = j
        while len(idx) > m:
            a_ = [abs(err[k]) for k in idx]; j = int(np.argmin(a_))
            if j == 0 or j == len(idx)-1 or len(idx) - m == 1:
                idx = idx[1:] if abs(err[idx[0]]) < abs(err[idx[-1]]) else idx[:-1]
            else:
                nb = j-1 if a_[j-1] < a_[j+1] else j+1
                idx = [k for t, k in enumerate(idx) if t not in (j, nb)]
        if len(idx) < m: break
        y = grid[idx]
    return best

if __name__ == '__main__':
    c, e, lev = remez(lambda y: taylor(y, True) - y, [2*k+3 for k in range(7)], 400001, 60)
    print('// sin: largest error %.3g on the grid' % float(e))
    for k, x in enumerate(c):
        print('ksin%d = %r' % (2*k+3, float(x)))
    c, e, lev = remez(lambda y: taylor(y, False) - 1 + y*y/2, [2*k+4 for k in range(7)], 40001, 25)
    print('// cos: largest error %.3g on the grid' % float(e))
    for k, x in enumerate(c):
        print('kcos%d = %r' % (2*k+4, float(x)))
