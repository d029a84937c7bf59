#!/usr/bin/python3
"""The anchor of the table benchmark (run.sh): R_c alone of every melt card
of a CSV table, vectorised with NumPy on a 201-point grid per melt.

The same equations as docs/science.md ("Nucleation and growth" to "The
critical cooling rate"): VFT viscosity, Stokes-Einstein diffusivity,
Turnbull or Hoffman driving force, homogeneous nucleation, normal or screw
growth, J = int I G^3 dT by cumulative trapezoids on 201 points from T_e
(10^15 Pa s) to T_L, and R_c from (4 pi/3)(J y^4 + N_h G(T_L)^3 y^3) = X_c
(y = 1/R, Newton on ln y). Melts are done 4096 at a time (arrays of
4096 x 201). Reading the CSV is not timed.

Prints: melts, median seconds of the computation over RUNS runs, and the
median |R_c(numpy)/R_c(file) - 1| against a results CSV when one is given
(a check that both compute the same thing; 201 points are coarse).

Usage: rc_numpy.py INPUT.csv [RUNS] [RESULTS.csv]
"""
import csv
import statistics
import sys
import time

import numpy as np

NA = 6.02214076e23
KB = 1.380649e-23
R = NA * KB
LN10 = np.log(10.0)
XC = 1e-6
POINTS = 201
BLOCK = 4096


def read(path):
    cols = {k: [] for k in ("a", "b", "c", "tl", "dh", "vm", "alpha", "screw", "hoffman", "nh")}
    with open(path) as f:
        for row in csv.DictReader(f):
            cols["a"].append(float(row["a"]))
            cols["b"].append(float(row["b_k"]))
            cols["c"].append(float(row["c_k"]))
            cols["tl"].append(float(row["liquidus_k"]))
            cols["dh"].append(float(row["enthalpy_of_fusion_j_per_mol"]))
            cols["vm"].append(float(row["molar_volume_m3_per_mol"]))
            cols["alpha"].append(float(row["turnbull_alpha"]))
            cols["screw"].append(row["growth"].strip() == "screw")
            cols["hoffman"].append(row.get("driving_force", "").strip() == "hoffman")
            cols["nh"].append(float(row.get("heterogeneous_nuclei_per_m3") or 0.0))
    return {k: np.asarray(v) for k, v in cols.items()}


def critical_rates(m):
    """R_c (K/s) of every melt, NaN where the melt cannot crystallise."""
    a, b, c = m["a"][:, None], m["b"][:, None], m["c"][:, None]
    tl, dh, vm = m["tl"][:, None], m["dh"][:, None], m["vm"][:, None]
    alpha = m["alpha"][:, None]
    te = c + b / (15.0 - a)
    x = np.linspace(0.0, 1.0, POINTS)[None, :]
    t = te + (tl - te) * x
    t[:, -1] = tl[:, 0] - 1e-9
    lam = np.cbrt(vm / NA)
    sigma = alpha * dh / (NA ** (1 / 3) * vm ** (2 / 3))
    ln_d = np.log(KB * t / (3 * np.pi * lam)) - LN10 * (a + b / (t - c))
    dg = dh * (tl - t) / tl
    dg = np.where(m["hoffman"][:, None], dg * t / tl, dg)
    kw = 16 * np.pi * sigma**3 * vm**2 / (3 * KB)
    ln_i = np.log(NA / vm) + ln_d - 2 * np.log(lam) - kw / (dg * dg * t)
    f = np.where(m["screw"][:, None], (tl - t) / (2 * np.pi * tl), 1.0)
    u = f * np.exp(ln_d) / lam * -np.expm1(-dg / (R * t))
    dt = t[:, 1:] - t[:, :-1]
    g = np.zeros_like(t)
    np.cumsum(0.5 * (u[:, 1:] + u[:, :-1]) * dt, axis=1, out=g[:, 1:])
    with np.errstate(divide="ignore"):
        lf = ln_i + 3 * np.log(g)
    top = np.max(lf, axis=1, keepdims=True)
    e = np.exp(lf - top)
    ln_j = top[:, 0] + np.log(np.sum(0.5 * (e[:, 1:] + e[:, :-1]) * dt, axis=1))
    ln_a = np.log(4 * np.pi / 3) + ln_j
    nh = m["nh"]
    with np.errstate(divide="ignore"):
        ln_b = np.where(nh > 0, np.log(4 * np.pi / 3 * np.where(nh > 0, nh, 1.0)) + 3 * np.log(g[:, -1]), -np.inf)
    ln_xc = np.log(XC)
    # Start from the larger one-term root and take Newton steps on ln y.
    ly = np.minimum((ln_xc - ln_a) / 4, np.where(np.isfinite(ln_b), (ln_xc - ln_b) / 3, np.inf))
    for _ in range(30):
        p = ln_a + 4 * ly
        q = ln_b + 3 * ly
        hi = np.maximum(p, q)
        ep, eq = np.exp(p - hi), np.exp(q - hi)
        fv = hi + np.log(ep + eq) - ln_xc
        dfv = (4 * ep + 3 * eq) / (ep + eq)
        ly = ly - fv / dfv
    return np.exp(-ly)


def run(m):
    n = len(m["a"])
    out = np.empty(n)
    for s in range(0, n, BLOCK):
        part = {k: v[s : s + BLOCK] for k, v in m.items()}
        out[s : s + BLOCK] = critical_rates(part)
    return out


def main():
    melts = read(sys.argv[1])
    runs = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        rc = run(melts)
        times.append(time.perf_counter() - t0)
    print("melts %d" % len(rc))
    print("numpy_rc_seconds_median %.4f" % statistics.median(times))
    print("numpy_rc_seconds_all %s" % " ".join("%.4f" % x for x in times))
    if len(sys.argv) > 3:
        with open(sys.argv[3]) as f:
            ours = [row["critical_rate_k_per_s"] for row in csv.DictReader(f)]
        rel = [abs(r / float(o) - 1) for r, o in zip(rc, ours) if o and np.isfinite(r)]
        print("median_relative_difference_to_quenchwise %.3g (over %d melts)" % (statistics.median(rel), len(rel)))


if __name__ == "__main__":
    main()
