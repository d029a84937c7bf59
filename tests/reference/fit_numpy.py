#!/usr/bin/env python3
"""Independent least-squares fits of the invented fitting demo, as an oracle
for tests/fit_reference.rs (not run by CI; its printed numbers are pasted
there with the date).

- liquidus: T_L = sum_i a_i x_i over the oxides a phase's rows contain (x_i
  mole fractions), by numpy.linalg.lstsq; standard errors s^2 (X^T X)^-1;
  leave-one-out RMSE by refitting without each row;
- viscosity: VFT log10 eta = A + B(x)/(T - C(x)), A constant, B and C linear
  in mole fractions, by scipy.optimize.least_squares (MINPACK's
  Levenberg-Marquardt, method="lm") from its own starting point; standard
  errors from the Jacobian at the solution.

Run from the repository root: python3 tests/reference/fit_numpy.py
"""
import csv

import numpy as np
from scipy.optimize import least_squares

OXIDES_ORDER = ["SiO2", "B2O3", "Al2O3", "Li2O", "Na2O", "K2O", "MgO", "CaO"]


def table(path):
    return list(csv.DictReader(open(path)))


def fractions(rows, oxides):
    x = np.array([[float(r[o]) for o in oxides] for r in rows])
    return x / x.sum(axis=1, keepdims=True)


def liquidus(phase):
    rows = [r for r in table("demo-datasets/fit-liquidus.csv") if r["primary_phase"] == phase]
    oxides = [o for o in OXIDES_ORDER if o in rows[0] and any(float(r[o]) > 0 for r in rows)]
    x = fractions(rows, oxides)
    y = np.array([float(r["liquidus_c"]) + 273.15 for r in rows])
    b, ssr, _, _ = np.linalg.lstsq(x, y, rcond=None)
    n, p = x.shape
    s2 = ssr[0] / (n - p)
    se = np.sqrt(np.diag(s2 * np.linalg.inv(x.T @ x)))
    loo = []
    for i in range(n):
        keep = [k for k in range(n) if k != i]
        bi = np.linalg.lstsq(x[keep], y[keep], rcond=None)[0]
        loo.append(x[i] @ bi - y[i])
    r2 = 1 - ssr[0] / np.sum((y - y.mean()) ** 2)
    print(f"liquidus {phase}: oxides {oxides}")
    print("  coefficients", [f"{v:.10g}" for v in b])
    print("  standard errors", [f"{v:.10g}" for v in se])
    print(f"  rmse {np.sqrt(ssr[0] / n):.10g} loo_rmse {np.sqrt(np.mean(np.square(loo))):.10g} r2 {r2:.10g}")


def viscosity():
    rows = table("demo-datasets/fit-viscosity.csv")
    oxides = [o for o in OXIDES_ORDER if o in rows[0] and any(float(r[o]) > 0 for r in rows)]
    x = fractions(rows, oxides)
    t = np.array([float(r["temperature_c"]) + 273.15 for r in rows])
    y = np.array([float(r["log10_viscosity_pa_s"]) for r in rows])
    p = len(oxides)

    def model(th):
        a, b, c = th[0], x @ th[1:1 + p], x @ th[1 + p:]
        return a + b / (t - c)

    start = np.concatenate([[-3.0], np.full(p, 5000.0), np.full(p, 400.0)])
    res = least_squares(lambda th: model(th) - y, start, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    j = res.jac
    n = len(y)
    s2 = np.sum(res.fun ** 2) / (n - len(start))
    se = np.sqrt(np.diag(s2 * np.linalg.inv(j.T @ j)))
    names = ["a.constant"] + [f"b_k.{o}" for o in oxides] + [f"c_k.{o}" for o in oxides]
    print("viscosity VFT:")
    for nm, v, e in zip(names, res.x, se):
        print(f"  {nm} {v:.10g} {e:.10g}")
    print(f"  rmse {np.sqrt(np.mean(res.fun ** 2)):.10g}")


liquidus("devitrite")
liquidus("wollastonite")
viscosity()
