#!/usr/bin/python3
"""Write astropy_epochs.fits: a per-epoch table written by astropy.

Run with Debian's python3-astropy:  /usr/bin/python3 make_astropy_table.py
The values are invented (synthetic test data); rvfit/table_test.go holds the
same numbers and checks that spotsift reads them back exactly.
Upper-case TTYPEs, velocities in km/s, float32 and int columns and a NaN
(missing) indicator value exercise the reader.
"""
import numpy as np
import astropy
from astropy.table import Table

t = Table()
t["TIME"] = np.array([2460100.5, 2460101.52, 2460103.49, 2460104.51])
t["TIME"].unit = "d"
t["RV"] = np.array([-12.3405, -12.3391, -12.3412, -12.3398])
t["RV"].unit = "km/s"
t["RV_ERR"] = np.array([0.0011, 0.0012, 0.0010, 0.0013])
t["RV_ERR"].unit = "km/s"
t["INSTRUMENT"] = ["NORTH-1", "NORTH-1", "SOUTH-2", "NORTH-1"]
t["FWHM"] = np.array([7.12, 7.15, 7.11, 7.18], dtype=np.float32)
t["FWHM"].unit = "km/s"
t["S_INDEX"] = np.array([0.171, np.nan, 0.169, 0.175])
t["NIGHT"] = np.array([1, 2, 4, 5], dtype=np.int32)
t.meta["EXTNAME"] = "EPOCHS"
t.write("astropy_epochs.fits", overwrite=True)
print("astropy", astropy.__version__)
