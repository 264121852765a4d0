#!/usr/bin/python3
"""Reference GLS powers and Baluev false-alarm probabilities for rvfit.

Run with /usr/bin/python3 (Debian astropy); writes gls_ref.json beside this
script. Data sets:
  appendix_a : docs/methods.md Appendix A (16 epochs), powers at 5 frequencies and
               Baluev FAPs at Z = 0.5, 0.7 (f_max = 1).
  irregular  : 80 irregular epochs over ~300 d (deterministic golden-ratio
               sampling), unequal errors; powers on a 3000-point grid
               (astropy method 'cython', the exact sums; FAPs from
               shifted times, see below), the Baluev FAP of
               the highest peak and of several powers.
  large      : the 1000-epoch x 100000-frequency benchmark problem
               (generator identical to rvtest.BenchSeries); astropy exact
               ('cython') powers at every 997th frequency.
All with fit_mean=True, center_data=True, normalization='standard'.
"""
import json
import math
import os

import astropy
import numpy as np
from astropy.timeseries import LombScargle

out = {"astropy_version": astropy.__version__, "numpy_version": np.__version__}

# Appendix A
t = np.array([0.0, 1.3, 2.1, 3.7, 4.4, 5.9, 7.2, 8.0, 9.5, 10.1, 12.6, 13.3, 15.8, 17.0, 18.4, 20.9])
y = 2 * np.sin(2 * np.pi * t / 5.3 + 0.4) + 0.3 + 0.2 * np.cos(1.7 * t**2)
dy = 0.5 + 0.05 * (np.arange(16) % 4)
ls = LombScargle(t, y, dy)
freqs = [0.05, 1 / 5.3, 0.25, 0.5, 0.8]
out["appendix_a"] = {
    "freq": freqs,
    "power": [float(p) for p in ls.power(np.array(freqs), method="slow")],
    "fap_z": [0.5, 0.7],
    "fap": [float(ls.false_alarm_probability(z, method="baluev", maximum_frequency=1.0)) for z in (0.5, 0.7)],
}


def golden(i, a):
    return np.mod(i * a, 1.0)


# irregular
n = 80
i = np.arange(n, dtype=float)
t = np.sort(2459000.0 + 300 * golden(i, 0.6180339887498949) + 0.1 * golden(i, 0.7548776662466927))
dy = 1.5 + golden(i, 0.5698402909980532)
y = 4.0 * np.sin(2 * np.pi * (t - 2459000.0) / 17.3 + 1.1) + 2.0 * np.cos(7.7 * (t - 2459000.0)) + 0.5
fmin, df, nf = 0.002, 0.0007, 3000
f = fmin + df * np.arange(nf)
# Powers are invariant to a shift of the time origin; astropy is given
# t - 2459000 because its phases 2 pi f t at BJD ~ 2.46e6 lose ~1e-9 in
# power (checked against an explicit numpy least-squares fit).
ls = LombScargle(t - 2459000.0, y, dy)
p = ls.power(f, method="cython")
fmax = float(f[-1])
zs = [0.1, 0.2, 0.3, float(p.max())]
# astropy's Baluev FAP takes the weighted variance of t as mean(t^2) -
# mean(t)^2, which loses ~1e-4 of T_eff to cancellation at BJD ~ 2.46e6;
# the FAP is invariant to a time shift, so evaluate it on shifted times.
ls = LombScargle(t - 2459000.0, y, dy)
# LombScargle.false_alarm_probability replaces maximum_frequency by the top
# of its own autofrequency grid, so call astropy's Baluev routine directly
# with the grid's true f_max.
from astropy.timeseries.periodograms.lombscargle import _statistics
out["irregular"] = {
    "t": t.tolist(), "y": y.tolist(), "dy": dy.tolist(),
    "fmin": fmin, "df": df, "n": nf,
    "power": [float(x) for x in p],
    "power_kmax": int(np.argmax(p)),
    "fap_z": zs,
    "fap": [float(_statistics.fap_baluev(z, fmax, t - 2459000.0, y, dy)) for z in zs],
    "fmax": fmax,
}

# large (benchmark problem)
n = 1000
i = np.arange(n, dtype=float)
t = 2458000.0 + 2000 * golden(i, 0.6180339887498949)
dy = 1 + golden(i, 0.7548776662466927)
tt = t - 2458000.0
y = 3 * np.sin(2 * np.pi * tt / 23.7) + 1.5 * np.cos(2 * np.pi * tt / 3.1 + 0.3) + np.sin(12.9898 * i) * 2
fmin, df, nf = 0.0005, 0.00001, 100000
f = fmin + df * np.arange(nf)
ls = LombScargle(t - 2458000.0, y, dy)  # shifted origin, as above
step = 997
idx = np.arange(0, nf, step)
p = ls.power(f[idx], method="cython")
out["large"] = {"fmin": fmin, "df": df, "n": nf, "step": step, "power": [float(x) for x in p]}

with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "gls_ref.json"), "w") as fh:
    json.dump(out, fh, indent=0)
print("astropy", astropy.__version__, "written")
