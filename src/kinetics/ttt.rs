//! Isothermal transformation: the TTT curve, the time t(T) at which the
//! phases together reach the detectable fraction, Σ_k [(π/3) I_k U_k³ t⁴ +
//! (4π/3) N_h,k U_k³ t³] = X_c (t = [3X_c/(π I U³)]^¼ for one phase without
//! nuclei), its nose, and the summary of a melt's kinetics with each phase's
//! part. See docs/science.md, "TTT curve" and "Several phases".

use super::cooling::{total_extent, PhaseIntegrals};
use super::quadrature::Cooling;
use super::rates::{Kinetics, LogSum, PRECISE_LINEAR};
use super::KineticsError;
use crate::numeric::brent_min;
use crate::units::{Kelvin, KelvinPerSecond};
use std::f64::consts::PI;

/// One phase's part of a melt's kinetics.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PhaseSummary {
    /// Index of the phase in the melt.
    pub index: usize,
    pub name: String,
    pub liquidus: Kelvin,
    /// The critical rate if this phase alone crystallised.
    pub critical_rate: KelvinPerSecond,
    /// This phase's share of the crystallised volume at the melt's critical rate
    /// (the shares sum to one).
    pub share: f64,
    pub interface_energy_j_per_m2: f64,
    pub turnbull_alpha: f64,
}

/// What [`Kinetics::analyse`] finds.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct KineticSummary {
    /// The melt's liquidus (the highest of its phases').
    pub liquidus: Kelvin,
    pub glass_transition: Kelvin,
    /// Lower end of the kinetic window (η = 10^freeze Pa·s).
    pub freeze_temperature: Kelvin,
    pub nose_temperature: Kelvin,
    pub nose_time_s: f64,
    pub nose_rate: KelvinPerSecond,
    pub critical_rate: KelvinPerSecond,
    /// I at the nose (all phases), m⁻³ s⁻¹.
    pub nose_nucleation_per_m3_s: f64,
    /// U at the nose (fastest phase), m/s.
    pub nose_growth_m_per_s: f64,
    /// σ of the limiting phase, J/m².
    pub interface_energy_j_per_m2: f64,
    /// α of the limiting phase.
    pub turnbull_alpha: f64,
    /// Every phase that can crystallise, in the melt's order.
    pub phases: Vec<PhaseSummary>,
    /// Position in `phases` of the phase with the largest share at R_c.
    pub limiting: usize,
    /// I and U evaluations used (a cost measure).
    pub evaluations: usize,
}

impl KineticSummary {
    /// The limiting phase's summary.
    pub fn limiting_phase(&self) -> &PhaseSummary {
        &self.phases[self.limiting]
    }
}

/// A point of the TTT curve.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct TttPoint {
    pub temperature: Kelvin,
    /// Isothermal time to reach the detectable fraction, s (∞ where nothing forms).
    pub time_s: f64,
    /// I summed over the phases, m⁻³ s⁻¹.
    pub nucleation_per_m3_s: f64,
    /// U of the fastest-growing phase, m/s.
    pub growth_m_per_s: f64,
}

/// Solve A y⁴ + B y³ = X for y > 0, given ln A, ln B (either may be −∞, not both) and ln X.
/// Returns ln y.
///
/// With y = (B/A)·s the equation becomes s⁴ + s³ = c, c = X A³/B⁴, one
/// parameter instead of three. Its root lies below both one-term solutions
/// c^¼ and c^⅓ (each term alone is below c), and s³(s + 1) is increasing and
/// convex for s > 0, so Newton's method started at the smaller of the two
/// falls monotonically onto the root, in plain arithmetic: two exponentials
/// (c and the start) and one logarithm per solve, not one of each per step. Beyond
/// |ln c| = 600 the other term changes s by under e⁻¹⁵⁰ relative, far below
/// rounding, and the one-term solution is the answer.
pub(super) fn solve_quartic_cubic(ln_a: f64, ln_b: f64, ln_x: f64) -> f64 {
    if ln_b == f64::NEG_INFINITY {
        return (ln_x - ln_a) / 4.0;
    }
    if ln_a == f64::NEG_INFINITY {
        return (ln_x - ln_b) / 3.0;
    }
    let ln_c = ln_x + 3.0 * ln_a - 4.0 * ln_b;
    // The one-term solutions directly: ln_b − ln_a + ln_c/4 is the same
    // number algebraically but loses digits to cancellation when ln A is huge.
    if ln_c > 600.0 {
        return (ln_x - ln_a) / 4.0;
    }
    if ln_c < -600.0 {
        return (ln_x - ln_b) / 3.0;
    }
    let ln_s = {
        let c = ln_c.exp();
        let mut s = (ln_c / 4.0).min(ln_c / 3.0).exp();
        for _ in 0..100 {
            let s2 = s * s;
            let step = (s2 * s * (s + 1.0) - c) / (s2 * (4.0 * s + 3.0));
            s -= step;
            // Monotone from above: a step that is no longer clearly positive
            // is rounding.
            if step <= 4.0 * f64::EPSILON * s {
                break;
            }
        }
        s.ln()
    };
    ln_b - ln_a + ln_s
}

