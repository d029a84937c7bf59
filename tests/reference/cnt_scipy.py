"""Independent reference for quenchwise's kinetics tests (docs/science.md, "Nucleation and growth" to "Continuous cooling").

Written separately from the Rust code, with NumPy/SciPy only: a dense uniform
grid (cumulative trapezoid for the inner growth integral, Simpson for the outer
integral) in log-scaled arithmetic, and scipy.optimize for the nose and for the
heterogeneous-nuclei root. Its printed numbers are pasted into
tests/kinetics_reference.rs with the date they were produced.

Run:  python3 tests/reference/cnt_scipy.py      (needs numpy and scipy)
"""
import numpy as np
from scipy import integrate, optimize

NA = 6.02214076e23
KB = 1.380649e-23
R = NA * KB


def melt(a, b, c, tl, dh, vm, alpha, growth="normal", hoffman=False, xc=1e-6, nh=0.0):
    lam = (vm / NA) ** (1 / 3)
    nv = NA / vm
    sig = alpha * dh / (NA ** (1 / 3) * vm ** (2 / 3))

    def log_eta(t):
        return a + b / (t - c)

    def ln_d(t):
        return np.log(KB * t / (3 * np.pi * lam)) - np.log(10) * log_eta(t)

    def dg(t):
        d = dh * (tl - t) / tl
        return d * t / tl if hoffman else d

    def ln_i(t):
        g = dg(t) / vm
        return np.log(nv) + ln_d(t) - 2 * np.log(lam) - 16 * np.pi * sig**3 / (3 * g * g) / (KB * t)

    def u(t):
        f = 1.0 if growth == "normal" else (tl - t) / (2 * np.pi * tl)
        return f * np.exp(ln_d(t)) / lam * (1 - np.exp(-dg(t) / (R * t)))

    return dict(ln_i=ln_i, u=u, te=c + b / (15 - a), tl=tl, xc=xc, nh=nh)


def critical_rate(m, n=400001):
    t = np.linspace(m["te"], m["tl"], n)
    t[-1] = m["tl"] - 1e-9
    g = integrate.cumulative_trapezoid(m["u"](t), t, initial=0)
    with np.errstate(divide="ignore"):
        lf = m["ln_i"](t) + 3 * np.log(g)
    top = lf[np.isfinite(lf)].max()
    ln_j = top + np.log(integrate.simpson(np.exp(lf - top), x=t))
    ln_a = np.log(4 * np.pi / 3) + ln_j
    ln_b = np.log(4 * np.pi / 3 * m["nh"]) + 3 * np.log(g[-1]) if m["nh"] > 0 else -np.inf
    # A y^4 + B y^3 = Xc with y = 1/R, in logarithms
    f = lambda ly: np.logaddexp(ln_a + 4 * ly, ln_b + 3 * ly) - np.log(m["xc"])
    ly = optimize.brentq(f, -1e4, 1e4, xtol=1e-13)
    return np.exp(-ly)


def nose(m):
    def ln_t(t):
        ln_u = np.log(m["u"](t))
        ln_a = np.log(np.pi / 3) + m["ln_i"](t) + 3 * ln_u
        ln_b = np.log(4 * np.pi / 3 * m["nh"]) + 3 * ln_u if m["nh"] > 0 else -np.inf
        if m["nh"] == 0:
            return (np.log(m["xc"]) - ln_a) / 4
        f = lambda lt: np.logaddexp(ln_a + 4 * lt, ln_b + 3 * lt) - np.log(m["xc"])
        return optimize.brentq(f, -1e8, 1e8, xtol=1e-13)

    ts = np.linspace(m["te"], m["tl"] - 1.0, 4000)
    vals = np.array([ln_t(t) for t in ts])
    k = int(np.argmin(vals))
    r = optimize.minimize_scalar(ln_t, bracket=(ts[k - 1], ts[k], ts[k + 1]), tol=1e-12)
    return r.x, np.exp(r.fun)


CASES = {
    "card": melt(-2.8, 4500.0, 480.0, 1300.0, 60000.0, 6.0e-5, 0.33),
    "screw_hoffman": melt(-2.6, 4200.0, 530.0, 1280.0, 57000.0, 4.0e-5, 0.30, growth="screw", hoffman=True),
    "nuclei": melt(-3.0, 5200.0, 450.0, 1350.0, 90000.0, 7.0e-5, 0.35, nh=1e9),
}

