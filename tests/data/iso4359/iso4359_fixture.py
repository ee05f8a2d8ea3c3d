#!/usr/bin/env python3
"""Independent check values for flumerate's coefficient = "iso-4359" (tests/integration/field_trial.rs).

Pure Python (math only), written apart from flumerate's Rust code. ISO 4359's formulas as recalled
(docs/references.md S3; from memory, to be checked against the standard):

    Q  = (2/3)^1.5 * sqrt(g) * Cv * Cs * Cd * b * h^1.5   (Cs = 1 for a rectangle; Cu for a U-throat)
    Cd = (1 - 2*delta/b) * (1 - delta/h)^1.5,  delta = 0.003 * L
    (2/3)^1.5 sqrt(g) Cv Cs b h^1.5 is the loss-free critical-flow discharge of the throat at the
    total head H = h + Q^2 / (2 g A1^2), so Q = Cd * Qideal(H), solved by fixed-point iteration.

Run: python3 tests/data/iso4359/iso4359_fixture.py > tests/data/iso4359/expected.csv
"""
import math

G = 9.80665


def bisect(f, lo, hi, n=200):
    flo = f(lo)
    for _ in range(n):
        mid = 0.5 * (lo + hi)
        fm = f(mid)
        if (fm > 0) == (flo > 0):
            lo, flo = mid, fm
        else:
            hi = mid
    return 0.5 * (lo + hi)


def rect(b):
    return (lambda y: b * y), (lambda y: b)


def trap(b, m):
    return (lambda y: (b + m * y) * y), (lambda y: b + 2 * m * y)


def ushape(d):
    r = d / 2

    def area(y):
        if y <= r:
            th = 2 * math.acos(1 - 2 * y / d)
            return d * d * (th - math.sin(th)) / 8
        return math.pi * r * r / 2 + d * (y - r)

    def width(y):
        if y >= r:
            return d
        th = 2 * math.acos(1 - 2 * y / d)
        return d * math.sin(th / 2)

    return area, width


def q_ideal(section, energy):
    area, width = section
    # critical depth: E = y + A/(2T)
    y = bisect(lambda y: y + area(y) / (2 * width(y)) - energy, energy * 1e-12, energy)
    return math.sqrt(G * area(y) ** 3 / width(y))


def iso(section, b, length, approach_area, h):
    delta = 0.003 * length
    cd = (1 - 2 * delta / b) * (1 - delta / h) ** 1.5
    big_h = h
    for _ in range(500):
        q = cd * q_ideal(section, big_h)
        nxt = h + q * q / (2 * G * approach_area ** 2)
        if abs(nxt - big_h) < 1e-16:
            break
        big_h = nxt
    q = cd * q_ideal(section, big_h)
    return q, cd


CASES = [
    # name, section, b, L, approach area at depth (h + p), heads
    ("rectangle b=0.5 L=1.0 B=1.0 p=0.1", rect(0.5), 0.5, 1.0, lambda h: 1.0 * (h + 0.1), [0.05, 0.1, 0.2, 0.3]),
    ("rectangle b=1.0 L=2.0 B=2.0 p=0.3", rect(1.0), 1.0, 2.0, lambda h: 2.0 * (h + 0.3), [0.5]),
    ("trapezoid b=0.3 m=1 L=0.9; approach b=0.6 m=1.5 p=0.2", trap(0.3, 1.0), 0.3, 0.9,
     lambda h: (0.6 + 1.5 * (h + 0.2)) * (h + 0.2), [0.07, 0.2, 0.35, 0.5]),
    ("u-shape D=0.45 L=0.6; approach B=0.9 p=0.15", ushape(0.45), 0.45, 0.6, lambda h: 0.9 * (h + 0.15),
     [0.05, 0.15, 0.3, 0.4]),
]

print("case,head_m,discharge_m3s,cd")
for name, section, b, length, a1, heads in CASES:
    for h in heads:
        q, cd = iso(section, b, length, a1(h), h)
        print(f"{name},{h!r},{q!r},{cd!r}")
