#!/usr/bin/env python3
"""Make the INVENTED fitting demo of quenchwise (demo-datasets/fit-*.csv).

Nothing here is a measurement. An imaginary lab's soda-lime-type system is
described by made-up "true" models (below); the "measurements" are those
models plus normally distributed noise from a seeded generator, rounded as a
lab would report them. The critical rates come from the quenchwise binary
evaluating the made-up true model set (written to truth.toml beside this
script), plus noise.

Run from the repository root after `cargo build`:
    python3 demo-datasets/fit/make-demo-data.py
Standard library only. Same seed, same files.
"""
import json
import math
import pathlib
import random
import re
import subprocess

ROOT = pathlib.Path(__file__).resolve().parents[2]
OUT = ROOT / "demo-datasets"
BIN = ROOT / "target" / "debug" / "quenchwise"
rng = random.Random(20261205)

OXIDES = ["SiO2", "Na2O", "K2O", "CaO", "MgO", "Al2O3"]

# Made-up "true" viscosity: VFT, log10(eta/Pa s) = A + B/(T - C), B and C
# linear in mole fractions (K per unit mole fraction). INVENTED.
A = -2.55
B = {"SiO2": 6700.0, "Na2O": -4100.0, "K2O": -2800.0, "CaO": -2600.0, "MgO": 1900.0, "Al2O3": 9300.0}
C = {"SiO2": 520.0, "Na2O": -230.0, "K2O": -480.0, "CaO": 1530.0, "MgO": 1040.0, "Al2O3": 860.0}

# Made-up "true" liquidus surfaces (K, linear in mol% with a constant, as in
# the demo model set, with the lab's own differences). INVENTED.
LIQ = {
    "devitrite": (1305.0, {"SiO2": -0.45, "Na2O": -4.8, "K2O": -11.0, "CaO": 6.8, "MgO": -1.0, "Al2O3": -7.0}),
    "wollastonite": (1290.0, {"SiO2": -4.0, "Na2O": -9.5, "K2O": -10.0, "CaO": 40.5, "MgO": -7.5, "Al2O3": -5.0}),
    "cristobalite": (-790.0, {"SiO2": 30.2, "Na2O": -12.0, "K2O": -12.0, "CaO": -4.0, "MgO": -4.5, "Al2O3": 6.0}),
    "diopside": (1412.0, {"SiO2": -4.0, "Na2O": -10.0, "K2O": -10.0, "CaO": 8.0, "MgO": 30.0, "Al2O3": -6.0}),
    "sodium disilicate": (810.0, {"SiO2": 0.0, "Na2O": 10.0, "K2O": 6.0, "CaO": -12.0, "MgO": -12.0, "Al2O3": -8.0}),
}
MELTING = {"devitrite": 1318.0, "wollastonite": 1817.0, "cristobalite": 1999.0, "diopside": 1665.0, "sodium disilicate": 1147.0}
# Made-up "true" Turnbull alphas. INVENTED.
ALPHA = {"devitrite": 0.176, "wollastonite": 0.252, "cristobalite": 0.541, "diopside": 0.194, "sodium disilicate": 0.415}
NUCLEI = 0.0  # pre-existing nuclei per m3: the lab melts fine, pure batches (the story)

GLASSES = {  # mol%, SiO2 Na2O K2O CaO MgO Al2O3. INVENTED.
    "lab-01": [72.0, 14.0, 0.5, 9.5, 3.0, 1.0],
    "lab-02": [70.0, 16.0, 0.0, 10.0, 2.5, 1.5],
    "lab-03": [74.0, 12.5, 1.0, 8.0, 3.5, 1.0],
    "lab-04": [71.0, 13.0, 2.0, 11.0, 1.0, 2.0],
    "lab-05": [73.0, 15.0, 0.0, 7.0, 4.5, 0.5],
    "lab-06": [69.0, 14.5, 1.5, 12.0, 0.5, 2.5],
    "lab-07": [75.0, 13.5, 0.5, 6.5, 2.0, 2.5],
    "lab-08": [70.5, 12.0, 1.0, 9.0, 5.0, 2.5],
    "lab-09": [72.5, 16.5, 1.5, 8.5, 0.0, 1.0],
    "lab-10": [68.5, 15.5, 0.5, 11.5, 3.0, 1.0],
    "lab-11": [73.5, 11.5, 0.0, 10.5, 2.5, 2.0],
    "lab-12": [71.5, 14.0, 2.0, 7.5, 4.0, 1.0],
}
HELD_OUT = ("lab-13", [71.0, 14.5, 1.0, 9.0, 3.0, 1.5])
RATE_GLASSES = ["lab-04", "lab-09", "lab-12"]