# ---------------------------------------------------------------------------
# Multi-phase model: one VFT viscosity, several crystal phases whose extended
# volumes add (Avrami). Optional wall nucleation (contact angle, slab
# thickness), fractional Stokes-Einstein below T_d = r*T_g, Delta Cp in the
# driving force, pre-existing nuclei per phase. Everything in logarithms.
# ---------------------------------------------------------------------------


def vft_melt(a, b, c, phases, xc=1e-6, wall=None, frac=None):
    """phases: list of dicts with name, tl, dh, vm, alpha, growth ("normal"|"screw"),
    optional dcp (J/(mol K)) and nh (m^-3). wall = (theta_deg, d_m) or None.
    frac = (r, xi): M(T) -> M(Td) (M(T)/M(Td))^xi below Td = r*Tg, or None."""
    tg = c + b / (12 - a)
    te = c + b / (15 - a)
    ln10 = np.log(10)

    def ln_mob(t):  # ln(T/eta)
        return np.log(t) - ln10 * (a + b / (t - c))

    if frac is not None:
        td = frac[0] * tg
        xi = frac[1]
        ln_md = ln_mob(td)
        ln_mob_se = ln_mob

        def ln_mob(t):
            lm = ln_mob_se(t)
            return np.where(t < td, ln_md + xi * (lm - ln_md), lm)

    if wall is not None:
        ct = np.cos(np.radians(wall[0]))
        f_theta = (2 + ct) * (1 - ct) ** 2 / 4
        ln_2d = np.log(2 / wall[1])
        use_wall = wall[0] < 180.0
    else:
        use_wall = False

    out = []
    for ph in phases:
        tl, dh, vm, alpha = ph["tl"], ph["dh"], ph["vm"], ph["alpha"]
        if tl <= tg:
            continue  # left out
        dcp = ph.get("dcp", 0.0)
        screw = ph.get("growth", "normal") == "screw"
        lam = (vm / NA) ** (1 / 3)
        nv = NA / vm
        sig = alpha * dh / (NA ** (1 / 3) * vm ** (2 / 3))
        c_w = 16 * np.pi * sig**3 * vm**2 / (3 * KB)  # W/(kB T) = c_w / (dG^2 T)

        def parts(t, tl=tl, dh=dh, dcp=dcp, lam=lam):
            t = np.asarray(t, dtype=float)
            dT = tl - t
            dg = dh * dT / tl - dcp * (dT - t * np.log1p(dT / t))
            ok = (t < tl) & (dg > 0)
            dgs = np.where(ok, dg, 1.0)
            ln_d = np.log(KB / (3 * np.pi * lam)) + ln_mob(t)
            return t, dT, dgs, ok, ln_d

        def ln_i(t, lam=lam, nv=nv, c_w=c_w, parts=parts):
            t, dT, dg, ok, ln_d = parts(t)
            w = c_w / (dg * dg * t)
            li = np.log(nv) + ln_d - 2 * np.log(lam) - w
            if use_wall:
                lw = ln_2d - 4 * np.log(lam) + ln_d - f_theta * w
                li = np.logaddexp(li, lw)
            return np.where(ok, li, -np.inf)

        def ln_u(t, tl=tl, lam=lam, screw=screw, parts=parts):
            t, dT, dg, ok, ln_d = parts(t)
            lf = np.log(np.where(ok, dT, 1.0) / (2 * np.pi * tl)) if screw else 0.0
            lu = lf + ln_d - np.log(lam) + np.log(-np.expm1(-dg / (R * t)))
            return np.where(ok, lu, -np.inf)

        out.append(dict(name=ph["name"], tl=tl, nh=ph.get("nh", 0.0), ln_i=ln_i, ln_u=ln_u))
    return dict(te=te, tg=tg, tl=max(p["tl"] for p in out), xc=xc, phases=out)


def constant_phase(name, tl, i, u, nh=0.0):
    """Synthetic phase with constant I and U below tl (zero at and above)."""
    def ln_i(t):
        t = np.asarray(t, dtype=float)
        return np.where(t < tl, np.log(i), -np.inf)

    def ln_u(t):
        t = np.asarray(t, dtype=float)
        return np.where(t < tl, np.log(u), -np.inf)

    return dict(name=name, tl=tl, nh=nh, ln_i=ln_i, ln_u=ln_u)


