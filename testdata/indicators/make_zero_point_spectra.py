#!/usr/bin/python3
"""Writes noiseless FITS spectra of an invented star at several systemic
velocities, air and vacuum, linear and log-linear WCS, with astropy, and the
truth they were made from (truth.json); activity's TestAstropyZeroPoint runs
it into a temporary folder and measures them with no mask.

    /usr/bin/python3 make_zero_point_spectra.py OUTDIR

Made with astropy 5.2.1, numpy 1.24.2 and pyerfa 2.0.0.1 (Debian 12); the
versions used are written into truth.json.

The spectra hold, on a flat continuum of 10000 (float32):
  * Gaussian lines (sigma 3 km/s) at the laboratory wavelengths of
    spotsift's indicators.LabLines (the same air values, copied here: the
    test checks the identification, not the list), a random two thirds of
    them per star;
  * 700 invented lines at random wavelengths;
  * broad Ca II H and K, Na I D and H-alpha absorption, and a Ca II H and K
    emission core whose strength changes from epoch to epoch (truth.json
    "emission").
Vacuum spectra use wavelengths converted from air by inverting the IAU
formula (Morton 2000, ApJS 130, 403) by iteration.

Each epoch's star velocity is the systemic velocity plus a 35 m/s circular
orbit (P = 9.3 d); the spectrum is observed from the Earth, whose
barycentric velocity comes from ERFA's epv00 at the epoch (geocentre), for
a star at RA 40 deg, Dec +20 deg:
    BERV = v . n,  1 + z_B = gamma (1 + BERV/c),  gamma from |v|,
    1 + z_obs = (1 + z_star) / (1 + z_B),  1 + z_star = sqrt((1+b)/(1-b)).
Half the cases write BERV only (km/s), half BERV and BARYZ = z_B.
"""
import json
import sys

import numpy as np
import astropy
import erfa
from astropy.io import fits
from astropy.wcs import WCS

C = 299792458.0
AU = 149597870700.0
DAY = 86400.0

LAB = np.array([3820.425, 3859.911, 3905.523, 3933.663, 3944.006, 3961.520, 3968.468, 4030.753, 4033.062, 4034.483, 4045.812, 4063.594, 4071.738, 4077.709, 4101.734, 4132.058, 4143.868, 4202.029, 4215.519, 4226.728, 4233.172, 4250.787, 4254.332, 4260.474, 4271.760, 4274.796, 4283.011, 4289.367, 4289.716, 4302.528, 4307.902, 4318.652, 4325.762, 4340.462, 4383.545, 4404.750, 4415.122, 4425.437, 4434.957, 4435.679, 4443.794, 4454.779, 4468.507, 4501.270, 4528.614, 4554.029, 4563.757, 4571.971, 4702.991, 4861.323, 4890.755, 4891.492, 4920.502, 4923.927, 4957.597, 5018.440, 5167.321, 5169.033, 5172.684, 5183.604, 5197.577, 5204.506, 5206.038, 5208.419, 5227.189, 5232.940, 5234.625, 5269.537, 5316.615, 5328.039, 5371.490, 5397.128, 5405.775, 5429.697, 5434.524, 5446.917, 5455.609, 5476.904, 5528.405, 5569.618, 5572.842, 5586.756, 5588.749, 5615.644, 5853.668, 5857.451, 5889.951, 5895.924, 6102.723, 6122.217, 6136.615, 6137.692, 6141.713, 6162.173, 6191.558, 6230.723, 6252.555, 6393.601, 6400.001, 6421.351, 6430.846, 6439.075, 6449.808, 6493.781, 6494.980, 6496.897, 6562.797, 6592.914, 6677.987])
STRONG = [  # centre (air, A), depth, sigma (A)
    (3933.663, 0.92, 1.6), (3968.468, 0.90, 1.4),
    (5889.951, 0.80, 0.25), (5895.924, 0.75, 0.22), (6562.797, 0.70, 0.8),
]
HK = (3933.663, 3968.468)


def air_to_vac(lam):
    vac = np.array(lam, dtype=float)
    for _ in range(6):
        s2 = (1e4 / vac) ** 2
        n = 1 + 8.34254e-5 + 2.406147e-2 / (130 - s2) + 1.5998e-4 / (38.9 - s2)
        vac = lam * n
    return vac


def doppler(v):
    b = v / C
    return np.sqrt((1 + b) / (1 - b))


