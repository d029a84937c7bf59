//! Continuous cooling: the transformed fraction after cooling at a constant
//! rate (JMAK with time-dependent rates), the critical cooling rate, any
//! measured cooling path, and the thickest slab a plate quench keeps glassy.
//! Every phase crystallises at once and the extended volumes add (Avrami
//! 1939–41), each phase nucleating and growing only below its own liquidus.
//! See docs/science.md, "Continuous cooling" and "Several phases".

use super::melt::DEFAULT_DETECTABLE_FRACTION;
use super::quadrature::{
    self, Cooling, CoolingIntegrals, Layout, Quadrature, QuadratureSettings, NODES,
};
use super::rates::{ln_nuclei_sphere, log_add, Kinetics, PhaseRates, Rates, SplitRates};
use super::ttt::{representable, solve_quartic_cubic, KineticSummary};
use super::KineticsError;
use crate::error::{finite, positive};
use crate::units::{Kelvin, KelvinPerSecond};
use std::f64::consts::PI;

/// ln(4π/3).
fn ln_4pi_3() -> f64 {
    (4.0 * PI / 3.0).ln()
}

/// The extended fraction after cooling with a rate scale s, as
/// X_ext = A y⁴ + B y³ with y = 1/s, kept as logarithms: A = (4π/3) J from
/// nuclei that form on cooling, B = (4π/3) N_h G³ from nuclei already there.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Extent {
    pub(super) ln_a: f64,
    pub(super) ln_b: f64,
}

impl Extent {
    const NONE: Extent = Extent {
        ln_a: f64::NEG_INFINITY,
        ln_b: f64::NEG_INFINITY,
    };

    /// From the integrals and ln((4π/3) N_h) ([`ln_nuclei_sphere`]).
    fn of(ci: &CoolingIntegrals, ln_nuclei_sphere: f64) -> Extent {
        Extent {
            ln_a: ln_4pi_3() + ci.ln_j,
            ln_b: ln_nuclei_sphere + 3.0 * ci.ln_g_total,
        }
    }

    fn add(self, o: Extent) -> Extent {
        Extent {
            ln_a: log_add(self.ln_a, o.ln_a),
            ln_b: log_add(self.ln_b, o.ln_b),
        }
    }

    /// ln X_ext at rate scale s = e^ln_scale.
    pub(super) fn ln_at(&self, ln_scale: f64) -> f64 {
        log_add(self.ln_a - 4.0 * ln_scale, self.ln_b - 3.0 * ln_scale)
    }

    /// The rate scale at which X_ext = X_c.
    pub(super) fn critical_scale(&self, xc: f64) -> f64 {
        (-solve_quartic_cubic(self.ln_a, self.ln_b, xc.ln())).exp()
    }
}

/// The cooling integrals of one phase.
#[derive(Debug, Clone, Copy)]
pub(super) struct PhaseIntegrals {
    /// Index of the phase in the melt.
    pub(super) phase: usize,
    pub(super) integrals: CoolingIntegrals,
    pub(super) extent: Extent,
}

