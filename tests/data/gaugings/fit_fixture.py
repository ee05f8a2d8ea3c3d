#!/usr/bin/env python3
"""Independent check of flumerate's gauging fit (tests/integration/gaugings.rs).

Invented data: a power-law rating q(h) = 1.7 h^1.55 (m³/s, h in m), eleven "gaugings" made from
f = 0.97 and dz = +0.004 m with 2.5 % noise (seeded). scipy.optimize.curve_fit fits
Q = f · q(h + dz) with sigma = the stated standard uncertainties and absolute_sigma=True (so the
covariance comes from the stated uncertainties, not rescaled), with the analytic Jacobian and
tight tolerances. Writes fit_data.csv (h, Q, sigma) and fit_expected.csv (f, dz, the covariance,
χ²). Needs numpy and scipy. ALL DATA INVENTED.
"""
import csv

import numpy as np
from scipy.optimize import curve_fit

K, U = 1.7, 1.55
rng = np.random.default_rng(20261202)
h = np.array([0.05, 0.08, 0.11, 0.15, 0.19, 0.24, 0.28, 0.33, 0.38, 0.42, 0.47])
true = 0.97 * K * (h + 0.004) ** U
sigma = 0.0125 * true
q = true * (1.0 + rng.normal(0.0, 0.0125, h.size))


def model(x, f, dz):
    return f * K * (x + dz) ** U


def jac(x, f, dz):
    return np.stack([K * (x + dz) ** U, f * K * U * (x + dz) ** (U - 1.0)], axis=1)


p, cov = curve_fit(model, h, q, p0=[1.0, 0.0], sigma=sigma, absolute_sigma=True, jac=jac,
                   xtol=1e-15, ftol=1e-15, gtol=1e-15, method="lm")
chi2 = float(np.sum(((q - model(h, *p)) / sigma) ** 2))
with open("fit_data.csv", "w", newline="") as fh:
    w = csv.writer(fh)
    w.writerow(["head_m", "discharge_m3s", "sigma_m3s"])
    for row in zip(h, q, sigma):
        w.writerow([repr(float(v)) for v in row])
with open("fit_expected.csv", "w", newline="") as fh:
    w = csv.writer(fh)
    w.writerow(["factor", "zero_m", "var_factor", "cov_factor_zero", "var_zero", "chi2"])
    w.writerow([repr(float(v)) for v in (p[0], p[1], cov[0, 0], cov[0, 1], cov[1, 1], chi2)])
print(p, cov, chi2)