/// `value` if it is a finite positive number; otherwise the error that says
/// the melt lies outside what the kinetics can represent (a rate that
/// overflows, a time that is never reached).
pub(super) fn representable(
    quantity: &'static str,
    value: f64,
    unit: &'static str,
) -> Result<f64, KineticsError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(KineticsError::Unrepresentable {
            quantity,
            value,
            unit,
        })
    }
}

/// (1 − c)/c with c = (3 − √5)/2, the golden-section fraction.
const GOLDEN_STRETCH: f64 = 1.618_033_988_749_895;

impl Kinetics<'_> {
    /// ln of the isothermal time to reach X_c at T, all phases together:
    /// Σ_k [(π/3) I_k U_k³ t⁴ + (4π/3) N_h,k U_k³ t³] = X_c.
    pub(super) fn ln_ttt_time(&self, t: f64) -> f64 {
        let (ln_a, ln_b) = self.isothermal_coefficients(t);
        if ln_a == f64::NEG_INFINITY && ln_b == f64::NEG_INFINITY {
            return f64::INFINITY;
        }
        solve_quartic_cubic(ln_a, ln_b, self.opts.detectable_fraction.ln())
    }

    /// ln Σ_k (π/3) I_k U_k³ and ln Σ_k (4π/3) N_h,k U_k³ at T.
    ///
    /// With the rates split as ln I = ℓ_I + ln m and ln U = ℓ_U + ln(m f)
    /// ([`super::rates::SplitRates`]), the phases share m, so the sums are
    /// m⁴ Σ_k (π/3) f_k³ e^(ℓ_I + 3ℓ_U) and m³ Σ_k f_k³ e^(ln((4π/3)N_h) + 3ℓ_U): one
    /// logarithm, of m, serves every phase.
    fn isothermal_coefficients(&self, t: f64) -> (f64, f64) {
        let ln_pi_3 = (PI / 3.0).ln();
        let mut a = LogSum::EMPTY;
        let mut b = LogSum::EMPTY;
        let mut mobility = None;
        for (_, p) in &self.phases {
            if t >= p.tl {
                continue;
            }
            let mob = *mobility.get_or_insert_with(|| self.mobility(t));
            let s = self.split_rates_with(p, t, mob);
            if s.ln_u == f64::NEG_INFINITY || s.f == 0.0 {
                continue;
            }
            let x_a = ln_pi_3 + s.ln_i + 3.0 * s.ln_u;
            let x_b = p.ln_nuclei_sphere + 3.0 * s.ln_u;
            let f3 = s.f * s.f * s.f;
            if f3 >= PRECISE_LINEAR {
                a.add_weighted(x_a, f3);
                if p.nuclei > 0.0 {
                    b.add_weighted(x_b, f3);
                }
            } else {
                let ln_f3 = 3.0 * s.f.ln();
                a.add(x_a + ln_f3);
                if p.nuclei > 0.0 {
                    b.add(x_b + ln_f3);
                }
            }
        }
        match mobility {
            Some((_, m)) => {
                let ln_m = m.ln();
                (a.ln() + 4.0 * ln_m, b.ln() + 3.0 * ln_m)
            }
            None => (f64::NEG_INFINITY, f64::NEG_INFINITY),
        }
    }

    /// Isothermal transformed fraction after `time_s` at T by JMAK:
    /// X = 1 − exp(−X_ext), X_ext = Σ_k [(π/3) I_k U_k³ t⁴ + (4π/3) N_h,k U_k³ t³].
    pub fn isothermal_fraction(&self, t: Kelvin, time_s: f64) -> f64 {
        let (ln_a, ln_b) = self.isothermal_coefficients(t.0);
        let ext = ln_a.exp() * time_s.powi(4) + ln_b.exp() * time_s.powi(3);
        -(-ext).exp_m1()
    }

    /// The TTT curve at `points` temperatures spread evenly over the kinetic window.
    pub fn ttt_curve(&self, points: usize) -> Vec<TttPoint> {
        let n = points.max(2);
        (0..n)
            .map(|k| {
                let t = self.freeze + (self.tl - self.freeze) * (k as f64 + 0.5) / n as f64;
                let r = self.rates(Kelvin(t));
                TttPoint {
                    temperature: Kelvin(t),
                    time_s: self.ln_ttt_time(t).exp(),
                    nucleation_per_m3_s: r.nucleation_per_m3_s(),
                    growth_m_per_s: r.growth_m_per_s(),
                }
            })
            .collect()
    }

    /// Nose, nose-method rate and critical cooling rate, with each phase's part.
    ///
    /// # Errors
    /// Numerical failure; a nose below the glass transition; a critical
    /// rate, nose time or rate that is not a finite positive number (the
    /// melt lies outside what the kinetics can represent).
    pub fn analyse(&self) -> Result<KineticSummary, KineticsError> {
        let integrals = self.phase_integrals(Cooling::Constant)?;
        self.summary_of(&integrals)
    }

    /// The summary from the constant-rate integrals of every phase.
    pub(super) fn summary_of(
        &self,
        integrals: &[PhaseIntegrals],
    ) -> Result<KineticSummary, KineticsError> {
        let total = total_extent(integrals);
        let xc = self.opts.detectable_fraction;
        // Checked first: a melt outside what the kinetics represent says so
        // here, before the nose search fails on the same rates less clearly.
        let critical = representable("critical cooling rate", total.critical_scale(xc), "K/s")?;
        let nose_t = self.nose(integrals)?;
        let nose_time = self.ln_ttt_time(nose_t).exp();
        if nose_t < self.tg {
            return Err(KineticsError::NoseBelowGlassTransition {
                nose: nose_t,
                tg: self.tg,
            });
        }
        let ln_total = total.ln_at(critical.ln());
        let phases: Vec<PhaseSummary> = integrals
            .iter()
            .map(|pi| {
                let p = &self.melt.phases[pi.phase];
                PhaseSummary {
                    index: pi.phase,
                    name: p.name.clone(),
                    liquidus: p.liquidus,
                    critical_rate: KelvinPerSecond(pi.extent.critical_scale(xc)),
                    share: (pi.extent.ln_at(critical.ln()) - ln_total).exp(),
                    interface_energy_j_per_m2: p.interface_energy_j_per_m2(),
                    turnbull_alpha: p.turnbull_alpha(),
                }
            })
            .collect();
        let limiting = phases
            .iter()
            .enumerate()
            .fold((0, f64::NEG_INFINITY), |best, (i, p)| {
                if p.share > best.1 {
                    (i, p.share)
                } else {
                    best
                }
            })
            .0;
        let r = self.rates(Kelvin(nose_t));
        let nose_rate = (self.tl - nose_t) / nose_time;
        representable("TTT nose time", nose_time, "s")?;
        representable("nose-method rate", nose_rate, "K/s")?;
        for (what, v) in [
            ("nucleation rate at the nose", r.nucleation_per_m3_s()),
            ("growth rate at the nose", r.growth_m_per_s()),
        ] {
            if !v.is_finite() {
                return Err(KineticsError::Unrepresentable {
                    quantity: what,
                    value: v,
                    unit: if what.starts_with("growth") {
                        "m/s"
                    } else {
                        "per m3 s"
                    },
                });
            }
        }
        for p in &phases {
            if !(p.critical_rate.0.is_finite() && p.share.is_finite()) {
                return Err(KineticsError::Unrepresentable {
                    quantity: "critical cooling rate of one phase",
                    value: p.critical_rate.0,
                    unit: "K/s",
                });
            }
        }
        Ok(KineticSummary {
            liquidus: Kelvin(self.tl),
            glass_transition: Kelvin(self.tg),
            freeze_temperature: Kelvin(self.freeze),
            nose_temperature: Kelvin(nose_t),
            nose_time_s: nose_time,
            nose_rate: KelvinPerSecond(nose_rate),
            critical_rate: KelvinPerSecond(critical),
            nose_nucleation_per_m3_s: r.nucleation_per_m3_s(),
            nose_growth_m_per_s: r.growth_m_per_s(),
            interface_energy_j_per_m2: phases[limiting].interface_energy_j_per_m2,
            turnbull_alpha: phases[limiting].turnbull_alpha,
            evaluations: integrals.iter().map(|p| p.integrals.evaluations).sum(),
            phases,
            limiting,
        })
    }

    /// The temperature of the TTT nose: each phase's quadrature nodes bracket
    /// its own nose; the bracket where the combined time is shortest is
    /// searched by Brent's method.
    fn nose(&self, integrals: &[PhaseIntegrals]) -> Result<f64, KineticsError> {
        // Each phase's best node, judged on the TTT curve of all phases
        // together; with one phase there is nothing to judge.
        let guess = |pi: &PhaseIntegrals| (pi.integrals.nose_guess.0, pi.integrals.nose_guess.2);
        let (t0, half) = match integrals {
            [only] => guess(only),
            _ => {
                integrals
                    .iter()
                    .map(|pi| (self.ln_ttt_time(pi.integrals.nose_guess.0), guess(pi)))
                    .fold((f64::INFINITY, (self.freeze, 0.0)), |best, v| {
                        if v.0 < best.0 {
                            v
                        } else {
                            best
                        }
                    })
                    .1
            }
        };
        // Gauss–Legendre nodes are at most 0.37 half-widths apart (0.04 from a panel
        // edge), so the nose lies within half a half-width of the best node.
        // Brent's method starts at the golden-section point of its bracket,
        // 0.382 of the way up; the bracket is stretched upwards so that this
        // first point is the best node (a bracket [t0 − h/2, t0 + h/2] would
        // start 0.12 h away from it).
        let lo = (t0 - 0.5 * half).max(self.freeze);
        let hi = (t0 + 0.5 * half * GOLDEN_STRETCH).min(self.tl);
        brent_min(|t| self.ln_ttt_time(t), lo, hi, 1e-6).map_err(KineticsError::Numerical)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A few units of double rounding on numbers of order one.
    const ROUNDING_ATOL: f64 = 1e-14;

    #[test]
    fn quartic_cubic_solver() {
        // y⁴ + y³ = 2 has the root y = 1.
        let z = solve_quartic_cubic(0.0, 0.0, 2f64.ln());
        assert!(z.abs() < 1e-12);
        // Pure quartic.
        assert!(
            (solve_quartic_cubic(0.0, f64::NEG_INFINITY, 16f64.ln()) - 2f64.ln()).abs() < 1e-14
        );
        // Source: exact algebra, 3y⁴ + 5y³ = 3·16 + 5·8 = 88 has the root y = 2.
        let z = solve_quartic_cubic(3f64.ln(), 5f64.ln(), 88f64.ln());
        assert!((z - 2f64.ln()).abs() < ROUNDING_ATOL, "{z}");
    }

    #[test]
    fn quartic_cubic_solver_leaves_no_residual_over_the_whole_range() {
        // Source: the defining equation itself. ln(A y⁴ + B y³) − ln X at the
        // returned ln y, over coefficients from e⁻⁷⁰⁰ to e⁷⁰⁰ (both terms, one
        // dominating by any margin, near-ties), on a fixed SplitMix-style
        // sequence; the residual is rounding only (ROUNDING_ATOL per unit of
        // the largest log it is computed from).
        let mut next = crate::numeric::split_mix(0x0bad_5eed_u64);
        for _ in 0..20_000 {
            let ln_a = -700.0 + 1400.0 * next();
            let ln_b = -700.0 + 1400.0 * next();
            let ln_x = -30.0 + 30.0 * next();
            let y = solve_quartic_cubic(ln_a, ln_b, ln_x);
            let (p, q) = (ln_a + 4.0 * y, ln_b + 3.0 * y);
            let m = p.max(q);
            let residual = m + ((p - m).exp() + (q - m).exp()).ln() - ln_x;
            let scale = 1.0 + ln_a.abs().max(ln_b.abs()).max(ln_x.abs());
            assert!(
                residual.abs() < ROUNDING_ATOL * scale,
                "{ln_a} {ln_b} {ln_x}: {residual}"
            );
        }
    }
}