impl Kinetics<'_> {
    /// The cooling integrals of every phase that can crystallise.
    pub(super) fn phase_integrals(
        &self,
        cooling: Cooling,
    ) -> Result<Vec<PhaseIntegrals>, KineticsError> {
        self.phase_integrals_seeded(cooling, None, None)
    }

    /// As [`Kinetics::phase_integrals`], each phase's quadrature starting from
    /// its layout in `seeds` when given (one per phase, in order), and leaving
    /// its final layout in `keep` when given.
    pub(super) fn phase_integrals_seeded(
        &self,
        cooling: Cooling,
        seeds: Option<&[Layout]>,
        mut keep: Option<&mut Vec<Layout>>,
    ) -> Result<Vec<PhaseIntegrals>, KineticsError> {
        let mut out = Vec::with_capacity(self.phases.len());
        if let Some(k) = keep.as_deref_mut() {
            k.clear();
        }
        for (n, (i, p)) in self.phases.iter().enumerate() {
            let seed = seeds.and_then(|s| s.get(n));
            let mut layout = keep.is_some().then(Layout::default);
            let ci = self.integrals_of(p, cooling, seed, layout.as_mut())?;
            if let (Some(k), Some(l)) = (keep.as_deref_mut(), layout) {
                k.push(l);
            }
            out.push(PhaseIntegrals {
                phase: *i,
                integrals: ci,
                extent: Extent::of(&ci, p.ln_nuclei_sphere),
            });
        }
        Ok(out)
    }

    fn integrals_of(
        &self,
        p: &PhaseRates,
        cooling: Cooling,
        seed: Option<&Layout>,
        keep: Option<&mut Layout>,
    ) -> Result<CoolingIntegrals, KineticsError> {
        Quadrature::cooling_integrals_seeded(
            &|t| self.split_rates(p, t),
            (self.freeze, p.tl),
            cooling,
            &self.quad,
            (p.ln_nuclei_sphere, self.opts.detectable_fraction.ln()),
            self.decoupling_temperature(),
            seed,
            keep,
        )
    }

    /// Critical cooling rate for continuous cooling at a constant rate from T_L.
    ///
    /// # Errors
    /// Numerical failure (no nucleation or growth anywhere in the window); a
    /// rate that is not a finite positive number.
    pub fn critical_rate(&self) -> Result<KelvinPerSecond, KineticsError> {
        let total = total_extent(&self.phase_integrals(Cooling::Constant)?);
        let r = total.critical_scale(self.opts.detectable_fraction);
        Ok(KelvinPerSecond(representable(
            "critical cooling rate",
            r,
            "K/s",
        )?))
    }

    /// Transformed fraction X = 1 − exp(−X_ext) after cooling from T_L to T_e at a constant rate.
    ///
    /// # Errors
    /// As [`Kinetics::critical_rate`]; a rate that is not positive.
    pub fn fraction_at_rate(&self, rate: KelvinPerSecond) -> Result<f64, KineticsError> {
        Ok(-(-self.extended_fraction_at_rate(rate)?).exp_m1())
    }

    /// Extended (Avrami) fraction X_ext after constant-rate cooling from T_L to T_e,
    /// summed over phases: X_ext = Σ_k (4π/3)[J_k/R⁴ + N_h,k (∫U_k dT/R)³].
    ///
    /// # Errors
    /// As [`Kinetics::fraction_at_rate`].
    pub fn extended_fraction_at_rate(&self, rate: KelvinPerSecond) -> Result<f64, KineticsError> {
        positive("cooling rate", rate.0, "K/s")?;
        let total = total_extent(&self.phase_integrals(Cooling::Constant)?);
        Ok(total.ln_at(rate.0.ln()).exp())
    }

    /// Largest slab that stays glassy when its centre cools as the first Fourier
    /// mode, dT/dt = −(π²κ/4h²)(T − T_s), from the liquidus.
    ///
    /// Returns the half-thickness h in metres (a slab cooled through both faces
    /// is 2h thick; one cooled through one face with the other insulated is h).
    ///
    /// # Errors
    /// κ not positive; T_s not below the freeze temperature; numerical
    /// failure; a thickness that is not a finite positive number.
    pub fn max_glassy_half_thickness_m(
        &self,
        surface: Kelvin,
        thermal_diffusivity_m2_per_s: f64,
    ) -> Result<f64, KineticsError> {
        self.glassy_half_thickness_from(surface, thermal_diffusivity_m2_per_s, None)
    }

    /// [`Kinetics::analyse`] and [`Kinetics::max_glassy_half_thickness_m`] at
    /// once: the slab's quadrature starts from the panels the constant-rate one
    /// ended with, so the rates are evaluated about once instead of twice.
    /// The slab's own failure is returned beside a good summary.
    ///
    /// # Errors
    /// As [`Kinetics::analyse`].
    pub fn analyse_with_slab(
        &self,
        surface: Kelvin,
        thermal_diffusivity_m2_per_s: f64,
    ) -> Result<(KineticSummary, Result<f64, KineticsError>), KineticsError> {
        let mut layouts = Vec::with_capacity(self.phases.len());
        let integrals = self.phase_integrals_seeded(Cooling::Constant, None, Some(&mut layouts))?;
        let summary = self.summary_of(&integrals)?;
        let h =
            self.glassy_half_thickness_from(surface, thermal_diffusivity_m2_per_s, Some(&layouts));
        Ok((summary, h))
    }

    fn glassy_half_thickness_from(
        &self,
        surface: Kelvin,
        thermal_diffusivity_m2_per_s: f64,
        seeds: Option<&[Layout]>,
    ) -> Result<f64, KineticsError> {
        positive("thermal diffusivity", thermal_diffusivity_m2_per_s, "m2/s")?;
        finite("quench surface temperature", surface.0)?;
        if surface.0 >= self.freeze {
            return Err(KineticsError::SurfaceTooHot {
                surface: surface.0,
                freeze: self.freeze,
            });
        }
        let total = total_extent(&self.phase_integrals_seeded(
            Cooling::Newtonian { surface: surface.0 },
            seeds,
            None,
        )?);
        let k = total.critical_scale(self.opts.detectable_fraction);
        let h = 0.5 * PI * (thermal_diffusivity_m2_per_s / k).sqrt();
        representable("thickest glassy slab", 2e3 * h, "mm")?;
        Ok(h)
    }

    /// Crystallised fraction along a cooling path given as (time s, temperature K) points,
    /// linear between points: X_ext = Σ_k (4π/3)[∫ I_k(τ) (∫_τ^{t_end} U_k ds)³ dτ + N_h,k (∫ U_k ds)³].
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
        struct TimePanel {
            half: f64,
            temps: [f64; NODES],
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
                    temps: std::array::from_fn(|i| k0 + (k1 - k0) * (times[i] - t0) / (t1 - t0)),
                });
            }
        }
        let c = ln_4pi_3();
        let mut ln_ext = f64::NEG_INFINITY;
        for (_, phase) in &self.phases {
            // Backward running growth length ∫_τ^{t_end} U ds at every node. The
            // integration matrix integrates from the panel start, so
            // G(τ_i) = G(panel end) + panel integral − ∫_{start}^{τ_i} U ds.
            let mut g_after = 0.0;
            for p in panels.iter().rev() {
                let r: [Rates; NODES] = std::array::from_fn(|i| self.rates_of(phase, p.temps[i]));
                let u: [f64; NODES] = std::array::from_fn(|i| r[i].ln_growth.exp());
                let total: f64 = p.half * (0..NODES).map(|j| rule.w[j] * u[j]).sum::<f64>();
                for (i, ri) in r.iter().enumerate() {
                    let partial: f64 =
                        p.half * (0..NODES).map(|j| rule.s[i][j] * u[j]).sum::<f64>();
                    let g = (g_after + total - partial).max(0.0);
                    if ri.ln_nucleation > f64::NEG_INFINITY && g > 0.0 {
                        let term = c + (p.half * rule.w[i]).ln() + ri.ln_nucleation + 3.0 * g.ln();
                        ln_ext = log_add(ln_ext, term);
                    }
                }
                g_after += total;
            }
            if phase.nuclei > 0.0 && g_after > 0.0 {
                ln_ext = log_add(ln_ext, phase.ln_nuclei_sphere + 3.0 * g_after.ln());
            }
        }
        let ext = ln_ext.exp();
        Ok(PathResult {
            extended_fraction: ext,
            transformed_fraction: -(-ext).exp_m1(),
            vitrifies: ext < self.opts.detectable_fraction,
        })
    }
}

/// The sum of the phases' extents.
pub(super) fn total_extent(phases: &[PhaseIntegrals]) -> Extent {
    phases.iter().fold(Extent::NONE, |acc, p| acc.add(p.extent))
}

/// Outcome of a cooling path.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct PathResult {
    /// Extended (Avrami) fraction X_ext, summed over phases.
    pub extended_fraction: f64,
    /// X = 1 − exp(−X_ext), always in [0, 1].
    pub transformed_fraction: f64,
    /// X_ext stays below the detectable fraction.
    pub vitrifies: bool,
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
        &|t| SplitRates::from_logs(rates(Kelvin(t))),
        (window.0 .0, window.1 .0),
        Cooling::Constant,
        &QuadratureSettings::default(),
        (f64::NEG_INFINITY, DEFAULT_DETECTABLE_FRACTION.ln()),
    )?;
    Ok(Extent::of(&ci, ln_nuclei_sphere(nuclei_per_m3))
        .ln_at(rate.0.ln())
        .exp())
}
