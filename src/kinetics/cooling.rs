//! Continuous cooling: the transformed fraction after cooling at a constant
//! rate (JMAK with time-dependent rates), the critical cooling rate, any
//! measured cooling path, and the thickest slab a plate quench keeps glassy.
//! See docs/science.md, "Continuous cooling".

use super::melt::DEFAULT_DETECTABLE_FRACTION;
use super::quadrature::{self, Cooling, CoolingIntegrals, Quadrature, QuadratureSettings, NODES};
use super::rates::{Kinetics, Rates};
use super::ttt::solve_quartic_cubic;
use super::KineticsError;
use crate::error::{finite, positive};
use crate::units::{Kelvin, KelvinPerSecond};
use std::f64::consts::PI;

impl Kinetics {
    pub(super) fn cooling_integrals(
        &self,
        cooling: Cooling,
    ) -> Result<CoolingIntegrals, KineticsError> {
        let nh = self.opts.heterogeneous_nuclei_per_m3;
        let ln_nuclei = if nh > 0.0 {
            (4.0 * PI / 3.0 * nh).ln()
        } else {
            f64::NEG_INFINITY
        };
        Quadrature::cooling_integrals_with(
            &|t| self.rates_raw(t),
            (self.freeze, self.tl),
            cooling,
            &self.quad,
            (ln_nuclei, self.opts.detectable_fraction.ln()),
        )
    }

    /// Critical cooling rate for continuous cooling at a constant rate from T_L.
    ///
    /// # Errors
    /// Numerical failure (no nucleation or growth anywhere in the window).
    pub fn critical_rate(&self) -> Result<KelvinPerSecond, KineticsError> {
        let ci = self.cooling_integrals(Cooling::Constant)?;
        Ok(KelvinPerSecond(critical_scale(
            &ci,
            self.opts.heterogeneous_nuclei_per_m3,
            self.opts.detectable_fraction,
        )))
    }

    /// Transformed fraction X = 1 − exp(−X_ext) after cooling from T_L to T_e at a constant rate.
    ///
    /// # Errors
    /// As [`Kinetics::critical_rate`]; a rate that is not positive.
    pub fn fraction_at_rate(&self, rate: KelvinPerSecond) -> Result<f64, KineticsError> {
        Ok(-(-self.extended_fraction_at_rate(rate)?).exp_m1())
    }

    /// Extended (Avrami) fraction X_ext after constant-rate cooling from T_L to T_e:
    /// X_ext = (4π/3)[J/R⁴ + N_h (∫U dT/R)³].
    ///
    /// # Errors
    /// As [`Kinetics::fraction_at_rate`].
    pub fn extended_fraction_at_rate(&self, rate: KelvinPerSecond) -> Result<f64, KineticsError> {
        positive("cooling rate", rate.0, "K/s")?;
        let ci = self.cooling_integrals(Cooling::Constant)?;
        Ok(ln_extended_fraction(&ci, self.opts.heterogeneous_nuclei_per_m3, rate.0.ln()).exp())
    }

    /// Largest slab that stays glassy when its centre cools as the first Fourier
    /// mode, dT/dt = −(π²κ/4h²)(T − T_s), from the liquidus.
    ///
    /// Returns the half-thickness h in metres (a slab cooled through both faces
    /// is 2h thick; one cooled through one face with the other insulated is h).
    ///
    /// # Errors
    /// κ not positive; T_s not below the freeze temperature; numerical failure.
    pub fn max_glassy_half_thickness_m(
        &self,
        surface: Kelvin,
        thermal_diffusivity_m2_per_s: f64,
    ) -> Result<f64, KineticsError> {
        positive("thermal diffusivity", thermal_diffusivity_m2_per_s, "m2/s")?;
        finite("quench surface temperature", surface.0)?;
        if surface.0 >= self.freeze {
            return Err(KineticsError::SurfaceTooHot {
                surface: surface.0,
                freeze: self.freeze,
            });
        }
        let ci = self.cooling_integrals(Cooling::Newtonian { surface: surface.0 })?;
        let k = critical_scale(
            &ci,
            self.opts.heterogeneous_nuclei_per_m3,
            self.opts.detectable_fraction,
        );
        Ok(0.5 * PI * (thermal_diffusivity_m2_per_s / k).sqrt())
    }

