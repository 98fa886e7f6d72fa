#!/usr/bin/python3
"""Outside check of `zeeline lande --json` and `zeeline line --json` (the JSON keys are a contract).

References, all independent of zeeline:
  * Landé g of LS terms: the closed formula g = 1 + (g_s - 1)(J(J+1) - L(L+1) + S(S+1)) / (2J(J+1)),
    evaluated here with exact fractions (g_s = 2) and in floats with scipy.constants' electron g factor.
  * Component strengths: 3 * wigner_3j(J_u, J_l, 1, -M_u, M_l, -q)^2 from sympy.physics.wigner.
  * Lorentz unit: e lambda^2 B / (4 pi m_e c) from scipy.constants (CODATA).
Usage: /usr/bin/python3 cli_line_sympy_check.py /path/to/zeeline
"""
import json
import math
import subprocess
import sys
from fractions import Fraction as F

import scipy.constants as sc
from sympy import Rational
from sympy.physics.wigner import wigner_3j

ZEELINE = sys.argv[1]
LETTERS = "SPDFGHIKLMNOQ"
failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def run(*args, expect_rc=0):
    p = subprocess.run([ZEELINE, *args], capture_output=True, text=True)
    if p.returncode != expect_rc:
        failures.append(f"{args}: exit {p.returncode}, expected {expect_rc}; stderr={p.stderr.strip()}")
    return p


def parse_ls(t):
    i = 0
    while t[i].isdigit():
        i += 1
    mult = int(t[:i])
    L = LETTERS.index(t[i])
    j = t[i + 1:]
    J = F(int(j.split("/")[0]), 2) if "/" in j else F(int(j))
    return F(mult - 1, 2), L, J


def lande_ls(t, gs=F(2)):
    S, L, J = parse_ls(t)
    if J == 0:
        return F(0)
    return 1 + (gs - 1) * (J * (J + 1) - L * (L + 1) + S * (S + 1)) / (2 * J * (J + 1))


levels = ["2S1/2", "2P1/2", "2P3/2", "5P1", "5P2", "5D2", "5D4", "7D1", "4D1/2", "6F11/2", "3P2", "1D2", "8S7/2"]
# -- lande, textbook g_s = 2, exact fractions
out = json.loads(run("lande", *levels, "--gs", "2", "--json").stdout)
check([o["level"] for o in out] == levels, "lande --json keeps the order of the levels")
for o in out:
    ref = float(lande_ls(o["level"]))
    check(abs(o["g"] - ref) < 1e-12, f"lande {o['level']}: {o['g']} vs closed formula {ref}")
# -- lande, default g_s = CODATA electron g factor (scipy.constants)
gs = abs(sc.physical_constants["electron g factor"][0])
out = json.loads(run("lande", *levels, "--json").stdout)
for o in out:
    S, L, J = parse_ls(o["level"])
    Jf, Sf = float(J), float(S)
    ref = 0.0 if J == 0 else 1 + (gs - 1) * (Jf * (Jf + 1) - L * (L + 1) + Sf * (Sf + 1)) / (2 * Jf * (Jf + 1))
    check(abs(o["g"] - ref) < 1e-12, f"lande CODATA {o['level']}: {o['g']} vs {ref}")

# -- line: full patterns against sympy 3j
transitions = [("2S1/2", "2P1/2"), ("2S1/2", "2P3/2"), ("5P1", "5D0"), ("5P2", "5D2"), ("5D4", "5F5"),
               ("5D3", "5D4"), ("1P1", "1D2"), ("3P2", "3S1"), ("6F11/2", "6D9/2"), ("1S0", "1P1")]