for name, c in list(GLASSES.items()) + [HELD_OUT]:
    assert abs(sum(c) - 100.0) < 1e-9, name


def fractions(c):
    return {o: v / 100.0 for o, v in zip(OXIDES, c)}


def vft(c, t_k):
    x = fractions(c)
    b = sum(B[o] * x[o] for o in OXIDES)
    cc = sum(C[o] * x[o] for o in OXIDES)
    return A + b / (t_k - cc), b, cc


def isokom(c, level):
    _, b, cc = vft(c, 1000.0)
    return cc + b / (level - A)


def liquidus(c):
    best = None
    for phase, (k0, slopes) in LIQ.items():
        t = k0 + sum(slopes[o] * v for o, v in zip(OXIDES, c))
        t = min(t, MELTING[phase])
        if best is None or t > best[1]:
            best = (phase, t)
    return best


def viscosity_rows(name, c):
    rows = []
    # Rotating cylinder, 1050-1450 C, every 100 K; then fibre elongation near
    # the softening point and beam bending near the annealing point.
    for t_c in [1050, 1150, 1250, 1350, 1450]:
        rows.append(t_c + 273.15)
    for level in [6.6, 11.0, 12.5]:
        rows.append(isokom(c, level) + rng.uniform(-8.0, 8.0))
    out = []
    for t_k in rows:
        log_eta = vft(c, t_k)[0] + rng.gauss(0.0, 0.04)
        out.append((name, c, round(t_k - 273.15, 1), round(log_eta, 3)))
    return out


def write_csv(path, header, rows):
    with open(path, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(v) for v in r) + "\n")


# Viscosity points of 12 glasses; the 13th is held out.
visc = []
for name, c in GLASSES.items():
    visc += viscosity_rows(name, c)
write_csv(OUT / "fit-viscosity.csv", ["glass"] + OXIDES + ["temperature_c", "log10_viscosity_pa_s"],
          [[n] + c + [t, e] for n, c, t, e in visc])

# DSC liquidus of the 12 glasses and 18 more quick melts.
liq_glasses = list(GLASSES.items())
for k in range(18):
    while True:
        na = round(rng.uniform(11.0, 17.0), 1)
        k2o = round(rng.uniform(0.0, 2.0), 1)
        cao = round(rng.uniform(6.0, 13.0), 1)
        mgo = round(rng.uniform(0.0, 5.0), 1)
        al = round(rng.uniform(0.5, 3.0), 1)
        si = round(100.0 - na - k2o - cao - mgo - al, 1)
        if 67.0 <= si <= 77.0:
            break
    liq_glasses.append((f"dsc-{k + 1:02d}", [si, na, k2o, cao, mgo, al]))
liq = []
for name, c in liq_glasses:
    phase, t = liquidus(c)
    liq.append([name] + c + [round(t - 273.15 + rng.gauss(0.0, 5.0), 0), phase])
write_csv(OUT / "fit-liquidus.csv", ["glass"] + OXIDES + ["liquidus_c", "primary_phase"], liq)

