#!/usr/bin/python3
"""Reference values for activity/starsim tests, computed outside the project.

Run with Debian's python (it has scipy and astropy):  /usr/bin/python3 make_ref.py > ref.json

- gray_fwhm: FWHM (km/s) of Gray's rotational broadening kernel with linear limb
  darkening (docs/methods.md §13), convolved with a unit Gaussian line of sigma
  `sigma`, for each (vsini, sigma, eps); integration by scipy.integrate.quad,
  half-maximum crossing by scipy.optimize.brentq.
- planck: B_lambda(T) in W m^-3 sr^-1 from astropy.modeling.models.BlackBody.
"""
import json
import numpy as np
import scipy
import astropy
from scipy import integrate, optimize
from astropy import units as u
from astropy.modeling.models import BlackBody


def gray(x, eps, vsini):
    return (2 * (1 - eps) * np.sqrt(1 - x * x) + np.pi * eps / 2 * (1 - x * x)) / (np.pi * vsini * (1 - eps / 3))


def profile(v, vsini, sigma, eps):
    f = lambda uu: gray(uu / vsini, eps, vsini) * np.exp(-0.5 * ((v - uu) / sigma) ** 2)
    return integrate.quad(f, -vsini, vsini, epsabs=1e-13, epsrel=1e-12, limit=200)[0]


def fwhm(vsini, sigma, eps):
    peak = profile(0.0, vsini, sigma, eps)
    half = optimize.brentq(lambda v: profile(v, vsini, sigma, eps) - peak / 2, 1e-6, vsini + 10 * sigma, xtol=1e-12)
    return 2 * half


cases = [(2.0, 2.0, 0.6), (5.0, 2.0, 0.0), (10.0, 1.5, 0.6), (30.0, 2.0, 0.3)]
out = {
    "source": "testdata/starsim/make_ref.py, scipy %s, astropy %s" % (scipy.__version__, astropy.__version__),
    "gray_fwhm": [{"vsini": a, "sigma": s, "eps": e, "fwhm": fwhm(a, s, e)} for a, s, e in cases],
    "planck": [],
}
for lam, T in [(5500.0, 5778.0), (3950.0, 5000.0), (6563.0, 3500.0), (4000.0, 4200.0)]:
    bb = BlackBody(temperature=T * u.K, scale=1.0 * u.W / (u.m ** 2 * u.m * u.sr))
    val = bb(lam * u.AA).to_value(u.W / (u.m ** 2 * u.m * u.sr))
    out["planck"].append({"lambda": lam, "T": T, "B": float(val)})
print(json.dumps(out, indent=1))
