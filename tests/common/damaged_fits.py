"""A tile-compressed FITS cube with one spatial row made unreadable (shared by the map resume checks).

fpack (HEASARC, Debian libcfitsio-bin) compresses the cube; the compressed bytes of one row's tiles are then
overwritten, so cfitsio fails to decompress exactly that row, whichever process reads it.
"""
import subprocess

import numpy as np
from astropy.io import fits


def fpack(src, dst):
    """fpack -g (gzip tiles, lossless for floats with -q 0); returns the completed process."""
    return subprocess.run(["fpack", "-g", "-q", "0", "-O", dst, src], capture_output=True, text=True)


def corrupt_row(src, dst, y_bad):
    """Copy of a tile-compressed cube with the compressed bytes of every tile of spatial row y_bad (0-based)
    overwritten. fpack's default tiles are single rows of NAXIS1, so tile i holds row i % NAXIS2."""
    with fits.open(src, disable_image_compression=True) as h:
        hdr = h[1].header
        data_at = h.fileinfo(1)["datLoc"]
        nrow, row_bytes, ny = hdr["NAXIS2"], hdr["NAXIS1"], hdr["ZNAXIS2"]
        heap_at = data_at + hdr.get("THEAP", nrow * row_bytes)
        assert hdr["ZTILE1"] == hdr["ZNAXIS1"] and all(hdr[f"ZTILE{k}"] == 1 for k in (2, 3, 4))
    raw = bytearray(open(src, "rb").read())
    desc = np.frombuffer(bytes(raw), dtype=">i4", count=2 * nrow, offset=data_at).reshape(nrow, 2)
    for i in range(nrow):
        if i % ny == y_bad:
            n, off = int(desc[i, 0]), int(desc[i, 1])
            raw[heap_at + off:heap_at + off + n] = b"\x5a" * n
    open(dst, "wb").write(bytes(raw))
