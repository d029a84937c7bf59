"""Independent HiGHS reference for quenchwise's least-cost batch tests.

Written separately from the Rust code (without reading it), with NumPy and
SciPy only. It parses the ideal chemical formulas of the raw materials in
demo-datasets/raw-materials.csv itself, computes oxide yields from the IUPAC
2021 standard atomic weights, and solves the least-cost batch linear programme
for a few glasses with scipy.optimize.linprog(method="highs"):

    minimise   sum_r price_r * m_r                (m_r = kg raw r per kg glass)
    subject to |sum_r yield_ri * m_r - w_i| <= tol  for every oxide i
               (w_i = 0 for oxides not in the glass)
               0 <= m_r <= available_kg_r          (where a cap is given)

with tol = 0.001 wt% = 1e-5 kg per kg glass. Its printed numbers (optimal cost
per kg glass, batch mass, raw-material masses) are pasted into the Rust tests
with the date they were produced. It also checks that each optimal cost is a
stable reference: the three HiGHS methods agree on it, and the cost barely
moves with the solver tolerances (the masses may still be degenerate; the
script shows the range each mass can take at the optimal cost).

Run:  python3 tests/reference/batch_highs.py      (needs numpy and scipy)
"""
import csv
import datetime
import os
import re

import numpy as np
import scipy
from scipy.optimize import linprog

HERE = os.path.dirname(os.path.abspath(__file__))
CSV_PATH = os.path.join(HERE, "..", "..", "demo-datasets", "raw-materials.csv")

TOL = 1e-5  # 0.001 wt% in kg per kg of glass
HIGHS_OPTIONS = {"primal_feasibility_tolerance": 1e-10, "dual_feasibility_tolerance": 1e-10}

# IUPAC 2021 standard atomic weights (Prohaska et al., Pure Appl. Chem. 94
# (2022) 573, Table 1): abridged values for interval elements, full otherwise.
ATOMIC_WEIGHT = {
    "H": 1.008, "Li": 6.94, "B": 10.81, "C": 12.011, "N": 14.007, "O": 15.999,
    "F": 18.998403162, "Na": 22.98976928, "Mg": 24.305, "Al": 26.9815384,
    "Si": 28.085, "P": 30.973761998, "S": 32.06, "K": 39.0983, "Ca": 40.078,
    "Ti": 47.867, "Mn": 54.938043, "Fe": 55.845, "Zn": 65.38, "Sr": 87.62,
    "Zr": 91.224, "Ba": 137.327,
}

# cation -> (oxide name, cations per oxide formula unit)
CATION_OXIDE = {
    "Li": ("Li2O", 2), "B": ("B2O3", 2), "Na": ("Na2O", 2), "Mg": ("MgO", 1),
    "Al": ("Al2O3", 2), "Si": ("SiO2", 1), "P": ("P2O5", 2), "K": ("K2O", 2),
    "Ca": ("CaO", 1), "Ti": ("TiO2", 1), "Mn": ("MnO", 1), "Fe": ("Fe2O3", 2),
    "Zn": ("ZnO", 1), "Sr": ("SrO", 1), "Zr": ("ZrO2", 1), "Ba": ("BaO", 1),
}
VOLATILE = {"H", "C", "N", "O", "F", "S"}
OXIDES = [ox for ox, _ in CATION_OXIDE.values()]

GLASSES = [
    ("1", "SiO2=72 Na2O=14 CaO=10 Al2O3=4"),
    ("2", "SiO2=74 Na2O=13 CaO=8 MgO=4 Al2O3=1"),
    ("3", "SiO2=70 Na2O=12 K2O=2 CaO=9 MgO=2 B2O3=5"),
    ("4", "SiO2=65 Na2O=15 CaO=10 BaO=5 ZnO=3 Al2O3=2"),
]


# ---------------------------------------------------------------- formulas
_TOKEN = re.compile(r"([A-Z][a-z]?)|(\()|(\))|(\d+(?:\.\d+)?)")


