#!/usr/bin/python3
"""Writes the malformed-input corpus of spotsift (testdata/malformed).

Plain Python 3, no third-party module: the FITS cases are mutations of two
known-good files of this repository (testdata/indicators/astropy_linear.fits,
a 1-D spectrum written by astropy 5.2.1, and testdata/table/astropy_epochs.fits,
a binary table written by astropy 5.2.1), one header card or one cut each.
Run from this folder:  /usr/bin/python3 make_corpus.py
The cases that would be large (a 2 MB line, 10^6 columns, a huge declared
size) and the named pipes and devices are made by the test itself.
"""
import os
import random

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))


def put(rel, data):
    p = os.path.join(HERE, rel)
    os.makedirs(os.path.dirname(p), exist_ok=True)
    if isinstance(data, str):
        data = data.encode()
    with open(p, "wb") as f:
        f.write(data)


def random_bytes(seed, n):
    """n bytes drawn from random.Random(seed): one generator for all of them."""
    r = random.Random(seed)
    return bytes(r.randrange(256) for _ in range(n))


def card(key, value):
    return ("%-8s= %20s" % (key, value)).ljust(80).encode()


def set_card(b, key, value, occurrence=1):
    """Replaces the n-th card named key (the header layout is unchanged)."""
    k = key.ljust(8).encode()
    seen = 0
    for i in range(0, len(b), 80):
        if b[i:i + 8] == k:
            seen += 1
            if seen == occurrence:
                return b[:i] + card(key, value) + b[i + 80:]
    raise KeyError(key)


_r = random.Random(1)
def add_card(b, key, value):
    """Adds a card before the first END card (in the header's spare room)."""
    end = next(i for i in range(0, len(b), 80) if b[i:i + 8] == b"END     ")
    assert b[end + 80:end + 160].strip() == b"", "no room in the header"
    return b[:end] + card(key, value) + b"END".ljust(80) + b[end + 160:]


GOOD = "time,rv,rv_err,fwhm\n" + "".join(
    "%.2f,%.2f,%.1f,%.0f\n" % (2460000.1 + 4.3 * i + _r.random(), 3 * _r.gauss(0, 1), 1 + 0.2 * _r.random(), 7000 + 3 * _r.gauss(0, 1))
    for i in range(24))


def table(rows):
    return "time,rv,rv_err,fwhm\n" + "".join(r + "\n" for r in rows)


ok = GOOD.splitlines()[1:]

# --- per-epoch tables (scan, vet) ----------------------------------------
put("tables/empty.csv", "")
put("tables/header-only.csv", "time,rv,rv_err,fwhm\n")
put("tables/cr-only.csv", GOOD.replace("\n", "\r"))
put("tables/utf16.csv", "\ufeff".encode("utf-16-le") + GOOD.encode("utf-16-le"))
put("tables/nul-byte.csv", table(ok[:2] + ["2460007.90,2.5\x00,1.1,6999"] + ok[3:]))
put("tables/binary.csv", random_bytes(19, 300))
put("tables/control-chars.csv", b"\x16" * 300)  # control characters only, valid UTF-8
put("tables/ragged.csv", table(ok[:2] + ["2460007.90,2.5,1.1,6999,12"] + ok[3:]))
put("tables/text-number.csv", table(ok[:3] + ["2460011.20,abc,1.0,7002"] + ok[4:]))
put("tables/dup-column.csv", "time,rv,rv_err,rv\n" + "".join(r + "\n" for r in ok))
put("tables/no-rv.csv", "time,velocity,rv_err\n" + "".join(",".join(r.split(",")[:3]) + "\n" for r in ok))
put("tables/negative-err.csv", table(ok[:4] + ["2460015.60,-1.9,-1.2,7000"] + ok[5:]))
put("tables/zero-err.csv", table(ok[:4] + ["2460015.60,-1.9,0,7000"] + ok[5:]))
put("tables/tiny-err.csv", table(ok[:4] + ["2460015.60,-1.9,5e-324,7000"] + ok[5:]))
put("tables/huge-err.csv", table(ok[:4] + ["2460015.60,-1.9,1e308,7000"] + ok[5:]))
put("tables/huge-rv.csv", table(ok[:2] + ["2460007.90,1e308,1.1,6999", "2460011.20,-1e308,1.0,7002"] + ok[4:]))
put("tables/huge-indicator.csv", table(ok[:2] + ["2460007.90,2.5,1.1,1.7e308", "2460011.20,0.1,1.0,-1.7e308"] + ok[4:]))
put("tables/huge-time.csv", table(ok[:3] + ["1e308,0.1,1.0,7002"] + ok[4:]))
put("tables/inf.csv", table(ok[:3] + ["2460011.20,inf,1.0,7002"] + ok[4:]))
put("tables/nan-time.csv", table(ok[:3] + ["nan,0.1,1.0,7002"] + ok[4:]))
put("tables/duplicate-epoch.csv", table(ok[:3] + [ok[2]] + ok[4:]))

