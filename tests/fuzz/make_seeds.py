#!/usr/bin/python3
"""Writes the seed corpora of tests/fuzz/corpus/<target>/ (run from anywhere: /usr/bin/python3 make_seeds.py).

Text seeds are typical valid inputs of each parser plus a few near-misses; the FITS header seeds are the header
cards of small valid cubes and spectra, made with astropy.io.fits (one card per line, as fuzz_fits_header.cpp
reads them). The table seeds are short extracts of the bundled demo files."""
import os
import pathlib

from astropy.io import fits

here = pathlib.Path(__file__).resolve().parent
root = here.parent.parent


def write(target, name, data):
    d = here / "corpus" / target
    d.mkdir(parents=True, exist_ok=True)
    (d / name).write_bytes(data if isinstance(data, bytes) else data.encode())


levels = ["5D4", "2P3/2", "3P1", "4F9/2", "5Fo5", "3P*2", "5De0", "1S0", "8S7/2", "5D4:g=1.502",
          "jK(2P3/2,p,5/2,2)", "jK(2P1/2,d,3/2,2)", "jj(2P1/2,2S1/2,1)", "jj(2P3/2,2D5/2,4):g=1.2",
          "5P1|5D0", "2S1/2|2P3/2", "jK(2P3/2,s,3/2,2)|jK(2P3/2,p,5/2,3)", "3P2|3S1", "2P12/2", "jK((2P3/2)"]
for i, t in enumerate(levels):
    write("fuzz_level", f"seed{i:02d}", t)

units = [(0, "630.25nm"), (0, "6302.5A"), (0, "0.63um"), (0, "1e400nm"), (1, "1.2kG"), (1, "0.12T"),
         (1, "120mT"), (2, "0.5km/s"), (2, "500m/s"), (3, "1.5eV"), (3, "12kK"), (4, "1.3mbar"),
         (4, "10Torr"), (5, "1e15cm-3"), (5, "1e21m^-3"), (6, "55.845amu"), (6, "6.64e-27kg"),
         (7, "3.6A"), (8, "6.1e7/s"), (8, "6.1e7s-1"), (9, "1/2=0,3/2=17.196"), (9, "0=0;1=16.4;2=43.4"),
         (0, "nan nm"), (1, "inf G")]
for i, (sel, t) in enumerate(units):
    write("fuzz_units", f"seed{i:02d}", bytes([sel]) + t.encode())

write("fuzz_line_list", "demo_lines.csv", (root / "demo_maps" / "lines.csv").read_bytes())
write("fuzz_line_list", "plasma_lines.csv", (root / "demo_maps" / "plasma_lines.csv").read_bytes())
write("fuzz_line_list", "term_energies.csv",
      "name,wavelength,frame,species,lower,upper,upper_term_energies,lower_term_energies\n"
      "NaI_D2,588.995nm,air,Na I,2S1/2,2P3/2,1/2=16956.170;3/2=16973.366,\n"
      "LiI,6707.8A,air,Li I,2S1/2,2P3/2,1/2=14903.66;3/2=14904.00,\n")

spec = (root / "demo_maps" / "spectra" / "cd_lamp_1T.txt").read_text().splitlines()
write("fuzz_spectrum_table", "cd_lamp_head.txt", "\n".join(spec[:40]) + "\n")
write("fuzz_spectrum_table", "i_only.txt", "".join(f"{630.0 + 0.01 * k:.3f} {1.0 - 0.5 * (k == 5):.3f}\n"
                                                   for k in range(12)))
write("fuzz_spectrum_table", "csv.txt", "wavelength,I,V\n" + "".join(f"{6300.0 + k}A,{1.0},{0.001 * k}\n"
                                                                  for k in range(10)))

cal = (root / "demo_maps" / "calibration" / "bench_sequence.csv").read_text()
write("fuzz_calibration_table", "bench_sequence.csv", cal)
write("fuzz_calibration_table", "small.csv", "state_name,polarizer_deg,retarder_deg,m1,m2,m3,m4\n"
      "open,,,1,1,1,1\ndark,,,0,0,0,0\np0,0,,1.5,0.5,1,1\np45,45,,1,1,1.5,0.5\nc,0,45,1,1,0.5,1.5\n")


def cube_header(shape_fits, cards, bitpix=-32):
    """Header of a primary HDU with NAXISn = shape_fits (FITS order) and the given cards."""
    h = fits.Header()
    h["SIMPLE"] = True
    h["BITPIX"] = bitpix
    h["NAXIS"] = len(shape_fits)
    for i, n in enumerate(shape_fits):
        h[f"NAXIS{i + 1}"] = n
    for k, v in cards:
        h[k] = v
    return "\n".join(c.image for c in h.cards) + "\n"