def phase_coefficients(te, ph, n=400001):
    """ln A, ln B with the phase's term = A/R^4 + B/R^3:
    A = 4pi/3 J, B = 4pi/3 N_h G^3, on the phase's own interval [te, tl]."""
    t = np.linspace(te, ph["tl"], n)
    t[-1] = ph["tl"] - 1e-9  # rates vanish at tl itself; take the left limit
    lu = ph["ln_u"](t)
    ut = lu.max()
    g = integrate.cumulative_trapezoid(np.exp(lu - ut), t, initial=0)  # G(T') / e^ut
    with np.errstate(divide="ignore"):
        lf = ph["ln_i"](t) + 3 * (np.log(g) + ut)
    top = lf[np.isfinite(lf)].max()
    ln_j = top + np.log(integrate.simpson(np.exp(lf - top), x=t))
    ln_a = np.log(4 * np.pi / 3) + ln_j
    ln_g = np.log(g[-1]) + ut
    ln_b = np.log(4 * np.pi / 3 * ph["nh"]) + 3 * ln_g if ph["nh"] > 0 else -np.inf
    return ln_a, ln_b


def solve_rate(coefs, xc):
    """R with sum_k A_k/R^4 + B_k/R^3 = xc, in y = ln(1/R)."""
    def f(ly):
        terms = [c for a, b in coefs for c in (a + 4 * ly, b + 3 * ly)]
        return np.logaddexp.reduce(terms) - np.log(xc)
    return np.exp(-optimize.brentq(f, -1e4, 1e4, xtol=1e-13))


def rates(m, n=400001):
    coefs = [phase_coefficients(m["te"], ph, n) for ph in m["phases"]]
    rc = solve_rate(coefs, m["xc"])
    rck = [solve_rate([c], m["xc"]) for c in coefs]
    ly = -np.log(rc)
    shares = [(np.exp(a + 4 * ly) + np.exp(b + 3 * ly)) / m["xc"] for a, b in coefs]
    nshares = [np.exp(b + 3 * ly) / m["xc"] for a, b in coefs]
    return rc, rck, shares, nshares


def multi_nose(m, scan=20001):
    """Global minimum of the isothermal time t(T) over [te, tl)."""
    phs = m["phases"]
    lxc = np.log(m["xc"])

    def ln_t(t):
        terms = []
        for ph in phs:
            lu = ph["ln_u"](t)
            if not np.isfinite(lu):
                continue
            terms.append((np.log(np.pi / 3) + ph["ln_i"](t) + 3 * lu, 4))
            if ph["nh"] > 0:
                terms.append((np.log(4 * np.pi / 3 * ph["nh"]) + 3 * lu, 3))
        terms = [(c, p) for c, p in terms if np.isfinite(c)]
        if not terms:
            return np.inf
        if all(p == 4 for c, p in terms):
            return (lxc - np.logaddexp.reduce([c for c, p in terms])) / 4
        f = lambda lt: np.logaddexp.reduce([c + p * lt for c, p in terms]) - lxc
        return optimize.brentq(f, -1e8, 1e8, xtol=1e-13)

    f_scalar = lambda t: float(ln_t(float(t)))
    ts = np.linspace(m["te"], m["tl"] - 1e-6, scan)
    vals = np.array([f_scalar(t) for t in ts])
    minima = []
    for k in range(len(ts)):
        lo = vals[k - 1] if k > 0 else np.inf
        hi = vals[k + 1] if k + 1 < len(ts) else np.inf
        if np.isfinite(vals[k]) and vals[k] <= lo and vals[k] <= hi and (vals[k] < lo or vals[k] < hi):
            a = ts[max(k - 1, 0)]
            b = ts[min(k + 1, len(ts) - 1)]
            r = optimize.minimize_scalar(f_scalar, bounds=(a, b), method="bounded",
                                         options=dict(xatol=1e-10))
            x, v = (r.x, r.fun) if r.fun <= vals[k] else (ts[k], vals[k])
            minima.append((v, x))
    minima.sort()
    return [(x, np.exp(v)) for v, x in minima]


