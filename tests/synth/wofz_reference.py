#!/usr/bin/python3
"""Reference Voigt/Faraday-Voigt values from scipy.special.wofz (independent of zeeline).

Prints one row per (a, v): a v H F dH/dv dF/dv, with w(v + i a) = H + 2 i F and the derivatives from
w'(z) = -2 z w(z) + 2 i / sqrt(pi) (Abramowitz & Stegun 7.1.20). Grid: a in logspace(-4, 1, 41) and
v in linspace(-50, 50, 2001) plus a dense core |v| <= 6 (step 0.01). Used at test time by
tests/synth/voigt_test.cpp (run with Debian's /usr/bin/python3, which has scipy).
"""
import sys

import numpy as np
from scipy.special import wofz


def main():
    a = np.logspace(-4.0, 1.0, 41)
    v = np.unique(np.concatenate([np.linspace(-50.0, 50.0, 2001), np.linspace(-6.0, 6.0, 1201)]))
    A, V = np.meshgrid(a, v, indexing="ij")
    z = V + 1j * A
    w = wofz(z)
    dw = -2.0 * z * w + 2j / np.sqrt(np.pi)
    out = np.column_stack([A.ravel(), V.ravel(), w.real.ravel(), 0.5 * w.imag.ravel(),
                           dw.real.ravel(), 0.5 * dw.imag.ravel()])
    np.savetxt(sys.stdout, out, fmt="%.17g")


if __name__ == "__main__":
    main()