def main(out):
    rng = np.random.default_rng(17)
    ra, dec = np.radians(40.0), np.radians(20.0)
    nhat = np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])
    cases = [
        (-100e3, "air", "linear", False), (-50e3, "vacuum", "log", True),
        (-12.3e3, "air", "log", False), (3e3, "vacuum", "linear", True),
        (45e3, "air", "log", True), (100e3, "vacuum", "log", False),
        (100e3, "air", "linear", True), (-100e3, "vacuum", "linear", False),
    ]
    truth = {"astropy": astropy.__version__, "numpy": np.__version__, "erfa": erfa.__version__, "cases": []}
    bjds = 2460000.5 + np.array([0.0, 47.3, 101.9, 160.2, 230.7, 301.4])
    for k, (vsys, scale, wcs, write_z) in enumerate(cases):
        keep = rng.random(len(LAB)) < 2 / 3
        lab = LAB[keep]
        inv = rng.uniform(3870, 6640, 700)
        lam_air = np.concatenate([lab, inv])
        depth = np.concatenate([rng.uniform(0.3, 0.8, len(lab)), rng.uniform(0.1, 0.7, len(inv))])
        lam_rest = air_to_vac(lam_air) if scale == "vacuum" else lam_air
        strong = [(air_to_vac(c) if scale == "vacuum" else c, d, s) for c, d, s in STRONG]
        hk = [air_to_vac(c) if scale == "vacuum" else c for c in HK]
        case = {"systemic": vsys, "scale": scale, "wcs": wcs, "baryz": write_z, "epochs": []}
        for j, bjd in enumerate(bjds):
            _, pvb = erfa.epv00(2400000.5, bjd - 2400000.5)
            v = np.array(pvb[1]) * AU / DAY
            berv = float(v @ nhat)
            gamma = 1 / np.sqrt(1 - (v @ v) / C ** 2)
            zb = gamma * (1 + berv / C) - 1
            vstar = vsys + 35.0 * np.sin(2 * np.pi * (bjd - 2460000.5) / 9.3)
            d = doppler(vstar) / (1 + zb)
            emission = float(rng.uniform(0.05, 0.4))
            h = fits.Header()
            if wcs == "linear":
                n = 140000
                h["CTYPE1"] = "AWAV" if scale == "air" else "WAVE"
                h["CRVAL1"] = 3850.0
                h["CDELT1"] = 0.02
            else:
                n = 142000
                h["CTYPE1"] = "AWAV-LOG" if scale == "air" else "WAVE-LOG"
                h["CRVAL1"] = 3850.0
                h["CDELT1"] = 3850.0 * 4e-6
            h["CRPIX1"] = 1.0
            h["CUNIT1"] = "Angstrom"
            w = WCS(h, naxis=1)
            lam = w.pixel_to_world_values(np.arange(n)) * 1e10
            flux = np.ones(n)
            lv = np.log(lam)
            for c, dep in zip(lam_rest * d, depth):
                sig = 3000.0 / C
                i0, i1 = np.searchsorted(lam, [c * (1 - 8 * sig), c * (1 + 8 * sig)])
                x = (lv[i0:i1] - np.log(c)) / sig
                flux[i0:i1] *= 1 - dep * np.exp(-0.5 * x * x)
            for c, dep, s in strong:
                c = c * d
                i0, i1 = np.searchsorted(lam, [c - 10 * s, c + 10 * s])
                x = (lam[i0:i1] - c) / s
                flux[i0:i1] *= 1 - dep * np.exp(-0.5 * x * x)
            for c in hk:
                c = c * d
                i0, i1 = np.searchsorted(lam, [c - 2, c + 2])
                x = (lam[i0:i1] - c) / 0.12
                flux[i0:i1] += emission * np.exp(-0.5 * x * x)
            hdu = fits.PrimaryHDU((1e4 * flux).astype(np.float32))
            hdu.header.update(h)
            h = hdu
            h.header["BJD_TDB"] = float(bjd)
            h.header["BERV"] = (berv / 1e3, "km/s, radial part of observer velocity")
            if write_z:
                h.header["BARYZ"] = (float(zb), "barycentric redshift z_B")
            h.header["OBJECT"] = "invented star"
            name = "case%d_%02d.fits" % (k, j)
            h.writeto(f"{out}/{name}", overwrite=True)
            case["epochs"].append({"file": name, "bjd": float(bjd), "rv": vstar, "berv": berv, "z_b": float(zb), "emission": emission})
        truth["cases"].append(case)
    with open(f"{out}/truth.json", "w") as f:
        json.dump(truth, f, indent=1)


if __name__ == "__main__":
    main(sys.argv[1])