spatial = [("CTYPE1", "HPLN-TAN"), ("CUNIT1", "arcsec"), ("CRPIX1", 1.0), ("CRVAL1", 0.0), ("CDELT1", 0.5),
           ("CTYPE2", "HPLT-TAN"), ("CUNIT2", "arcsec"), ("CRPIX2", 1.0), ("CRVAL2", 0.0), ("CDELT2", 0.5)]
wave = [("CTYPE3", "AWAV"), ("CUNIT3", "nm"), ("CRPIX3", 1.0), ("CRVAL3", 630.2), ("CDELT3", 0.002)]
stokes = [("CTYPE4", "STOKES"), ("CRPIX4", 1.0), ("CRVAL4", 1.0), ("CDELT4", 1.0)]
write("fuzz_fits_header", "cube_xywS.hdr", cube_header([2, 2, 12, 4], spatial + wave + stokes))
write("fuzz_fits_header", "cube_decreasing.hdr",
      cube_header([2, 2, 12, 4], spatial + [("CTYPE3", "WAVE"), ("CUNIT3", "Angstrom"), ("CRPIX3", 1.0),
                                             ("CRVAL3", 6302.2), ("CDELT3", -0.02)] + stokes))
write("fuzz_fits_header", "cube_freq.hdr",
      cube_header([2, 2, 12, 2], spatial + [("CTYPE3", "FREQ"), ("CUNIT3", "Hz"), ("CRPIX3", 1.0),
                                             ("CRVAL3", 4.757e14), ("CDELT3", 1e9)]
                  + [("CTYPE4", "STOKES"), ("CRPIX4", 1.0), ("CRVAL4", 1.0), ("CDELT4", 3.0)], bitpix=-64))
write("fuzz_fits_header", "cube_int16_blank.hdr",
      cube_header([2, 2, 12, 4], spatial + wave + stokes + [("BSCALE", 0.001), ("BZERO", 10.0), ("BLANK", -32768)],
                  bitpix=16))
write("fuzz_fits_header", "cube_stokes_first_log.hdr",
      cube_header([4, 12, 2, 2], [("CTYPE1", "STOKES"), ("CRPIX1", 1.0), ("CRVAL1", 1.0), ("CDELT1", 1.0),
                                  ("CTYPE2", "WAVE-LOG"), ("CUNIT2", "m"), ("CRPIX2", 1.0), ("CRVAL2", 6.302e-7),
                                  ("CDELT2", 1e-12), ("CTYPE3", "HPLN-TAN"), ("CUNIT3", "arcsec"), ("CRVAL3", 0.0),
                                  ("CDELT3", 1.0), ("CRPIX3", 1.0), ("CTYPE4", "HPLT-TAN"), ("CUNIT4", "arcsec"),
                                  ("CRVAL4", 0.0), ("CDELT4", 1.0), ("CRPIX4", 1.0)]))
write("fuzz_fits_header", "cube_cd_matrix.hdr",
      cube_header([2, 2, 12, 4], [("CTYPE1", "HPLN-TAN"), ("CTYPE2", "HPLT-TAN"), ("CUNIT1", "arcsec"),
                                  ("CUNIT2", "arcsec"), ("CD1_1", 0.5), ("CD1_2", 0.1), ("CD2_1", -0.1),
                                  ("CD2_2", 0.5), ("CRPIX1", 1.0), ("CRPIX2", 1.0), ("CRPIX3", 1.0), ("CRPIX4", 1.0), ("CTYPE3", "WAVN"), ("CUNIT3", "cm-1"), ("CRVAL3", 15870.0),
                                  ("CD3_3", -0.05), ("CTYPE4", "STOKES"), ("CRVAL4", 1.0), ("CD4_4", 1.0)]))
write("fuzz_fits_header", "spectrum_1d.hdr",
      cube_header([12], [("CTYPE1", "AWAV"), ("CUNIT1", "nm"), ("CRPIX1", 1.0), ("CRVAL1", 630.2),
                         ("CDELT1", 0.002)]))
write("fuzz_fits_header", "spectrum_2d_stokes.hdr",
      cube_header([12, 4], [("CTYPE1", "WAVE"), ("CUNIT1", "Angstrom"), ("CRPIX1", 1.0), ("CRVAL1", 6302.0),
                            ("CDELT1", 0.02), ("CTYPE2", "STOKES"), ("CRPIX2", 1.0), ("CRVAL2", 1.0),
                            ("CDELT2", 1.0)]))
print("seeds written under", here / "corpus")
