#!/usr/bin/python3
"""Parameter maps of an invented mixed-field scene for the ME speed benchmark (map_speed.sh).

Usage: /usr/bin/python3 mixed_field_params.py OUT.fits [NX NY]
Every pixel draws (fixed seed) from one of three populations, about a third each:
  strong   B 1000-3000 G, any inclination (resolved or intermediate splitting of Fe I 630.25 nm);
  moderate B 300-1000 G;
  weak     B 10-300 G (weak-field regime);
with azimuth 0-180 deg, v_los -2..2 km/s, eta0 3-20, Doppler width 2.5-3.5 pm. Invented data for a benchmark.
"""
import sys

import numpy as np
from astropy.io import fits

out = sys.argv[1]
nx = int(sys.argv[2]) if len(sys.argv) > 2 else 120
ny = int(sys.argv[3]) if len(sys.argv) > 3 else 100
rng = np.random.default_rng(14)
shape = (ny, nx)
kind = rng.integers(0, 3, size=shape)
lo = np.choose(kind, [1000.0, 300.0, 10.0])
hi = np.choose(kind, [3000.0, 1000.0, 300.0])
field = lo + (hi - lo) * rng.random(shape)
incl = np.degrees(np.arccos(rng.uniform(-1.0, 1.0, size=shape)))
maps = [("B_TOTAL", "G", field), ("B_INCL", "deg", incl), ("B_AZIM", "deg", rng.uniform(0.0, 180.0, size=shape)),
        ("V_LOS", "km/s", rng.uniform(-2.0, 2.0, size=shape)), ("ETA0", "", rng.uniform(3.0, 20.0, size=shape)),
        ("DOPPLER_WIDTH", "nm", rng.uniform(0.0025, 0.0035, size=shape))]
hdus = [fits.PrimaryHDU()]
for name, unit, val in maps:
    h = fits.ImageHDU(val.astype(np.float64), name=name)
    if unit:
        h.header["BUNIT"] = unit
    hdus.append(h)
fits.HDUList(hdus).writeto(out, overwrite=True)
print(f"wrote {out}: {nx} x {ny} pixels, strong/moderate/weak = "
      f"{(kind == 0).sum()}/{(kind == 1).sum()}/{(kind == 2).sum()}")
