//! A slow, independent oracle for the kinetic quadrature: trapezoid sums on a
//! dense uniform grid, with the running growth integral accumulated by the
//! trapezoid rule too. It uses only the public rates I(T) and U(T).

use quenchwise::kinetics::Kinetics;
use quenchwise::units::Kelvin;
use std::f64::consts::PI;

/// R_c = [4π J/(3 X_c)]^¼ with J on `points` uniform intervals of [T_e, T_L].
pub fn dense_reference_critical_rate(k: &Kinetics, points: usize) -> f64 {
    let (a, b) = (k.freeze_temperature().0, k.liquidus().0);
    let h = (b - a) / points as f64;
    let mut ln_terms = Vec::with_capacity(points + 1);
    let mut g = 0.0;
    let mut u_prev = 0.0;
    for n in 0..=points {
        let t = a + h * n as f64;
        let r = k.rates(Kelvin(t.min(b)));
        let u = r.ln_growth.exp();
        if n > 0 {
            g += 0.5 * h * (u + u_prev);
        }
        u_prev = u;
        let wgt = if n == 0 || n == points { 0.5 * h } else { h };
        if g > 0.0 && r.ln_nucleation > f64::NEG_INFINITY {
            ln_terms.push(wgt.ln() + r.ln_nucleation + 3.0 * g.ln());
        }
    }
    let m = ln_terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let ln_j = m + ln_terms.iter().map(|t| (t - m).exp()).sum::<f64>().ln();
    let xc = k.options().detectable_fraction;
    ((4.0 * PI / (3.0 * xc)).ln() + ln_j)
        .mul_add(0.25, 0.0)
        .exp()
}

/// ∫ U dT over [T_e, T_L] by the trapezoid rule on `points` intervals, with
/// the fastest-growing phase's U (one phase in the checks that use it).
pub fn dense_growth_integral(k: &Kinetics, points: usize) -> f64 {
    let (a, b) = (k.freeze_temperature().0, k.liquidus().0);
    let h = (b - a) / points as f64;
    (0..=points)
        .map(|n| {
            let u = k.rates(Kelvin((a + h * n as f64).min(b))).growth_m_per_s();
            let w = if n == 0 || n == points { 0.5 } else { 1.0 };
            w * h * u
        })
        .sum()
}

/// R_c with pre-existing nuclei as well: the root R of
/// (4π/3)[J/R⁴ + N_h (∫U dT)³/R³] = X_c, J and ∫U dT on `points` uniform
/// intervals as above, solved by bisection on ln R (one phase).
pub fn dense_reference_critical_rate_with_nuclei(k: &Kinetics, nuclei: f64, points: usize) -> f64 {
    let xc = k.options().detectable_fraction;
    let ln_4pi_3 = (4.0 * PI / 3.0).ln();
    // ln A = ln((4π/3) J) from R_c,J = [(4π/3) J / X_c]^¼.
    let ln_a = 4.0 * dense_reference_critical_rate(k, points).ln() + xc.ln();
    let ln_b = if nuclei > 0.0 {
        ln_4pi_3 + nuclei.ln() + 3.0 * dense_growth_integral(k, points).ln()
    } else {
        f64::NEG_INFINITY
    };
    let ln_x = |l: f64| {
        let (p, q) = (ln_a - 4.0 * l, ln_b - 3.0 * l);
        let m = p.max(q);
        m + ((p - m).exp() + (q - m).exp()).ln()
    };
    let (mut lo, mut hi) = (-2000.0, 2000.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if ln_x(mid) > xc.ln() {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (0.5 * (lo + hi)).exp()
}