NEW_ALPHA = dict(name="alpha", tl=1300.0, dh=60000.0, vm=6.0e-5, alpha=0.33, growth="normal")
NEW_BETA = dict(name="beta", tl=1250.0, dh=40000.0, vm=5.0e-5, alpha=0.30, growth="screw")

MULTI_CASES = {
    "two_phases": vft_melt(-2.8, 4500.0, 480.0, [NEW_ALPHA, NEW_BETA]),
    "wall_and_nuclei": vft_melt(-2.8, 4500.0, 480.0, [NEW_ALPHA, dict(NEW_BETA, nh=1e9)],
                                wall=(60.0, 0.004)),
    "decoupled_dcp": vft_melt(-2.8, 4500.0, 480.0, [dict(NEW_ALPHA, dcp=30.0)], frac=(1.2, 0.7)),
    "uhlmann_constant": dict(te=600.0, tl=1100.0, xc=1e-6, phases=[
        constant_phase("phase1", 1100.0, 3.0e7, 2.0e-7),
        constant_phase("phase2", 1000.0, 1.0e6, 5.0e-7)]),
}

UHLMANN = [(3.0e7, 2.0e-7, 1100.0), (1.0e6, 5.0e-7, 1000.0)]


def report_multi(name, m):
    rc, rck, shares, nshares = rates(m)
    rc2, rck2, _, _ = rates(m, n=200001)  # grid halved once
    tg = f"  T_g {m['tg']:.6f} K" if "tg" in m else ""
    print(f"{name}: T_e {m['te']:.6f} K{tg}  critical_rate {rc:.8e} K/s")
    for ph, r, s, ns in zip(m["phases"], rck, shares, nshares):
        extra = f" (of which pre-existing nuclei {ns:.8e})" if ph["nh"] > 0 else ""
        print(f"  phase {ph['name']}: T_L {ph['tl']:.1f} K  critical_rate {r:.8e} K/s  "
              f"share_at_Rc {s:.8e}{extra}")
    if all(ph["nh"] == 0 for ph in m["phases"]):
        q = sum(r**4 for r in rck) ** 0.25
        print(f"  quartic_sum_check (sum R_c,k^4)^(1/4) {q:.8e} K/s  rel_diff {abs(q - rc) / rc:.3e}")
    else:
        print("  quartic_sum_check n/a (pre-existing nuclei)")
    if name == "uhlmann_constant":
        s = sum(np.pi / 3 * i * u**3 * (tl - m["te"]) ** 4 for i, u, tl in UHLMANN)
        closed = (s / m["xc"]) ** 0.25
        print(f"  closed_form_critical_rate {closed:.8e} K/s  numerical {rc:.8e} K/s  "
              f"rel_diff {abs(rc - closed) / closed:.3e}")
        for (i, u, tl), r in zip(UHLMANN, rck):
            ck = (np.pi / 3 * i * u**3 * (tl - m["te"]) ** 4 / m["xc"]) ** 0.25
            print(f"    per-phase closed {ck:.8e}  numerical {r:.8e}  rel_diff {abs(r - ck) / ck:.3e}")
    minima = multi_nose(m)
    tn, tt = minima[0]
    if name == "uhlmann_constant":
        tc = (m["xc"] / sum(np.pi / 3 * i * u**3 for i, u, tl in UHLMANN)) ** 0.25
        print(f"  nose_time {tt:.8e} s (closed form {tc:.8e} s; t(T) is flat on [T_e, 1000) K, "
              f"so the nose temperature is not unique)")
    else:
        print(f"  nose {tn:.6f} K  nose_time {tt:.8e} s")
        for tx, tm in minima[1:]:
            print(f"  other local minimum {tx:.6f} K  time {tm:.8e} s")
    changes = [abs(a - b) / a for a, b in zip([rc] + rck, [rc2] + rck2)]
    print("  convergence (400001 vs 200001 points) rel_change R_c " + f"{changes[0]:.3e}" +
          "".join(f"  R_c,{ph['name']} {c:.3e}" for ph, c in zip(m["phases"], changes[1:])))


if __name__ == "__main__":
    for name, m in CASES.items():
        tn, tt = nose(m)
        print(f"{name}: critical_rate {critical_rate(m):.8e} K/s  nose {tn:.6f} K  nose_time {tt:.8e} s")
    for name, m in MULTI_CASES.items():
        report_multi(name, m)