def _parse_simple(s):
    """Element counts of a formula without hydrate dots, e.g. 'CaMg(CO3)2'."""
    stack = [{}]
    pos = 0
    last = None  # what a following number multiplies: ('el', name) or ('grp', dict)
    while pos < len(s):
        m = _TOKEN.match(s, pos)
        if not m:
            raise ValueError(f"cannot parse {s!r} at position {pos}")
        el, lp, rp, num = m.groups()
        pos = m.end()
        if el:
            if el not in ATOMIC_WEIGHT:
                raise ValueError(f"unknown element {el!r} in {s!r}")
            stack[-1][el] = stack[-1].get(el, 0) + 1
            last = ("el", el)
        elif lp:
            stack.append({})
            last = None
        elif rp:
            if len(stack) == 1:
                raise ValueError(f"unbalanced ')' in {s!r}")
            grp = stack.pop()
            for k, v in grp.items():
                stack[-1][k] = stack[-1].get(k, 0) + v
            last = ("grp", grp)
        else:
            n = float(num)
            if last is None:
                raise ValueError(f"misplaced count in {s!r}")
            if last[0] == "el":
                stack[-1][last[1]] += n - 1
            else:
                for k, v in last[1].items():
                    stack[-1][k] += v * (n - 1)
            last = None
    if len(stack) != 1:
        raise ValueError(f"unbalanced '(' in {s!r}")
    return stack[0]


def parse_formula(formula):
    """Element -> atoms per formula unit; hydrate parts joined by '·' (or '*'),
    each with an optional leading count, e.g. 'Na2B4O7·10H2O'."""
    total = {}
    for part in re.split(r"[·*]", formula.strip()):
        part = part.strip()
        m = re.match(r"^(\d+(?:\.\d+)?)(.*)$", part)
        mult, body = (float(m.group(1)), m.group(2)) if m else (1.0, part)
        if not body:
            raise ValueError(f"empty part in {formula!r}")
        for k, v in _parse_simple(body).items():
            total[k] = total.get(k, 0) + mult * v
    return total


def molar_mass(formula):
    return sum(ATOMIC_WEIGHT[e] * n for e, n in parse_formula(formula).items())


OXIDE_M = {ox: molar_mass(ox) for ox in OXIDES}


def ideal_yields(formula):
    """Oxide -> kg oxide per kg raw material (purity 100 %)."""
    comp = parse_formula(formula)
    mw = molar_mass(formula)
    out = {}
    for el, n in comp.items():
        if el in VOLATILE:
            continue
        if el not in CATION_OXIDE:
            raise ValueError(f"no oxide known for {el} in {formula!r}")
        ox, k = CATION_OXIDE[el]
        out[ox] = out.get(ox, 0.0) + (n / k) * OXIDE_M[ox] / mw
    return out


# ---------------------------------------------------------------- data
def load_raws(path=CSV_PATH):
    raws = []
    with open(path, newline="", encoding="utf-8") as f:
        for row in csv.DictReader(f):
            purity = float(row["purity_pct"]) / 100.0
            avail = row["available_kg"].strip()
            y = {ox: v * purity for ox, v in ideal_yields(row["formula"]).items()}
            raws.append({
                "name": row["name"], "formula": row["formula"],
                "price": float(row["price_per_kg"]), "yields": y,
                "cap": float(avail) if avail else None,
            })
    return raws


def target_mass_fractions(spec):
    mol = {}
    for item in spec.split():
        ox, v = item.split("=")
        if ox not in OXIDE_M:
            raise ValueError(f"unknown oxide {ox}")
        mol[ox] = float(v)
    tot = sum(mol[o] * OXIDE_M[o] for o in mol)
    return {o: mol[o] * OXIDE_M[o] / tot for o in mol}


# ---------------------------------------------------------------- LP
def build_lp(raws, w, tol=TOL):
    """A_ub x <= b_ub encoding |Y m - w| <= tol for every oxide."""
    Y = np.array([[r["yields"].get(ox, 0.0) for r in raws] for ox in OXIDES])
    wv = np.array([w.get(ox, 0.0) for ox in OXIDES])
    A = np.vstack([Y, -Y])
    b = np.concatenate([wv + tol, -(wv - tol)])
    c = np.array([r["price"] for r in raws])
    bounds = [(0.0, r["cap"]) for r in raws]
    return c, A, b, bounds, Y, wv


def solve(c, A, b, bounds, method="highs", options=HIGHS_OPTIONS):
    res = linprog(c, A_ub=A, b_ub=b, bounds=bounds, method=method, options=options)
    if res.status != 0:
        raise RuntimeError(f"linprog ({method}) failed: {res.message}")
    return res


def mass_ranges(c, A, b, bounds, opt):
    """Min and max of each m_r over the optimal face (cost <= opt + tiny)."""
    A2 = np.vstack([A, c])
    b2 = np.concatenate([b, [opt + 1e-11 * max(1.0, abs(opt))]])
    n = len(c)
    ranges = []
    for j in range(n):
        e = np.zeros(n)
        e[j] = 1.0
        lo = solve(e, A2, b2, bounds).fun
        hi = -solve(-e, A2, b2, bounds).fun
        ranges.append((lo, hi))
    return ranges


