//! Isothermal transformation: the TTT curve t(T) = [3X_c/(π I U³)]^¼ (with
//! pre-existing nuclei, the root of (π/3) I U³ t⁴ + (4π/3) N_h U³ t³ = X_c), its
//! nose, and the summary of a melt's kinetics. See docs/science.md, "TTT curve".

use super::cooling::critical_scale;
use super::quadrature::Cooling;
use super::rates::Kinetics;
use super::KineticsError;
use crate::numeric::brent_min;
use crate::units::{Kelvin, KelvinPerSecond};
use std::f64::consts::PI;

/// What [`Kinetics::analyse`] finds.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct KineticSummary {
    pub liquidus: Kelvin,
    pub glass_transition: Kelvin,
    /// Lower end of the kinetic window (η = 10^freeze Pa·s).
    pub freeze_temperature: Kelvin,
    pub nose_temperature: Kelvin,
    pub nose_time_s: f64,
    pub nose_rate: KelvinPerSecond,
    pub critical_rate: KelvinPerSecond,
    /// I at the nose, m⁻³ s⁻¹.
    pub nose_nucleation_per_m3_s: f64,
    /// U at the nose, m/s.
    pub nose_growth_m_per_s: f64,
    pub interface_energy_j_per_m2: f64,
    pub turnbull_alpha: f64,
    /// I and U evaluations used (a cost measure).
    pub evaluations: usize,
}

/// A point of the TTT curve.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct TttPoint {
    pub temperature: Kelvin,
    /// Isothermal time to reach the detectable fraction, s (∞ where nothing forms).
    pub time_s: f64,
    pub nucleation_per_m3_s: f64,
    pub growth_m_per_s: f64,
}

/// Solve A y⁴ + B y³ = X for y > 0, given ln A, ln B (either may be −∞, not both) and ln X.
/// Returns ln y. The left side is increasing in ln y with slope between 3 and 4.
pub(super) fn solve_quartic_cubic(ln_a: f64, ln_b: f64, ln_x: f64) -> f64 {
    if ln_b == f64::NEG_INFINITY {
        return (ln_x - ln_a) / 4.0;
    }
    if ln_a == f64::NEG_INFINITY {
        return (ln_x - ln_b) / 3.0;
    }
    // Start from the smaller of the two one-term solutions, which lies below the root.
    let mut z = ((ln_x - ln_a) / 4.0).min((ln_x - ln_b) / 3.0);
    for _ in 0..60 {
        let p = ln_a + 4.0 * z;
        let q = ln_b + 3.0 * z;
        let m = p.max(q);
        let (ep, eq) = ((p - m).exp(), (q - m).exp());
        let g = m + (ep + eq).ln() - ln_x;
        let dg = (4.0 * ep + 3.0 * eq) / (ep + eq);
        let step = g / dg;
        z -= step;
        if step.abs() < 1e-14 * (1.0 + z.abs()) {
            break;
        }
    }
    z
}

impl Kinetics {
    /// ln of the isothermal time to reach X_c at T, with pre-existing nuclei:
    /// (π/3) I U³ t⁴ + (4π/3) N_h U³ t³ = X_c.
    pub(super) fn ln_ttt_time(&self, t: f64) -> f64 {
        let r = self.rates_raw(t);
        if r.ln_growth == f64::NEG_INFINITY {
            return f64::INFINITY;
        }
        let ln_a = (PI / 3.0).ln() + r.ln_nucleation + 3.0 * r.ln_growth;
        let nh = self.opts.heterogeneous_nuclei_per_m3;
        let ln_b = if nh > 0.0 {
            (4.0 * PI / 3.0 * nh).ln() + 3.0 * r.ln_growth
        } else {
            f64::NEG_INFINITY
        };
        if ln_a == f64::NEG_INFINITY && ln_b == f64::NEG_INFINITY {
            return f64::INFINITY;
        }
        solve_quartic_cubic(ln_a, ln_b, self.opts.detectable_fraction.ln())
    }

    /// Isothermal transformed fraction after `time_s` at T by JMAK:
    /// X = 1 − exp(−X_ext), X_ext = (π/3) I U³ t⁴ + (4π/3) N_h U³ t³.
    pub fn isothermal_fraction(&self, t: Kelvin, time_s: f64) -> f64 {
        let r = self.rates_raw(t.0);
        let ext = (PI / 3.0) * (r.ln_nucleation + 3.0 * r.ln_growth).exp() * time_s.powi(4)
            + (4.0 * PI / 3.0)
                * self.opts.heterogeneous_nuclei_per_m3
                * (r.ln_growth.exp() * time_s).powi(3);
        -(-ext).exp_m1()
    }

    /// The TTT curve at `points` temperatures spread evenly over the kinetic window.
    pub fn ttt_curve(&self, points: usize) -> Vec<TttPoint> {
        let n = points.max(2);
        (0..n)
            .map(|k| {
                let t = self.freeze + (self.tl - self.freeze) * (k as f64 + 0.5) / n as f64;
                let r = self.rates_raw(t);
                TttPoint {
                    temperature: Kelvin(t),
                    time_s: self.ln_ttt_time(t).exp(),
                    nucleation_per_m3_s: r.nucleation_per_m3_s(),
                    growth_m_per_s: r.growth_m_per_s(),
                }
            })
            .collect()
    }
    /// Nose, nose-method rate and critical cooling rate.
    ///
    /// # Errors
    /// Numerical failure; a nose below the glass transition.
    pub fn analyse(&self) -> Result<KineticSummary, KineticsError> {
        let ci = self.cooling_integrals(Cooling::Constant)?;
        let critical = critical_scale(
            &ci,
            self.opts.heterogeneous_nuclei_per_m3,
            self.opts.detectable_fraction,
        );
        let (t0, _, half) = ci.nose_guess;
        // Gauss–Legendre nodes are at most 0.37 half-widths apart (0.04 from a panel
        // edge), so the nose lies within half a half-width of the best node.
        let lo = (t0 - 0.5 * half).max(self.freeze);
        let hi = (t0 + 0.5 * half).min(self.tl);
        let nose_t =
            brent_min(|t| self.ln_ttt_time(t), lo, hi, 1e-6).map_err(KineticsError::Numerical)?;
        let nose_time = self.ln_ttt_time(nose_t).exp();
        if nose_t < self.tg {
            return Err(KineticsError::NoseBelowGlassTransition {
                nose: nose_t,
                tg: self.tg,
            });
        }
        let r = self.rates_raw(nose_t);
        Ok(KineticSummary {
            liquidus: Kelvin(self.tl),
            glass_transition: Kelvin(self.tg),
            freeze_temperature: Kelvin(self.freeze),
            nose_temperature: Kelvin(nose_t),
            nose_time_s: nose_time,
            nose_rate: KelvinPerSecond((self.tl - nose_t) / nose_time),
            critical_rate: KelvinPerSecond(critical),
            nose_nucleation_per_m3_s: r.nucleation_per_m3_s(),
            nose_growth_m_per_s: r.growth_m_per_s(),
            interface_energy_j_per_m2: self.melt.interface_energy_j_per_m2(),
            turnbull_alpha: self.melt.turnbull_alpha(),
            evaluations: ci.evaluations,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quartic_cubic_solver() {
        // y⁴ + y³ = 2 has the root y = 1.
        let z = solve_quartic_cubic(0.0, 0.0, 2f64.ln());
        assert!(z.abs() < 1e-12);
        // Pure quartic.
        assert!(
            (solve_quartic_cubic(0.0, f64::NEG_INFINITY, 16f64.ln()) - 2f64.ln()).abs() < 1e-14
        );
    }
}
