#!/usr/bin/python3
"""Reference values for spotsift/gp dense GP likelihoods.

Run with the Debian interpreter:  /usr/bin/python3 make_ref.py > ref.json
Each case holds its inputs (times, residuals, variances, hyperparameters)
and the values computed here with scipy.linalg.cho_factor / cho_solve on a
covariance built independently in numpy from the formulas in
docs/methods.md §8 (not from the Go code).
"""
import json
import sys

import numpy as np
import scipy
import scipy.linalg as sl


def qp(tau, eta1, eta2, eta3, eta4):
    # Haywood et al. 2014 form.
    return eta1**2 * np.exp(-tau**2 / eta2**2 - 2 * np.sin(np.pi * tau / eta3)**2 / eta4**2)


def matern32(tau, sigma, rho):
    x = np.sqrt(3) * np.abs(tau) / rho
    return sigma**2 * (1 + x) * np.exp(-x)


def sho(tau, s0, w0, q):
    tau = np.abs(tau)
    x = w0 * tau
    if q > 0.5:
        eta = np.sqrt(1 - 1 / (4 * q * q))
        return s0 * w0 * q * np.exp(-x / (2 * q)) * (np.cos(eta * x) + np.sin(eta * x) / (2 * eta * q))
    f = np.sqrt(1 - 4 * q * q)
    return 0.5 * s0 * w0 * q * ((1 + 1 / f) * np.exp(-(1 - f) * x / (2 * q)) + (1 - 1 / f) * np.exp(-(1 + f) * x / (2 * q)))


def rotation_term(tau, b, c, l, p):
    return b / (2 + c) * np.exp(-np.abs(tau) / l) * (np.cos(2 * np.pi * tau / p) + 1 + c)


def qp_derivs(tau, p, lp, le):
    # Rajpaul et al. 2015 unit-amplitude form and lag derivatives.
    g = -np.sin(np.pi * tau / p)**2 / (2 * lp**2) - tau**2 / (2 * le**2)
    g1 = -(np.pi / (2 * p * lp**2)) * np.sin(2 * np.pi * tau / p) - tau / le**2
    g2 = -(np.pi**2 / (p**2 * lp**2)) * np.cos(2 * np.pi * tau / p) - 1 / le**2
    gam = np.exp(g)
    return gam, gam * g1, gam * (g1**2 + g2)


def lnl(K, r):
    c, low = sl.cho_factor(K, lower=True)
    alpha = sl.cho_solve((c, low), r)
    logdet = 2 * np.sum(np.log(np.diag(c)))
    chi2 = float(r @ alpha)
    return chi2, logdet, -0.5 * chi2 - 0.5 * logdet - 0.5 * len(r) * np.log(2 * np.pi), alpha, (c, low)


def lst(x):
    return [float(v) for v in np.asarray(x).ravel()]


cases = []

# Case 1: docs/methods.md Appendix B (SHO + rotation term).
t = np.array([0.0, 0.7, 1.9, 2.2, 3.8, 5.1, 5.3, 7.9, 9.4, 12.0])
y = np.array([1.2, 0.4, -0.3, -0.1, 0.9, 1.5, 1.1, -0.8, -1.3, 0.2])
s = np.array([0.30, 0.25, 0.30, 0.35, 0.30, 0.20, 0.30, 0.25, 0.30, 0.30])
tau = t[:, None] - t[None, :]
K = sho(tau, 1.0, 2 * np.pi / 4, 3.0) + rotation_term(tau, 0.8, 0.5, 20.0, 6.0) + np.diag(s**2)
chi2, ld, ll, alpha, _ = lnl(K, y)
cases.append(dict(name="appendixB", kernel="SHO+RotationTerm", params=[1.0, 2 * np.pi / 4, 3.0, 0.8, 0.5, 20.0, 6.0],
                  t=lst(t), r=lst(y), variance=lst(s**2), chi2=chi2, logdet=ld, lnl=ll, alpha=lst(alpha)))

rng = np.random.default_rng(20261202)

