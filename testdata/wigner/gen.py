#!/usr/bin/python3
"""Reference Wigner 3j and 6j values for maserpol/levels tests.

Generated with Debian's python3-sympy (sympy.physics.wigner, exact rational
arithmetic), evaluated to 25 significant digits. Run from this directory:

    /usr/bin/python3 gen.py > values.csv

Columns: kind (3j or 6j), the six arguments as TWICE their value (integers,
so half-integers are exact), value. A fixed random seed makes the file
reproducible; the selection mixes small, half-integer and large (up to 60)
angular momenta, and a few cases that vanish by a selection rule.
"""
import random
import sympy
from sympy.physics.wigner import wigner_3j, wigner_6j

H = sympy.Rational(1, 2)
rng = random.Random(20240611)


def tri(a, b, c):
    # a, b, c twice-values
    return abs(a - b) <= c <= a + b and (a + b + c) % 2 == 0


def emit(kind, args, val):
    print("%s,%s,%s" % (kind, ",".join(str(x) for x in args),
                        sympy.N(val, 25)))


def w3(t):
    return wigner_3j(*[sympy.Integer(x) * H for x in t])


def w6(t):
    return wigner_6j(*[sympy.Integer(x) * H for x in t])


def random3j(maxtwice):
    while True:
        a = rng.randint(0, maxtwice)
        b = rng.randint(0, maxtwice)
        c = rng.randint(abs(a - b), a + b)
        if not tri(a, b, c) or c > maxtwice:
            continue
        ma = rng.choice(range(-a, a + 1, 2))
        mb = rng.choice(range(-b, b + 1, 2))
        mc = -ma - mb
        if abs(mc) > c:
            continue
        return (a, b, c, ma, mb, mc)


def random6j(maxtwice):
    while True:
        t = [rng.randint(0, maxtwice) for _ in range(6)]
        a, b, c, d, e, f = t
        if tri(a, b, c) and tri(a, e, f) and tri(d, b, f) and tri(d, e, c):
            return tuple(t)


print("kind,a,b,c,d,e,f,value")
seen = set()
cases = []
for maxtwice, n in ((4, 40), (12, 60), (30, 50), (80, 30), (120, 30)):
    for _ in range(n):
        cases.append(("3j", random3j(maxtwice)))
for maxtwice, n in ((4, 30), (12, 50), (30, 40), (80, 25), (120, 25)):
    for _ in range(n):
        cases.append(("6j", random6j(maxtwice)))
# Stretched and large cases that stress cancellation in the Racah sum.
cases += [
    ("3j", (120, 120, 120, 0, 0, 0)),
    ("3j", (120, 120, 2, 2, -2, 0)),
    ("3j", (119, 121, 4, 1, -1, 0)),
    ("3j", (120, 118, 120, 40, -30, -10)),
    ("3j", (100, 60, 80, 10, -20, 10)),
    ("6j", (120, 120, 120, 120, 120, 120)),
    ("6j", (119, 121, 2, 121, 119, 80)),
    ("6j", (100, 80, 60, 90, 70, 50)),
    # Vanishing by selection rules: m sum != 0 is excluded by construction,
    # so use (j j j; 0 0 0) with odd 2j-sum... (1 1 1; 0 0 0) = 0.
    ("3j", (2, 2, 2, 0, 0, 0)),
    ("3j", (6, 4, 4, 0, 0, 0)),
]
for kind, t in cases:
    if (kind, t) in seen:
        continue
    seen.add((kind, t))
    emit(kind, t, w3(t) if kind == "3j" else w6(t))
