#!/usr/bin/python3
"""Writes bary_ref.json: barycentric corrections computed from ERFA's
Earth ephemeris, against which spotsift's composition of a header BERV
(indicators.BaryVelocity) is checked.

    /usr/bin/python3 make_bary_ref.py        (pyerfa 2.0.0.1, numpy 1.24.2)

For each epoch (TDB Julian date) and star direction (RA, Dec), with v the
Earth's barycentric velocity from erfa.epv00 (geocentre, no rotation):
    berv  = v . n                               (m/s, the header's BERV)
    speed = |v|                                 (m/s)
    z_b   = gamma (1 + berv/c) - 1,  gamma = 1/sqrt(1 - |v|^2/c^2)
(the observer-motion part of z_B in Wright & Eastman 2014, PASP 126, 838).
"""
import json

import numpy as np
import erfa

C = 299792458.0
AU = 149597870700.0
DAY = 86400.0

stars = [(0.0, 0.0), (100.0, -60.0), (266.4, -29.0), (40.0, 20.0), (270.0, 66.56)]
out = {"erfa": erfa.__version__, "numpy": np.__version__, "rows": []}
for bjd in 2459000.5 + 23.0 * np.arange(32):
    _, pvb = erfa.epv00(2400000.5, bjd - 2400000.5)
    v = np.array(pvb[1]) * AU / DAY
    gamma = 1 / np.sqrt(1 - (v @ v) / C ** 2)
    for ra, dec in stars:
        r, d = np.radians(ra), np.radians(dec)
        n = np.array([np.cos(d) * np.cos(r), np.cos(d) * np.sin(r), np.sin(d)])
        berv = float(v @ n)
        out["rows"].append({"bjd": float(bjd), "ra": ra, "dec": dec, "berv": berv,
                            "speed": float(np.sqrt(v @ v)), "z_b": float(gamma * (1 + berv / C) - 1)})
with open("bary_ref.json", "w") as f:
    json.dump(out, f, indent=0)