fits_table = open(os.path.join(ROOT, "testdata/table/astropy_epochs.fits"), "rb").read()
put("tables/fits-tfields.fits", set_card(fits_table, "TFIELDS", "999"))
put("tables/fits-tform.fits", set_card(fits_table, "TFORM1", "'Q'"))
put("tables/fits-negative-tform.fits", set_card(fits_table, "TFORM2", "'-3D'"))
put("tables/fits-naxis1.fits", set_card(fits_table, "NAXIS1", "5"))
put("tables/fits-naxis2-huge.fits", set_card(fits_table, "NAXIS2", "4000000000000"))
put("tables/fits-truncated.fits", fits_table[:2880 + 2880 + 100])
put("tables/fits-not-fits.fits", "This is not a FITS file, only text with a .fits name.\n")

# --- star files (vet --star) --------------------------------------------
put("stars/syntax.toml", 'name = "Bad-1"\nteff = = 5700\n')
put("stars/unknown-key.toml", 'name = "Bad-2"\ntemperature = 5700\n')
put("stars/teff-range.toml", 'name = "Bad-3"\nteff = -5\n')
put("stars/wrong-type.toml", 'name = "Bad-4"\nmass = "heavy"\n')
put("stars/binary.toml", random_bytes(20, 200))

# --- spectra (measure --spectra: one folder each) ------------------------
spec = open(os.path.join(ROOT, "testdata/indicators/astropy_linear.fits"), "rb").read()
put("spectra/naxis0/epoch-1.fits", set_card(spec, "NAXIS", "0"))
put("spectra/card-naxis0/epoch-1.fits", add_card(spec, "NAXIS0", "5"))
put("spectra/card-naxis-1/epoch-1.fits", add_card(spec, "NAXIS-1", "5"))
put("spectra/naxis-negative/epoch-1.fits", set_card(spec, "NAXIS", "-1"))
put("spectra/naxis1-huge/epoch-1.fits", set_card(spec, "NAXIS1", "4000000000000"))
put("spectra/naxis1-negative/epoch-1.fits", set_card(spec, "NAXIS1", "-400"))
put("spectra/bitpix/epoch-1.fits", set_card(spec, "BITPIX", "7"))
put("spectra/cdelt-zero/epoch-1.fits", set_card(spec, "CDELT1", "0.0"))
put("spectra/crval-huge/epoch-1.fits", set_card(spec, "CRVAL1", "1.7E308"))
put("spectra/truncated/epoch-1.fits", spec[:2880 + 500])
put("spectra/garbage-text/epoch-1.txt", "wavelength flux\n5000.0 abc\n5000.1 1.0\n")
put("spectra/binary/epoch-1.fits", random_bytes(21, 3000))

# --- manifests (survey --manifest) ---------------------------------------
put("manifests/no-data-column.csv", "name,star_file\nA-1,star.toml\n")
put("manifests/duplicate-name.csv", "name,data\nA-1,../tables/ragged.csv\nA-1,../tables/ragged.csv\n")
put("manifests/long-name.csv", "name,data\n" + "L" * 300 + ",../tables/ragged.csv\n")
put("manifests/bad-period.csv", "name,data,periods\nA-1,../tables/ragged.csv,-3\n")
put("manifests/unknown-column.csv", "name,data,colour\nA-1,../tables/ragged.csv,red\n")
put("manifests/syntax.toml", "[[star]]\nname = \"A-1\"\ndata = \n")
put("manifests/empty.csv", "")