# Case 2: quasi-periodic, N = 60, uneven epochs over 200 d, with predictions.
n = 60
t = np.sort(rng.uniform(0, 200, n)) + 2459000.0
var = rng.uniform(0.5, 2.0, n)**2
r = rng.normal(0, 3, n)
par = [3.0, 40.0, 23.5, 0.6]
tau = t[:, None] - t[None, :]
K = qp(tau, *par) + np.diag(var)
chi2, ld, ll, alpha, cf = lnl(K, r)
tnew = np.array([2459010.3, 2459100.0, 2459150.25, 2459230.0])
ks = qp(tnew[None, :] - t[:, None], *par)
mean = ks.T @ alpha
pvar = par[0]**2 - np.sum(ks * sl.cho_solve(cf, ks), axis=0)
cases.append(dict(name="qp60", kernel="QuasiPeriodic", params=par, t=lst(t), r=lst(r), variance=lst(var),
                  chi2=chi2, logdet=ld, lnl=ll, alpha=lst(alpha), tnew=lst(tnew), mean=lst(mean), predvar=lst(pvar)))

# Case 3: Matern-3/2 plus SHO with Q < 1/2, N = 45, including repeated epochs.
n = 45
t = np.sort(np.concatenate([rng.uniform(0, 50, n - 5), [10.0] * 5]))
var = rng.uniform(0.2, 0.6, n)**2
r = rng.normal(0, 1, n)
tau = t[:, None] - t[None, :]
K = matern32(tau, 1.3, 4.0) + sho(tau, 0.7, 1.1, 0.3) + np.diag(var)
chi2, ld, ll, alpha, _ = lnl(K, r)
cases.append(dict(name="matern_sho_low_q", kernel="Matern32+SHO", params=[1.3, 4.0, 0.7, 1.1, 0.3], t=lst(t), r=lst(r),
                  variance=lst(var), chi2=chi2, logdet=ld, lnl=ll, alpha=lst(alpha)))

# Case 4: Rajpaul et al. 2015 multi-output model, three series with their own epochs.
P, lp, le = 25.0, 0.5, 50.0
Vc, Vr, Lc, Bc, Br = 2.0, 15.0, 0.8, -1.5, 8.0
coef = {"rv": (Vc, Vr), "index": (Lc, 0.0), "bis": (Bc, Br)}
series = []
for name, m in (("rv", 40), ("index", 25), ("bis", 30)):
    ts = np.sort(rng.uniform(0, 120, m))
    series.append(dict(output=name, t=ts, variance=rng.uniform(0.3, 1.0, m)**2, r=rng.normal(0, 2, m)))
blocks = []
for sa in series:
    row = []
    ca, ra = coef[sa["output"]]
    for sb in series:
        cb, rb = coef[sb["output"]]
        tau = sa["t"][:, None] - sb["t"][None, :]
        gam, d1, d2 = qp_derivs(tau, P, lp, le)
        g_dG = d1   # d gamma / d t_i
        g_Gd = -d1  # d gamma / d t_j
        g_dd = -d2  # d2 gamma / d t_i d t_j
        row.append(ca * cb * gam + ra * rb * g_dd + ca * rb * g_Gd + ra * cb * g_dG)
    blocks.append(row)
K = np.block(blocks) + np.diag(np.concatenate([sa["variance"] for sa in series]))
rr = np.concatenate([sa["r"] for sa in series])
chi2, ld, ll, alpha, _ = lnl(K, rr)
cases.append(dict(name="rajpaul3", kernel="Multi(QP)", params=[P, lp, le, Vc, Vr, Lc, Bc, Br],
                  series=[dict(output=sa["output"], t=lst(sa["t"]), variance=lst(sa["variance"]), r=lst(sa["r"])) for sa in series],
                  chi2=chi2, logdet=ld, lnl=ll, alpha=lst(alpha)))

out = dict(generator="testdata/gp/make_ref.py", python=sys.version.split()[0], numpy=np.__version__,
           scipy=scipy.__version__, method="scipy.linalg.cho_factor(lower=True) + cho_solve", cases=cases)
json.dump(out, sys.stdout, indent=1)
sys.stdout.write("\n")
