"""Figures for the Python module's map(): the same cube as a FITS file through the module, as a numpy array
through the module (handed over through a temporary FITS file), and through the CLI (which also writes the
map file). Prints seconds (best of `repeat`) and pixels per second; asserts nothing.

Usage: PYTHONPATH=build/python /usr/bin/python3 tests/bench/python_map_bench.py build/zeeline [TILES] [METHOD]
TILES (default 2) repeats the demo cube TILES x TILES times in x and y; METHOD defaults to wfa.
"""
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
from astropy.io import fits

import zeeline

HERE = os.path.dirname(os.path.abspath(__file__))
DEMO = os.path.join(HERE, "..", "..", "demo_maps")


def best(f, repeat=3):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        f()
        times.append(time.perf_counter() - t)
    return min(times)


def main():
    binary = sys.argv[1]
    tiles = int(sys.argv[2]) if len(sys.argv) > 2 else 2
    method = sys.argv[3] if len(sys.argv) > 3 else "wfa"
    line = dict(line="FeI_6302", catalog=os.path.join(DEMO, "lines.csv"))
    with fits.open(os.path.join(DEMO, "bipolar_region.fits")) as h:
        cube = np.tile(np.array(h[0].data, dtype=np.float32), (1, 1, tiles, tiles))
    wl = zeeline.info(os.path.join(DEMO, "bipolar_region.fits"))["wavelength_nm"]
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "cube.fits")
        h = fits.PrimaryHDU(cube)
        h.header.update(CTYPE3="AWAV", CUNIT3="nm", CRPIX3=1.0, CRVAL3=wl[0], CDELT3=(wl[-1] - wl[0]) / (wl.size - 1),
                        CTYPE4="STOKES", CRPIX4=1.0, CRVAL4=1.0, CDELT4=1.0)
        h.writeto(path)
        out = os.path.join(d, "maps.fits")
        cli = [binary, "map", path, "--line", line["line"], "--catalog", line["catalog"], "-o", out, "-q",
               "--overwrite", "--method", method]
        figures = [
            ("cli map (file in, map file out)", best(lambda: subprocess.run(cli, check=True))),
            ("zeeline.map(file)", best(lambda: zeeline.map(path, method=method, **line))),
            ("zeeline.map(float32 array)", best(lambda: zeeline.map(cube, wavelength_nm=wl, method=method, **line))),
            ("zeeline.map(float64 array)",
             best(lambda: zeeline.map(cube.astype(np.float64), wavelength_nm=wl, method=method, **line))),
        ]
    pixels = cube.shape[2] * cube.shape[3]
    print(f"cube {cube.shape} (Stokes, wavelength, y, x) = {cube.nbytes / 2**20:.1f} MiB float32, method {method}, "
          f"{os.cpu_count()} cores")
    for name, seconds in figures:
        print(f"{name:36s} {seconds:8.3f} s  {pixels / seconds:10.0f} pixels/s")


if __name__ == "__main__":
    main()
