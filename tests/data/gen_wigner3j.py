#!/usr/bin/python3
"""Reference Wigner 3j symbols from sympy.physics.wigner (Debian python3-sympy).

Writes tests/data/wigner3j_sympy.csv: 2j1,2j2,2j3,2m1,2m2,2m3,value for every symbol with
j1, j2 <= 5 and j3 in {0, 1/2, 1, 3/2, 2} (the dipole case j3 = 1 is what Zeeman patterns use) and
m3 = -m1 - m2, plus a few larger-j entries. Regenerate with:
    /usr/bin/python3 tests/data/gen_wigner3j.py > tests/data/wigner3j_sympy.csv
"""
from sympy import Rational
from sympy.physics.wigner import wigner_3j

def half(n):
    return Rational(n, 2)

print("two_j1,two_j2,two_j3,two_m1,two_m2,two_m3,value")
rows = []
for tj1 in range(0, 11):
    for tj2 in range(0, 11):
        for tj3 in range(0, 5):
            if (tj1 + tj2 + tj3) % 2:
                continue
            if tj3 < abs(tj1 - tj2) or tj3 > tj1 + tj2:
                continue
            for tm1 in range(-tj1, tj1 + 1, 2):
                for tm2 in range(-tj2, tj2 + 1, 2):
                    tm3 = -tm1 - tm2
                    if abs(tm3) > tj3:
                        continue
                    rows.append((tj1, tj2, tj3, tm1, tm2, tm3))
# A few large-j symbols to exercise the factorial range.
rows += [(40, 38, 2, 10, -8, -2), (31, 29, 2, 1, 1, -2), (24, 24, 0, 6, -6, 0), (60, 60, 2, 20, -20, 0)]
for r in rows:
    v = wigner_3j(*[half(x) for x in r])
    print(",".join(str(x) for x in r) + ",%.17g" % float(v))