for lo, up in transitions:
    res = json.loads(run("line", "--lower", lo, "--upper", up, "--gs", "2", "--json").stdout)
    gl, gu = lande_ls(lo), lande_ls(up)
    Jl, Ju = parse_ls(lo)[2], parse_ls(up)[2]
    # independent closed forms (LL04 eqs. 3.44, 3.47) in exact fractions
    d = Ju * (Ju + 1) - Jl * (Jl + 1)
    s = Ju * (Ju + 1) + Jl * (Jl + 1)
    geff = (gu + gl) / 2 + (gu - gl) * d / 4
    G = geff ** 2 - (gu - gl) ** 2 * (16 * s - 7 * d ** 2 - 4) / 80
    check(abs(res["g_eff"] - float(geff)) < 1e-12, f"{lo}->{up} g_eff {res['g_eff']} vs {float(geff)}")
    check(abs(res["G"] - float(G)) < 1e-12, f"{lo}->{up} G {res['G']} vs {float(G)}")
    ref = {}
    Mu = -Ju
    while Mu <= Ju:
        for q in (-1, 0, 1):
            Ml = Mu + q
            if abs(Ml) <= Jl:
                w = wigner_3j(Rational(Ju.numerator, Ju.denominator), Rational(Jl.numerator, Jl.denominator), 1,
                              -Rational(Mu.numerator, Mu.denominator), Rational(Ml.numerator, Ml.denominator), -q)
                st = 3 * float(w) ** 2
                if st > 0:
                    ref[(float(Mu), float(Ml))] = (float(gl * Ml - gu * Mu), st)
        Mu += 1
    got = {(c["Mu"], c["Ml"]): (c["shift"], c["strength"]) for c in res["components"]}
    check(set(got) == set(ref), f"{lo}->{up} component set differs: {sorted(got)} vs {sorted(ref)}")
    for k in ref:
        if k in got:
            check(abs(got[k][0] - ref[k][0]) < 1e-12 and abs(got[k][1] - ref[k][1]) < 1e-12,
                  f"{lo}->{up} component {k}: {got[k]} vs sympy {ref[k]}")

# -- Lorentz shift against scipy.constants
res = json.loads(run("line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "6302.494A", "--field", "0.15T",
                     "--json").stdout)
lam = 630.2494e-9
ref_nm = sc.e * lam ** 2 * 0.15 / (4 * math.pi * sc.m_e * sc.c) * 1e9
check(abs(res["lorentz_shift_nm"] - ref_nm) < 1e-9 * ref_nm, f"lorentz_shift_nm {res['lorentz_shift_nm']} vs {ref_nm}")

# -- one line of a catalog: Na D2 (2S1/2 -> 2P3/2), g_eff = 7/6 with g_s = 2 (textbook value, from memory)
import os
catalog = os.path.join(os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))), "demo_maps",
                       "lines.csv")
res = json.loads(run("line", "--catalog", catalog, "--line", "NaI_D2", "--gs", "2", "--json").stdout)
check(isinstance(res, dict) and res.get("name") == "NaI_D2", f"--line gives one object: {str(res)[:80]}")
check(abs(res["g_eff"] - 7.0 / 6.0) < 1e-12, f"NaI_D2 g_eff {res['g_eff']}")
p = run("line", "--catalog", catalog, "--line", "NoSuchLine", expect_rc=1)
check("NoSuchLine" in p.stderr and "NaI_D2" in p.stderr, f"unknown line message: {p.stderr!r}")

# -- errors: bad level exits 1 naming the token; bad unit exits 2; J=0->0 refused
p = run("lande", "3P3", expect_rc=1)
check("3P3" in p.stderr and "cannot be reached" in p.stderr, f"bad level message: {p.stderr!r}")
p = run("line", "--lower", "1S0", "--upper", "3P0", expect_rc=1)
check("J = 0 -> J = 0" in p.stderr, f"J=0->0 message: {p.stderr!r}")
p = run("line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630furlongs", "--field", "1T", expect_rc=2)
check("630furlongs" in p.stderr, f"bad unit message: {p.stderr!r}")

print(f"{len(failures)} failed" if failures else "all CLI atomic checks passed")
sys.exit(1 if failures else 0)
