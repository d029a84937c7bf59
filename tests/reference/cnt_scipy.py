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

if __name__ == "__main__":
    for name, m in CASES.items():
        tn, tt = nose(m)
        print(f"{name}: critical_rate {critical_rate(m):.8e} K/s  nose {tn:.6f} K  nose_time {tt:.8e} s")