def report_glass(label, spec, raws):
    w = target_mass_fractions(spec)
    c, A, b, bounds, Y, wv = build_lp(raws, w)
    res = solve(c, A, b, bounds)
    m = res.x
    cost = res.fun
    print(f"\nGlass {label}: {spec}  (mol%)")
    print("  target wt%: " + "  ".join(f"{o}={100 * w[o]:.6f}" for o in w))
    print(f"  optimal cost per kg glass = {cost:.10g}")
    print(f"  batch mass per kg glass   = {m.sum():.8f} kg")
    print("  raw materials used (kg per kg glass):")
    for r, x in zip(raws, m):
        if x > 1e-12:
            print(f"    {r['name']:<20s} {x:.8f}")
    got = Y @ m
    print("  oxide deviation (wt%): " + "  ".join(
        f"{ox}={100 * (g - t):+.6f}" for ox, g, t in zip(OXIDES, got, wv)
        if abs(g) > 1e-12 or t > 0))

    # stability of the cost
    alt = {}
    for meth in ("highs-ds", "highs-ipm"):
        alt[meth] = solve(c, A, b, bounds, method=meth).fun
    loose = solve(c, A, b, bounds, options={}).fun
    spread = max(abs(v - cost) for v in list(alt.values()) + [loose])
    print("  cost check: highs-ds={:.10g} highs-ipm={:.10g} default-tolerances={:.10g}"
          .format(alt["highs-ds"], alt["highs-ipm"], loose))
    print(f"    max |difference| = {spread:.2e}  (relative {spread / cost:.1e})")
    c0, A0, b0, bnd0, _, _ = build_lp(raws, w, tol=0.0)
    exact = solve(c0, A0, b0, bnd0).fun
    print(f"    with tol = 0 (exact composition) the cost would be {exact:.10g}"
          f"  (tolerance effect {cost - exact:+.2e})")

    ranges = mass_ranges(c, A, b, bounds, cost)
    degenerate = [(r["name"], lo, hi) for r, (lo, hi) in zip(raws, ranges) if hi - lo > 1e-7]
    if degenerate:
        print("  masses NOT unique at the optimal cost (range of each free mass):")
        for name, lo, hi in degenerate:
            print(f"    {name:<20s} {lo:.8f} .. {hi:.8f}")
    else:
        print("  masses unique at the optimal cost (every range < 1e-7 kg)")
    stable = spread <= 1e-9 * max(1.0, cost)
    print("  cost is a stable reference: " + ("YES" if stable else "NO"))
    return cost


def main():
    print("quenchwise least-cost batch: independent HiGHS reference")
    print(f"run {datetime.datetime.now(datetime.timezone.utc).isoformat(timespec='seconds')}"
          f"  scipy {scipy.__version__}  numpy {np.__version__}")
    print(f"tol = {TOL:g} kg/kg glass (0.001 wt%), options = {HIGHS_OPTIONS}")

    print("\nFormula parser check (ideal yields, purity 100 %, kg oxide per kg raw):")
    checks = [
        ("Na2CO3", "Na2O", 0.58477), ("H3BO3", "B2O3", 0.56296),
        ("CaMg(CO3)2", "CaO", 0.30411), ("CaMg(CO3)2", "MgO", 0.21857),
        ("Na2B4O7·10H2O", "B2O3", 0.36510), ("Na2B4O7·10H2O", "Na2O", 0.16252),
    ]
    ok_all = True
    for f, ox, exp in checks:
        got = ideal_yields(f)[ox]
        ok = abs(got - exp) < 5e-6
        ok_all &= ok
        print(f"  {f:<16s} -> {ox:<5s} {got:.7f}  expected {exp:.5f}  {'ok' if ok else 'MISMATCH'}")
    print("  parser check: " + ("all match" if ok_all else "MISMATCH"))

    raws = load_raws()
    print("\nRaw materials (purity-scaled yields, kg oxide per kg raw):")
    for r in raws:
        ys = " ".join(f"{o}={v:.6f}" for o, v in sorted(r["yields"].items()))
        cap = "" if r["cap"] is None else f"  cap {r['cap']:g} kg"
        print(f"  {r['name']:<20s} {r['formula']:<15s} {r['price']:6.2f}/kg  {ys}{cap}")

    costs = {}
    for label, spec in GLASSES:
        costs[label] = report_glass(label, spec, raws)

    print("\nSummary (optimal cost per kg glass):")
    for label, spec in GLASSES:
        print(f"  glass {label}: {costs[label]:.10g}   {spec}")


if __name__ == "__main__":
    main()