# The made-up true model set, for the critical rates.
demo = (ROOT / "configs" / "models" / "demo-soda-lime.toml").read_text()
truth = demo.replace('constant = -2.45          # INVENTED', f"constant = {A}")
truth = re.sub(r"(\[viscosity\.b_k\][^\[]*?linear = )\{[^}]*\}", lambda m: m.group(1) + "{ " + ", ".join(f"{o} = {B[o]}" for o in OXIDES) + " }", truth, flags=re.S)
truth = re.sub(r"(\[viscosity\.c_k\][^\[]*?linear = )\{[^}]*\}", lambda m: m.group(1) + "{ " + ", ".join(f"{o} = {C[o]}" for o in OXIDES) + " }", truth, flags=re.S)
for phase, (k0, slopes) in LIQ.items():
    block = re.search(r'name = "' + phase + r'".*?(?=\n\[\[phase\]\]|\Z)', truth, flags=re.S)
    text = block.group(0)
    text = re.sub(r"turnbull_alpha = [0-9.]+", f"turnbull_alpha = {ALPHA[phase]}", text)
    text = re.sub(r"\nconstant = [-0-9.]+", f"\nconstant = {k0}", text)
    text = re.sub(r"\nlinear = \{[^}]*\}", "\nlinear = { " + ", ".join(f"{o} = {slopes[o]}" for o in OXIDES) + " }", text)
    truth = truth.replace(block.group(0), text)
truth = truth.replace('name = "demo-soda-lime"', 'name = "fit-demo-truth"', 1)
(ROOT / "demo-datasets" / "fit" / "truth.toml").write_text(
    "# The made-up 'true' model set the invented fitting demo was generated from\n"
    "# (demo-datasets/fit/make-demo-data.py). INVENTED, like the demo set it copies.\n" + truth)


def critical_rate(c):
    mol = " ".join(f"{o}={v}" for o, v in zip(OXIDES, c) if v > 0)
    out = subprocess.run([str(BIN), "eval", "--models", str(ROOT / "demo-datasets" / "fit" / "truth.toml"),
                          "--mol", mol, "--nuclei-per-m3", str(NUCLEI), "--json"],
                         check=True, capture_output=True, text=True).stdout
    j = json.loads(out)
    return j["critical_rate_k_per_s"], j["limiting_phase"]


rates = []
for name in RATE_GLASSES:
    c = GLASSES[name]
    r, phase = critical_rate(c)
    measured = r * 10 ** rng.gauss(0.0, 0.1)
    rates.append([name] + c + [f"{measured * 60.0:.3g}"])
    print(f"{name}: true R_c {r:.4g} K/s limited by {phase}; 'measured' {measured * 60:.3g} K/min")
write_csv(OUT / "fit-critical-rates.csv", ["glass"] + OXIDES + ["critical_rate_k_per_min"], rates)

# The held-out glass: viscosity points, DSC liquidus and a critical rate.
# Its viscosity as a data sheet gives it: the temperatures of the fixpoints
# (10, 10^3, 10^6.6 and 10^12 Pa s), each measured with the same scatter.
# Its noise comes from a generator of its own (seeded with its number, 13), so
# changing the other files does not change it.
rng = random.Random(13)
name, c = HELD_OUT
held = []
for level in [1.0, 3.0, 6.6, 12.0]:
    t_k = isokom(c, level + rng.gauss(0.0, 0.04))
    held.append((name, c, round(t_k - 273.15, 1), level))
phase, t = liquidus(c)
r, rphase = critical_rate(c)
write_csv(OUT / "fit-holdout-viscosity.csv", ["glass"] + OXIDES + ["temperature_c", "log10_viscosity_pa_s"],
          [[n] + cc + [tt, e] for n, cc, tt, e in held])
write_csv(OUT / "fit-holdout.csv", ["glass"] + OXIDES + ["liquidus_c", "primary_phase", "critical_rate_k_per_min"],
          [[name] + c + [round(t - 273.15 + rng.gauss(0.0, 5.0), 0), phase, f"{r * 60.0 * 10 ** rng.gauss(0.0, 0.1):.3g}"]])
print(f"held out {name}: liquidus {t - 273.15:.1f} C ({phase}), R_c {r:.4g} K/s ({rphase})")
print("liquidus phases:", {p: sum(1 for row in liq if row[-1] == p) for p in LIQ})
