#!/usr/bin/python3
"""Writes the FITS fixtures of spotsift's indicators package and the values
astropy reads from them (astropy_ref.json).

Run with the Debian python, which has astropy:  /usr/bin/python3 make_fixtures.py
The astropy and numpy versions used are recorded in astropy_ref.json.
"""
import json

import numpy as np
import astropy
from astropy.io import fits
from astropy.wcs import WCS

rng = np.random.default_rng(1)
ref = {"astropy": astropy.__version__, "numpy": np.__version__, "files": {}}


def flux(n):
    x = np.arange(n)
    return (1000 + 200 * np.sin(x / 9.0) - 300 * np.exp(-0.5 * ((x - n / 2) / 3.0) ** 2)).astype(np.float32)


def record(name, hdul, pixels, wave):
    ref["files"][name] = {"pixels": pixels, "wavelength_angstrom": wave}


# 1. Linear WCS, float32, vacuum ('WAVE'), Angstrom, DATE-OBS and MJD-OBS.
n = 400
h = fits.PrimaryHDU(flux(n))
h.header["CTYPE1"] = "WAVE"
h.header["CUNIT1"] = "Angstrom"
h.header["CRPIX1"] = 11.0
h.header["CRVAL1"] = 5000.25
h.header["CDELT1"] = 0.0125
h.header["DATE-OBS"] = "2024-03-05T01:02:03.500"
h.header["MJD-OBS"] = 60374.04309606
h.header["OBJECT"] = "fixture"
h.header["BERV"] = (-12.345, "km/s")
h.writeto("astropy_linear.fits", overwrite=True)
w = WCS(h.header)
pix = [0, 10, 199, 399]
record("astropy_linear.fits", None, pix, [float(w.pixel_to_world_values(p)) * 1e10 for p in pix])
ref["files"]["astropy_linear.fits"]["flux"] = [float(v) for v in flux(n)[pix]]
ref["files"]["astropy_linear.fits"]["mjd_obs"] = 60374.04309606
ref["files"]["astropy_linear.fits"]["berv_kms"] = -12.345

# 2. Logarithmic WCS in nm with CD1_1, air ('AWAV-LOG'), float64.
n = 300
data = flux(n).astype(np.float64)
h = fits.PrimaryHDU(data)
h.header["CTYPE1"] = "AWAV-LOG"
h.header["CUNIT1"] = "nm"
h.header["CRPIX1"] = 1.0
h.header["CRVAL1"] = 600.0
h.header["CD1_1"] = 600.0 * 2e-6
h.header["MJD-OBS"] = 60000.5
h.writeto("astropy_lognm.fits", overwrite=True)
w = WCS(h.header)
pix = [0, 1, 150, 299]
record("astropy_lognm.fits", None, pix, [float(w.pixel_to_world_values(p)) * 1e10 for p in pix])

# 3. Binary table, one pixel per row, wavelength in nm.
n = 200
wl = np.linspace(550.0, 552.0, n)
t = fits.BinTableHDU.from_columns([
    fits.Column(name="WAVELENGTH", format="D", unit="nm", array=wl),
    fits.Column(name="FLUX", format="E", array=flux(n)),
    fits.Column(name="ERR", format="E", array=np.full(n, 30.0, dtype=np.float32)),
])
p = fits.PrimaryHDU()
p.header["WAVESCAL"] = "air"
p.header["MJD-OBS"] = 60001.25
fits.HDUList([p, t]).writeto("astropy_table.fits", overwrite=True)
ref["files"]["astropy_table.fits"] = {"pixels": [0, 199], "wavelength_angstrom": [5500.0, 5520.0]}

# 4. Echelle: 3 orders x 100 pixels, wavelengths in an image extension.
no, n = 3, 100
wave = np.array([[4000.0 + 50 * o + 0.3 * i + 1e-4 * i * i for i in range(n)] for o in range(no)])
fl = np.array([flux(n) for _ in range(no)], dtype=np.float32)
p = fits.PrimaryHDU(fl)
p.header["MJD-OBS"] = 60002.0
p.header["WAVESCAL"] = "vacuum"
wv = fits.ImageHDU(wave, name="WAVE")
fits.HDUList([p, wv]).writeto("astropy_echelle.fits", overwrite=True)
ref["files"]["astropy_echelle.fits"] = {"pixels": [0, 99], "wavelength_angstrom": [float(wave[2, 0]), float(wave[2, 99])]}

# Broken files, each with one defect.
def linear(data, **kw):
    h = fits.PrimaryHDU(data)
    h.header["CTYPE1"] = "WAVE"
    h.header["CRPIX1"] = 1.0
    h.header["CRVAL1"] = 5000.0
    h.header["CDELT1"] = 0.01
    h.header["MJD-OBS"] = 60000.0
    for k, v in kw.items():
        if v is None:
            del h.header[k]
        else:
            h.header[k] = v
    return h

d = flux(64)
d[10] = np.nan
linear(d).writeto("broken_nan.fits", overwrite=True)
d = flux(64)
d[20] = -5.0
linear(d).writeto("broken_negative.fits", overwrite=True)
linear(flux(64), CRVAL1=None).writeto("broken_no_crval.fits", overwrite=True)
linear(flux(64), CDELT1=None).writeto("broken_no_cdelt.fits", overwrite=True)
linear(flux(64), CDELT1=-0.01).writeto("broken_decreasing.fits", overwrite=True)
linear(np.ones((2, 3, 8), dtype=np.float32)).writeto("broken_rank3.fits", overwrite=True)
linear(flux(2000)).writeto("broken_truncated.fits", overwrite=True)
with open("broken_truncated.fits", "r+b") as f:
    f.truncate(2880 + 3000)
wl = np.linspace(550.0, 552.0, 50)
wl[30] = wl[29]
t = fits.BinTableHDU.from_columns([
    fits.Column(name="WAVE", format="D", unit="nm", array=wl),
    fits.Column(name="FLUX", format="E", array=flux(50)),
])
p = fits.PrimaryHDU()
p.header["WAVESCAL"] = "air"
fits.HDUList([p, t]).writeto("broken_table_repeat.fits", overwrite=True)

with open("astropy_ref.json", "w") as f:
    json.dump(ref, f, indent=1, sort_keys=True)
    f.write("\n")