    /// Crystallised fraction along a cooling path given as (time s, temperature K) points,
    /// linear between points: X_ext = (4π/3)[∫ I(τ) (∫_τ^{t_end} U ds)³ dτ + N_h (∫ U ds)³].
    ///
    /// # Errors
    /// Fewer than two points, times not increasing, non-finite values.
    pub fn path_fraction(&self, path: &[(f64, Kelvin)]) -> Result<PathResult, KineticsError> {
        if path.len() < 2 {
            return Err(KineticsError::BadPath { index: path.len() });
        }
        for (k, w) in path.windows(2).enumerate() {
            finite("path time", w[1].0)?;
            finite("path temperature", w[1].1 .0)?;
            if w[1].0 <= w[0].0 {
                return Err(KineticsError::BadPath { index: k + 1 });
            }
        }
        let rule = quadrature::rule();
        // Sub-panels in time: at most 1 K of temperature change each, so I and U
        // are smooth on every panel; isothermal holds need one panel.
        struct Node {
            ln_i: f64,
            u: f64,
        }
        struct TimePanel {
            half: f64,
            nodes: [Node; NODES],
        }
        let mut panels: Vec<TimePanel> = Vec::new();
        for w in path.windows(2) {
            let (t0, t1) = (w[0].0, w[1].0);
            let (k0, k1) = (w[0].1 .0, w[1].1 .0);
            let n = ((k1 - k0).abs().ceil() as usize).clamp(1, 1_000_000);
            for s in 0..n {
                let a = t0 + (t1 - t0) * s as f64 / n as f64;
                let b = t0 + (t1 - t0) * (s + 1) as f64 / n as f64;
                let times = rule.nodes_on(a, b);
                panels.push(TimePanel {
                    half: 0.5 * (b - a),
                    nodes: std::array::from_fn(|i| {
                        let temp = k0 + (k1 - k0) * (times[i] - t0) / (t1 - t0);
                        let r = self.rates_raw(temp);
                        Node {
                            ln_i: r.ln_nucleation,
                            u: r.ln_growth.exp(),
                        }
                    }),
                });
            }
        }
        // Backward running growth length ∫_τ^{t_end} U ds at every node. The
        // integration matrix integrates from the panel start, so
        // G(τ_i) = G(panel end) + panel integral − ∫_{start}^{τ_i} U ds.
        let mut g_after = 0.0;
        let mut ln_terms = Vec::new();
        for p in panels.iter().rev() {
            let u = |j: usize| p.nodes[j].u;
            let total: f64 = p.half * (0..NODES).map(|j| rule.w[j] * u(j)).sum::<f64>();
            for i in 0..NODES {
                let partial: f64 = p.half * (0..NODES).map(|j| rule.s[i][j] * u(j)).sum::<f64>();
                let g = (g_after + total - partial).max(0.0);
                if p.nodes[i].ln_i > f64::NEG_INFINITY && g > 0.0 {
                    ln_terms.push((p.half * rule.w[i]).ln() + p.nodes[i].ln_i + 3.0 * g.ln());
                }
            }
            g_after += total;
        }
        let c = (4.0 * PI / 3.0).ln();
        let mut terms: Vec<f64> = ln_terms.iter().map(|t| t + c).collect();
        let nh = self.opts.heterogeneous_nuclei_per_m3;
        if nh > 0.0 && g_after > 0.0 {
            terms.push(c + nh.ln() + 3.0 * g_after.ln());
        }
        let m = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let ln_ext = if m == f64::NEG_INFINITY {
            f64::NEG_INFINITY
        } else {
            m + terms.iter().map(|t| (t - m).exp()).sum::<f64>().ln()
        };
        let ext = ln_ext.exp();
        Ok(PathResult {
            extended_fraction: ext,
            transformed_fraction: -(-ext).exp_m1(),
            vitrifies: ext < self.opts.detectable_fraction,
        })
    }
}

/// Outcome of a cooling path.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct PathResult {
    /// Extended (Avrami) fraction X_ext.
    pub extended_fraction: f64,
    /// X = 1 − exp(−X_ext), always in [0, 1].
    pub transformed_fraction: f64,
    /// X_ext stays below the detectable fraction.
    pub vitrifies: bool,
}

/// ln of the extended crystallised fraction after cooling with a rate scale:
/// X_ext = (4π/3) [J/s⁴ + N_h (G/s)³] for scale s (R, or k for Newtonian cooling).
fn ln_extended_fraction(ci: &CoolingIntegrals, nh: f64, ln_scale: f64) -> f64 {
    let c = (4.0 * PI / 3.0).ln();
    let p = c + ci.ln_j - 4.0 * ln_scale;
    if nh > 0.0 {
        let q = c + nh.ln() + 3.0 * (ci.ln_g_total - ln_scale);
        let m = p.max(q);
        m + ((p - m).exp() + (q - m).exp()).ln()
    } else {
        p
    }
}

/// The rate scale s at which X_ext = X_c (the critical rate for constant cooling).
pub(super) fn critical_scale(ci: &CoolingIntegrals, nh: f64, xc: f64) -> f64 {
    let c = (4.0 * PI / 3.0).ln();
    let ln_a = c + ci.ln_j;
    let ln_b = if nh > 0.0 {
        c + nh.ln() + 3.0 * ci.ln_g_total
    } else {
        f64::NEG_INFINITY
    };
    // A y⁴ + B y³ = X_c with y = 1/s.
    (-solve_quartic_cubic(ln_a, ln_b, xc.ln())).exp()
}

/// Extended fraction X_ext after cooling at a constant rate over a window
/// [lo, hi], for any nucleation and growth rates (the rates must vanish above
/// `hi`). This is the quadrature used for every melt, exposed so it can be
/// checked against closed forms.
///
/// # Errors
/// A rate that is not positive, or rates that vanish across the window.
pub fn extended_fraction_constant_rate<R: Fn(Kelvin) -> Rates>(
    rates: R,
    window: (Kelvin, Kelvin),
    rate: KelvinPerSecond,
    nuclei_per_m3: f64,
) -> Result<f64, KineticsError> {
    positive("cooling rate", rate.0, "K/s")?;
    let ci = Quadrature::cooling_integrals_with(
        &|t| rates(Kelvin(t)),
        (window.0 .0, window.1 .0),
        Cooling::Constant,
        &QuadratureSettings::default(),
        (f64::NEG_INFINITY, DEFAULT_DETECTABLE_FRACTION.ln()),
    )?;
    Ok(ln_extended_fraction(&ci, nuclei_per_m3, rate.0.ln()).exp())
}
